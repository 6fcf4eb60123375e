"""The uncertain factors of a sensitivity analysis, derived from the model's uncertain inputs.

Every factor enters the design as a probability u in (0, 1) and is mapped to its value through
its quantile function (for the realization: the inverse CDF of the weights, along the
realizations sorted by severity). For Morris screening, whose grid includes u = 0 and u = 1,
unbounded factors are swept over [MORRIS_TAIL, 1 - MORRIS_TAIL]."""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import numpy as np
from ..errors import InputError
from ..response.uncertain import SOURCES as RESPONSE_SOURCES
from ..response.uncertain import UncertainParameter
from .salib import Factor

if TYPE_CHECKING:
    from ..config.settings import SensitivitySettings


#: Morris sweeps an unbounded factor over the probabilities [MORRIS_TAIL, 1 - MORRIS_TAIL].
MORRIS_TAIL = 1e-3


#: Sources of uncertainty, in the order of the gap table.
SOURCES = ("hazard",) + RESPONSE_SOURCES


@dataclass(frozen=True, eq=False)
class RiskFactor:
    """One uncertain input of the risk model, entered as a probability u in (0, 1).

    Attributes
    ----------
    name : str
        ``hazard_realization``, or the name of an uncertain parameter of the chain's registry
        (``rating_offset``, ``fragility_shift:<failure mode>``, ...).
    source : {"hazard", "rating", "fragility", "consequences"}
    description : str
        The distribution in words, with units.
    units : str
    parameter : UncertainParameter or None
        The registry entry (None for the hazard realization, which is mapped through the weights).
    group : str or None
        A user group (``[sensitivity].groups``).
    """

    name: str
    source: str
    description: str
    units: str = ""
    parameter: UncertainParameter | None = None
    group: str | None = None

    @property
    def is_realization(self) -> bool:
        return self.parameter is None

    @property
    def bounded(self) -> bool:
        """True when u = 0 and u = 1 map to finite values."""
        return True if self.parameter is None else self.parameter.bounded

    def values(self, u) -> np.ndarray:
        """The factor's value at probabilities ``u`` (the parameter's quantile function), any shape.

        Not for the realization factor, which the evaluator maps through the weights.
        """
        if self.parameter is None:
            raise ValueError(f"factor '{self.name}' is mapped by the realization weights, not by values()")
        return self.parameter.quantile(u)

    def salib_factor(self, morris: bool = False) -> Factor:
        """The factor on the unit cube for :mod:`riskcalc.sensitivity.salib` (probability units)."""
        lo, hi = (MORRIS_TAIL, 1 - MORRIS_TAIL) if (morris and not self.bounded) else (0.0, 1.0)
        return Factor(self.name, "uniform", lo, hi, group=self.group, units="probability")


#: The factor of the hazard realization, first in every analysis.
REALIZATION = RiskFactor(
    "hazard_realization", "hazard", "the hazard realization, drawn with its weight (sorted by severity)"
)


def scenario_factors(chain) -> tuple[RiskFactor, ...]:
    """The uncertain factors of a :class:`~riskcalc.response.chain.ResponseChain`, hazard realization first.

    One factor per entry of the chain's registry of uncertain inputs
    (:class:`~riskcalc.response.uncertain.UncertainInputs`), in its order; inputs without spread are
    not in the registry, so they cannot appear here.
    """
    return (REALIZATION,) + tuple(
        RiskFactor(p.name, p.source, p.description, p.units, parameter=p) for p in chain.uncertain.parameters
    )


def select_factors(factors, settings: SensitivitySettings, file=None, keys=None) -> tuple[RiskFactor, ...]:
    """Apply ``include``, ``exclude`` and ``groups`` to the derived factors.

    Raises
    ------
    InputError
        A name that is not one of the scenario's active factors, the hazard realization excluded
        (it is always a factor), or a group name equal to a factor name.
    """
    keys = (
        {k: keys.get(k, f"sensitivity.{k}") for k in ("include", "exclude", "groups")}
        if keys
        else {k: f"sensitivity.{k}" for k in ("include", "exclude", "groups")}
    )
    names = [f.name for f in factors]
    avail = ", ".join(names)

    def unknown(name, key):
        raise InputError(f"'{name}' is not an active factor of this scenario; expected one of {avail}", file, key=key)

    for k in ("include", "exclude"):
        for m in getattr(settings, k):
            if m not in names:
                unknown(m, keys[k])
    if "hazard_realization" in settings.exclude:
        raise InputError(
            "the hazard realization is always a factor; remove it from the list", file, key=keys["exclude"]
        )
    keep = set(settings.include) | {"hazard_realization"} if settings.include else set(names)
    keep -= set(settings.exclude)
    group_of = {}
    for g, members in settings.groups:
        if g in names and tuple(members) != (g,):
            raise InputError(
                f"group name '{g}' is also a factor name; rename the group", file, key=f"{keys['groups']}.{g}"
            )
        for m in members:
            if m not in names:
                unknown(m, f"{keys['groups']}.{g}")
            group_of[m] = g
    return tuple(replace(f, group=group_of.get(f.name)) for f in factors if f.name in keep)
