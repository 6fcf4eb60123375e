"""The ``[economics]`` table and the ``[[alternatives]]`` entries of a scenario: validated settings."""

from __future__ import annotations

import copy
import math
from dataclasses import dataclass, field
from pathlib import Path
from ..errors import InputError


#: Name of the without-project plan (the base scenario).
BASE_NAME = "without project"


#: Sections an alternative may override.
OVERRIDES = ("rating", "failure_modes", "consequences", "uncertainty")


#: Sections an alternative shares with the base and may not change.
SHARED = ("hazard", "grid", "seed", "units", "checks", "base", "title", "guidelines", "sensitivity", "outputs",
          "alternatives", "economics")


_ALT_KEYS = ("name", "description", "first_cost", "annual_om", "construction_months", "future") + OVERRIDES


_FUTURE_KEYS = ("year", "hazard", "rating", "failure_modes", "consequences", "damage_factor", "life_loss_factor")


_ALT_FUTURE_KEYS = ("rating", "failure_modes", "consequences")


_ECON_KEYS = ("rate", "period_years", "base_year", "future")


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


def _number(v, file, key, *, lo=None, lo_open=False, hi=None, integer=False):
    ok_type = isinstance(v, int) if integer else isinstance(v, (int, float))
    if isinstance(v, bool) or not ok_type:
        raise InputError(f"expected {'an integer' if integer else 'a number'}, got {v!r}"[:160], file, key=key)
    v = int(v) if integer else float(v)
    if not math.isfinite(v):
        raise InputError(f"{v} is not finite", file, key=key)
    if lo is not None and (v <= lo if lo_open else v < lo):
        raise InputError(f"{v:g} is {'not above' if lo_open else 'below'} {lo:g}", file, key=key)
    if hi is not None and v >= hi:
        raise InputError(f"{v:g} is not below {hi:g}", file, key=key)
    return v


def _table(v, file, key):
    if not isinstance(v, dict):
        raise InputError(f"expected a table, got {v!r}"[:160], file, key=key)
    return v


def _resolve_paths(d: dict, here: Path) -> dict:
    """A copy of an override with its table paths absolute (already absolute paths are kept)."""
    from ..config.scenario import _absolutize

    out = copy.deepcopy(d)
    _absolutize(out, here)
    return out


def parse_economics(scenario) -> EconomicSettings:
    """Validate ``scenario.economics``.

    Relative table paths of ``[economics.future]`` are read relative to the
    scenario file itself.

    Raises
    ------
    InputError
        Naming the key, e.g. ``economics.rate``.
    """
    file = scenario.path
    e = _table(scenario.economics or {}, file, "economics")
    for k in e:
        if k not in _ECON_KEYS:
            raise InputError(f"unknown key; expected one of {', '.join(_ECON_KEYS)}", file, key=f"economics.{k}")
    if "rate" not in e:
        raise InputError("missing required key (the discount rate as a fraction, e.g. 0.03)", file,
                         key="economics.rate")
    rate = _number(e["rate"], file, "economics.rate", lo=0.0, hi=1.0)
    period = _number(e.get("period_years", 50), file, "economics.period_years", lo=1, integer=True)
    base_year = e.get("base_year")
    fut = e.get("future")
    if base_year is not None:
        base_year = _number(base_year, file, "economics.base_year", lo=0, integer=True)
    if fut is None:
        return EconomicSettings(rate=rate, period_years=period, base_year=base_year)
    fut = _table(fut, file, "economics.future")
    if base_year is None:
        raise InputError("missing required key (a future condition needs the base year)", file,
                         key="economics.base_year")
    for k in fut:
        if k not in _FUTURE_KEYS:
            raise InputError(f"unknown key; expected one of {', '.join(_FUTURE_KEYS)}", file,
                             key=f"economics.future.{k}")
    if "year" not in fut:
        raise InputError("missing required key (the calendar year of the future condition)", file,
                         key="economics.future.year")
    year = _number(fut["year"], file, "economics.future.year", integer=True)
    if year <= base_year:
        raise InputError(f"{year} is not after economics.base_year = {base_year}", file,
                         key="economics.future.year")
    factors = {}
    for k in ("damage_factor", "life_loss_factor"):
        factors[k] = _number(fut.get(k, 1.0), file, f"economics.future.{k}", lo=0.0, lo_open=True)
    for k in ("hazard", "rating", "consequences"):
        if k in fut:
            _table(fut[k], file, f"economics.future.{k}")
    if "failure_modes" in fut and not isinstance(fut["failure_modes"], list):
        raise InputError("expected a list of tables ([[economics.future.failure_modes]])", file,
                         key="economics.future.failure_modes")
    override = {k: v for k, v in fut.items() if k in ("hazard", "rating", "failure_modes", "consequences")}
    return EconomicSettings(rate=rate, period_years=period, base_year=base_year, future_year=year,
                            future=_resolve_paths(override, file.parent), **factors)


def parse_alternatives(scenario) -> tuple:
    """Validate ``scenario.alternatives`` into :class:`Alternative` entries (keys only; models are built later).

    Raises
    ------
    InputError
        Naming the key, e.g. ``alternatives[2].first_cost``.
    """
    file = scenario.path
    alts = scenario.alternatives
    if not isinstance(alts, list) or not alts:
        raise InputError("expected at least one [[alternatives]] entry to compare", file, key="alternatives")
    out, seen = [], set()
    for i, a in enumerate(alts, start=1):
        key = f"alternatives[{i}]"
        _table(a, file, key)
        for k in a:
            if k in SHARED:
                raise InputError(f"an alternative shares the base's {k}; it may override only "
                                 f"{', '.join(OVERRIDES)} (a changed hazard belongs in [economics.future])",
                                 file, key=f"{key}.{k}")
            if k not in _ALT_KEYS:
                raise InputError(f"unknown key; expected one of {', '.join(_ALT_KEYS)}", file, key=f"{key}.{k}")
        name = a.get("name")
        if not isinstance(name, str) or not name.strip():
            raise InputError("missing or empty; expected the alternative's name", file, key=f"{key}.name")
        name = name.strip()
        if name in seen or name == BASE_NAME:
            raise InputError(f"the name '{name}' is used twice (or is the base's); names must be unique", file,
                             key=f"{key}.name")
        seen.add(name)
        desc = a.get("description", "")
        if not isinstance(desc, str):
            raise InputError(f"expected text, got {desc!r}"[:160], file, key=f"{key}.description")
        if "first_cost" not in a:
            raise InputError("missing required key (construction cost in the scenario's currency)", file,
                             key=f"{key}.first_cost")
        first = _number(a["first_cost"], file, f"{key}.first_cost", lo=0.0)
        om = _number(a.get("annual_om", 0.0), file, f"{key}.annual_om", lo=0.0)
        months = _number(a.get("construction_months", 0), file, f"{key}.construction_months", lo=0, integer=True)
        if not any(k in a for k in OVERRIDES):
            pass  # an alternative identical to the base is allowed (zero benefit); useful as a check
        uo = a.get("uncertainty")
        if uo is not None:
            _table(uo, file, f"{key}.uncertainty")
            base_unc = scenario.uncertainty
            for k in ("draws_per_realization", "workers"):
                if k in uo and uo[k] != base_unc.get(k):
                    raise InputError(f"alternatives share the base's Monte Carlo draws; set uncertainty.{k} in the "
                                     "base scenario", file, key=f"{key}.uncertainty.{k}")
        fut = a.get("future", {})
        _table(fut, file, f"{key}.future")
        for k in fut:
            if k not in _ALT_FUTURE_KEYS:
                raise InputError(f"unknown key; expected one of {', '.join(_ALT_FUTURE_KEYS)}", file,
                                 key=f"{key}.future.{k}")
        override = {k: a[k] for k in OVERRIDES if k in a}
        out.append(Alternative(name=name, description=desc, first_cost=first, annual_om=om,
                               construction_months=months, override=_resolve_paths(override, file.parent),
                               future_override=_resolve_paths(fut, file.parent), index=i))
    return tuple(out)
