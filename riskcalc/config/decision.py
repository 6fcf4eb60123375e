"""The ``[economics]`` table and the ``[[alternatives]]`` entries of a scenario: validated settings and plan models.

The keys are declared in ``SCHEMA["economics"]``, ``SCHEMA["economics_future"]``,
``SCHEMA["alternative"]`` and ``SCHEMA["alternative_future"]`` of
:mod:`riskcalc.config.schema`; the rules between fields (unique names, a
future year after the base year, sections an alternative may not change,
shared Monte Carlo draws) are the explicit checks here.
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import InputError
from .build import build_model
from .schema import SCHEMA, validate


#: Name of the without-project plan (the base scenario).
BASE_NAME = "without project"


#: Sections an alternative may override: the tables of the alternative's schema that are also scenario sections.
OVERRIDES = tuple(k for k, f in SCHEMA["alternative"].items() if k in SCHEMA[""] and f.type in (dict, list))


#: Sections an alternative shares with the base and may not change: every other scenario key.
SHARED = tuple(k for k in SCHEMA[""] if k not in SCHEMA["alternative"])


#: Sections ``[economics.future]`` may override.
FUTURE_OVERRIDES = tuple(k for k, f in SCHEMA["economics_future"].items() if f.type in (dict, list))


@dataclass(frozen=True)
class EconomicSettings:
    """The ``[economics]`` table.

    Attributes
    ----------
    rate : float
        Effective annual discount rate [fraction, 1/yr].
    period_years : int
        Period of analysis [yr].
    base_year : int or None
        Calendar year of the first year of the period.
    future_year : int or None
        Calendar year of the future condition; None when there is none.
    future : dict
        The future-year override of the base (hazard, rating, failure_modes,
        consequences), table paths absolute.
    damage_factor, life_loss_factor : float
        Growth of damage and of life loss in the future year [-].
    """

    rate: float
    period_years: int
    base_year: int | None = None
    future_year: int | None = None
    future: dict = field(default_factory=dict)
    damage_factor: float = 1.0
    life_loss_factor: float = 1.0

    @property
    def years(self) -> tuple:
        """The condition years: (base_year,) or (base_year, future_year)."""
        return (self.base_year,) if self.future_year is None else (self.base_year, self.future_year)


@dataclass(frozen=True)
class Alternative:
    """One ``[[alternatives]]`` entry: costs and the override of the base.

    Attributes
    ----------
    name, description : str
    first_cost : float
        Construction cost [currency].
    annual_om : float
        Annual operation and maintenance [currency/yr].
    construction_months : int
    override : dict
        Sections merged over the base (table paths absolute).
    future_override : dict
        Sections merged over the alternative's future-year condition.
    index : int
        1-based position in the scenario, for messages.
    """

    name: str
    description: str
    first_cost: float
    annual_om: float
    construction_months: int
    override: dict
    future_override: dict
    index: int


def _resolve_paths(d: dict, here: Path) -> dict:
    """A copy of an override with its table paths absolute (already absolute paths are kept)."""
    from ..config.scenario import _absolutize

    out = copy.deepcopy(d)
    _absolutize(out, here)
    return out


def read_economics(raw, file) -> EconomicSettings:
    """Validate an ``[economics]`` table (keys: ``SCHEMA["economics"]`` and ``SCHEMA["economics_future"]``).

    Relative table paths of ``[economics.future]`` are read relative to the
    scenario file itself.

    Raises
    ------
    InputError
        Naming the key, e.g. ``economics.rate``.
    """
    file = Path(file)
    e = validate("economics", {} if raw is None else raw, file, "economics.")
    rate, period, base_year = e["rate"], e["period_years"], e["base_year"]
    if "future" not in e:
        return EconomicSettings(rate=rate, period_years=period, base_year=base_year)
    fut = e["future"]
    if base_year is None:
        raise InputError(
            "missing required key; expected the calendar year of year 1 (a future condition needs it)",
            file,
            key="economics.base_year",
        )
    if fut["year"] <= base_year:
        raise InputError(
            f"{fut['year']} is not after economics.base_year = {base_year}", file, key="economics.future.year"
        )
    override = {k: fut[k] for k in FUTURE_OVERRIDES if k in fut}
    return EconomicSettings(
        rate=rate,
        period_years=period,
        base_year=base_year,
        future_year=fut["year"],
        future=_resolve_paths(override, file.parent),
        damage_factor=fut["damage_factor"],
        life_loss_factor=fut["life_loss_factor"],
    )


def read_alternatives(raw, file, base_uncertainty: dict) -> tuple:
    """Validate ``[[alternatives]]`` entries into :class:`Alternative` specs (keys: ``SCHEMA["alternative"]``).

    Models are not built here (see :func:`check_plans`).

    Parameters
    ----------
    raw : list of dict
    file : path
    base_uncertainty : dict
        The base scenario's ``[uncertainty]`` section (alternatives share its draws).

    Raises
    ------
    InputError
        Naming the key, e.g. ``alternatives[2].first_cost``.
    """
    file = Path(file)
    if not isinstance(raw, list) or not raw:
        raise InputError("expected at least one [[alternatives]] entry to compare", file, key="alternatives")
    out, seen = [], set()
    for i, a in enumerate(raw, start=1):
        key = f"alternatives[{i}]"
        for k in a if isinstance(a, dict) else ():
            if k in SHARED:
                raise InputError(
                    f"an alternative shares the base's {k}; it may override only "
                    f"{', '.join(OVERRIDES)} (a changed hazard belongs in [economics.future])",
                    file,
                    key=f"{key}.{k}",
                )
        v = validate("alternative", a, file, key + ".")
        name = v["name"].strip()
        if name in seen or name == BASE_NAME:
            raise InputError(
                f"the name '{name}' is used twice (or is the base's); names must be unique", file, key=f"{key}.name"
            )
        seen.add(name)
        if v["first_cost"] == 0 and v["annual_om"] == 0:
            raise InputError(
                "the alternative costs nothing; expected first_cost or annual_om above 0", file, key=f"{key}.first_cost"
            )
        for k in ("draws_per_realization", "workers"):
            uo = v.get("uncertainty", {})
            if k in uo and uo[k] != base_uncertainty.get(k):
                raise InputError(
                    f"alternatives share the base's Monte Carlo draws; set uncertainty.{k} in the base scenario",
                    file,
                    key=f"{key}.uncertainty.{k}",
                )
        override = {k: v[k] for k in OVERRIDES if k in v}
        out.append(
            Alternative(
                name=name,
                description=v["description"],
                first_cost=v["first_cost"],
                annual_om=v["annual_om"],
                construction_months=v["construction_months"],
                override=_resolve_paths(override, file.parent),
                future_override=_resolve_paths(v["future"], file.parent),
                index=i,
            )
        )
    return tuple(out)


def _key(prefix, key):
    return f"{prefix}.{key}" if prefix and key else (prefix or key)


def plan_dict(raw: dict, overrides=()) -> dict:
    """The scenario dict of a plan: the base's (without alternatives and economics) with ``overrides`` merged in order."""
    from .scenario import _merge

    d = {k: v for k, v in raw.items() if k not in ("alternatives", "economics")}
    for o in overrides:
        d = _merge(d, o)
    return d


def build_plan_model(raw: dict, file, units: dict, variable: str, draws: int, overrides=(), prefix: str = ""):
    """The response and consequence model of a plan, validated by the code path of the base scenario.

    Parameters
    ----------
    raw : dict
        The base scenario dict (``Scenario.raw``).
    file : path
    units : dict
    variable : str
        The hazard variable, discharge or stage.
    draws : int
        The base's ``uncertainty.draws_per_realization`` (plans share the draws).
    overrides : sequence of dict
        Merged one after another over the base (tables key by key, lists replaced).
    prefix : str
        Key prefix of messages, e.g. ``"alternatives[2]"``.

    Returns
    -------
    RiskModel

    Raises
    ------
    InputError
        With its key re-keyed under ``prefix``, e.g. ``alternatives[1].failure_modes[1].nodes[1].kind``.
    """
    d = plan_dict(raw, overrides)
    try:
        model = build_model(d, file, units, variable)
        unc = validate("uncertainty", d.get("uncertainty", {}), file, "uncertainty.")
    except InputError as exc:
        if not prefix:
            raise
        raise InputError(exc.detail, exc.file, key=_key(prefix, exc.key), row=exc.row, column=exc.column) from None
    if unc["draws_per_realization"] != draws:
        raise InputError(
            "alternatives share the base's Monte Carlo draws; set it in the base scenario",
            file,
            key=_key(prefix, "uncertainty.draws_per_realization"),
        )
    return model


def read_future_hazard(raw_hazard: dict, override, file, units: dict, base_ensemble, base_mode: dict):
    """The future-year hazard ensemble and mode parameters of ``[economics.future]``.

    The override is merged over the base's ``[hazard]`` and validated as a
    hazard section (keys ``economics.future.hazard.<key>``); the ensemble must
    give the same variable, the same number of realizations and the same
    weights as the base, since row r of the future ensemble is the future of
    realization r. Without a hazard override the base's are returned.

    Returns
    -------
    ensemble : HazardEnsemble
    mode_params : dict
    """
    from .scenario import _merge, read_hazard, read_hazard_ensemble

    if not override:
        return base_ensemble, base_mode
    prefix = "economics.future.hazard."
    merged = _merge(raw_hazard, override)
    if "mode" not in override:  # the base's mode parameters belong to the base's family
        merged.pop("mode", None)
    hz, family, mode = read_hazard(merged, file, prefix)
    if hz["variable"] != base_ensemble.quantity:
        raise InputError("the future hazard must give the same variable as the base", file, key=prefix + "variable")
    ens = read_hazard_ensemble(hz, family, file, units, prefix)
    if ens.size != base_ensemble.size:
        raise InputError(
            f"the future ensemble has {ens.size} realizations but the base has {base_ensemble.size}; "
            "row r of the future ensemble must be the future of realization r",
            file,
            key=prefix + "ensemble",
        )
    if not np.allclose(ens.weights, base_ensemble.weights, rtol=1e-9, atol=0):
        raise InputError(
            "the future ensemble's weights differ from the base's; realizations must pair",
            file,
            key=prefix + "ensemble",
        )
    if "mode" not in override:
        mode = dict(base_mode) if family == base_ensemble.family else {}
    return ens, mode


def check_plans(raw: dict, file, units: dict, ensemble, mode_params: dict, draws: int, economics, alternatives):
    """Build every plan a comparison would build, once, so that a bad one is refused before any computation.

    The alternatives in the base year; with a future condition, its ensemble,
    the base's future model and every alternative's future model.
    """
    variable = ensemble.quantity
    for a in alternatives:
        build_plan_model(raw, file, units, variable, draws, [a.override], f"alternatives[{a.index}]")
    if economics is None or economics.future_year is None:
        return
    read_future_hazard(raw["hazard"], economics.future.get("hazard"), file, units, ensemble, mode_params)
    build_plan_model(raw, file, units, variable, draws, [economics.future], "economics.future")
    for a in alternatives:
        build_plan_model(
            raw,
            file,
            units,
            variable,
            draws,
            [a.override, economics.future, a.future_override],
            f"alternatives[{a.index}].future",
        )


def parse_economics(scenario) -> EconomicSettings:
    """The scenario's :class:`EconomicSettings` (validated when it was loaded).

    Raises
    ------
    InputError
        When the scenario has no ``[economics]`` table (``economics.rate`` is then missing).
    """
    e = scenario.economics
    if isinstance(e, EconomicSettings):
        return e
    return read_economics(e or {}, scenario.path)


def parse_alternatives(scenario) -> tuple:
    """The scenario's :class:`Alternative` specs (validated when it was loaded).

    Raises
    ------
    InputError
        When the scenario has no ``[[alternatives]]`` entry.
    """
    alts = scenario.alternatives
    if alts and all(isinstance(a, Alternative) for a in alts):
        return tuple(alts)
    return read_alternatives(list(alts or []), scenario.path, scenario.uncertainty)
