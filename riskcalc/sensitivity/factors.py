"""The uncertain factors of a sensitivity analysis, derived from the model's uncertain inputs.

Every factor enters the design as a probability u in (0, 1) and is mapped to its value through
its quantile function (for the realization: the inverse CDF of the weights, along the
realizations sorted by severity). For Morris screening, whose grid includes u = 0 and u = 1,
unbounded factors are swept over [MORRIS_TAIL, 1 - MORRIS_TAIL]."""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import numpy as np
from scipy import special as sc
from ..errors import InputError
from .salib import Factor

if TYPE_CHECKING:
    from ..config.settings import SensitivitySettings



#: Morris sweeps an unbounded factor over the probabilities [MORRIS_TAIL, 1 - MORRIS_TAIL].
MORRIS_TAIL = 1e-3


#: Sources of uncertainty, in the order of the gap table.
SOURCES = ("hazard", "rating", "fragility", "consequences")


_U_EPS = 1e-15  # u is clipped to [eps, 1 - eps] before a normal quantile (never infinite)


@dataclass(frozen=True, eq=False)
class RiskFactor:
    """One uncertain input of the risk model, entered as a probability u in (0, 1).

    Attributes
    ----------
    name : str
        ``hazard_realization``, ``rating_offset``, ``fragility_shift:<mode>``,
        ``fragility_spread:<mode>``, ``damage_multiplier``, ``life_loss_multiplier``.
    source : {"hazard", "rating", "fragility", "consequences"}
    kind : {"realization", "offset", "shift", "spread", "damage", "life_loss"}
    description : str
        The distribution in words, with units.
    units : str
    sd : float
        Standard deviation of the normal kinds (offset, shift) [stage units].
    low, high : float
        Range of the uniform spread factor [-].
    multiplier : Multiplier or None
        The consequence multiplier (damage, life_loss kinds).
    mode_index : int or None
        The failure mode of a shift or spread factor.
    group : str or None
        A user group (``[sensitivity].groups``).
    """

    name: str
    source: str
    kind: str
    description: str
    units: str = ""
    sd: float = 0.0
    low: float = 1.0
    high: float = 1.0
    multiplier: object = None
    mode_index: int | None = None
    group: str | None = None

    @property
    def bounded(self) -> bool:
        """True when u = 0 and u = 1 map to finite values."""
        if self.kind in ("offset", "shift"):
            return False
        if self.kind in ("damage", "life_loss"):
            return self.multiplier.distribution != "lognormal"
        return True

    def values(self, u) -> np.ndarray:
        """The factor's value at probabilities ``u`` (quantile function), any shape.

        Not for the realization factor, which :class:`RiskDriver` maps through the weights.
        """
        u = np.asarray(u, float)
        if self.kind in ("offset", "shift"):
            return self.sd * sc.ndtri(np.clip(u, _U_EPS, 1 - _U_EPS))
        if self.kind == "spread":
            return self.low + u * (self.high - self.low)
        if self.kind in ("damage", "life_loss"):
            if self.multiplier.distribution == "lognormal":
                u = np.clip(u, _U_EPS, 1 - _U_EPS)
            return np.asarray(self.multiplier.from_unit(u), float)
        raise ValueError(f"factor '{self.name}' is mapped by the realization weights, not by values()")

    def salib_factor(self, morris: bool = False) -> Factor:
        """The factor on the unit cube for :mod:`riskcalc.sensitivity` (probability units)."""
        lo, hi = (MORRIS_TAIL, 1 - MORRIS_TAIL) if (morris and not self.bounded) else (0.0, 1.0)
        return Factor(self.name, "uniform", lo, hi, group=self.group, units="probability")


def scenario_factors(model) -> tuple[RiskFactor, ...]:
    """The active uncertain factors of a :class:`~riskcalc.model.RiskModel`, hazard realization first.

    Factors with no spread (a zero standard deviation, an empty range, a lognormal multiplier with
    β = 0, a fixed multiplier) are left out: they cannot move any output.
    """
    out = [RiskFactor("hazard_realization", "hazard", "realization",
                      "the hazard realization, drawn with its weight (sorted by severity)")]
    if model.rating_offset_sd > 0:
        out.append(RiskFactor("rating_offset", "rating", "offset",
                              f"stage offset of the rating, normal(0, {model.rating_offset_sd:g}) [stage units]",
                              "stage units", sd=float(model.rating_offset_sd)))
    for i, m in enumerate(model.modes):
        if m.shift_sd > 0:
            out.append(RiskFactor(f"fragility_shift:{m.name}", "fragility", "shift",
                                  f"shift of '{m.name}' along stage, normal(0, {m.shift_sd:g}) [stage units]",
                                  "stage units", sd=float(m.shift_sd), mode_index=i))
        if m.spread_range is not None and m.spread_range[1] > m.spread_range[0] and any(
                n.kind != "table" for n in m.nodes):
            lo, hi = (float(v) for v in m.spread_range)
            out.append(RiskFactor(f"fragility_spread:{m.name}", "fragility", "spread",
                                  f"spread factor of '{m.name}', uniform({lo:g}, {hi:g}) [-]", "-", low=lo, high=hi,
                                  mode_index=i))
    c = model.consequences
    for kind, name, mul in (("damage", "damage_multiplier", c.damage_multiplier),
                            ("life_loss", "life_loss_multiplier", c.life_loss_multiplier)):
        if not mul.active or (mul.distribution == "lognormal" and mul.beta == 0):
            continue
        desc = (f"triangular({mul.low:g}, {mul.mode:g}, {mul.high:g})" if mul.distribution == "triangular"
                else f"lognormal(median {mul.median:g}, beta {mul.beta:g})")
        out.append(RiskFactor(name, "consequences", kind, f"{name.replace('_', ' ')}, {desc} [-]", "-",
                              multiplier=mul))
    return tuple(out)


def select_factors(factors, settings: SensitivitySettings, file=None, keys=None) -> tuple[RiskFactor, ...]:
    """Apply ``include``, ``exclude`` and ``groups`` to the derived factors.

    Raises
    ------
    InputError
        A name that is not one of the scenario's active factors, the hazard realization excluded
        (it is always a factor), or a group name equal to a factor name.
    """
    keys = {k: keys.get(k, f"sensitivity.{k}") for k in ("include", "exclude", "groups")} if keys else {
        k: f"sensitivity.{k}" for k in ("include", "exclude", "groups")}
    names = [f.name for f in factors]
    avail = ", ".join(names)

    def unknown(name, key):
        raise InputError(f"'{name}' is not an active factor of this scenario; expected one of {avail}", file,
                         key=key)

    for k in ("include", "exclude"):
        for m in getattr(settings, k):
            if m not in names:
                unknown(m, keys[k])
    if "hazard_realization" in settings.exclude:
        raise InputError("the hazard realization is always a factor; remove it from the list", file,
                         key=keys["exclude"])
    keep = set(settings.include) | {"hazard_realization"} if settings.include else set(names)
    keep -= set(settings.exclude)
    group_of = {}
    for g, members in settings.groups:
        if g in names and tuple(members) != (g,):
            raise InputError(f"group name '{g}' is also a factor name; rename the group", file,
                             key=f"{keys['groups']}.{g}")
        for m in members:
            if m not in names:
                unknown(m, f"{keys['groups']}.{g}")
            group_of[m] = g
    return tuple(replace(f, group=group_of.get(f.name)) for f in factors if f.name in keep)
