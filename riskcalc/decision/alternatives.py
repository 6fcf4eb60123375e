"""Alternatives: with- and without-project risk on the shared hazard, paired per draw, and their economics.

A scenario lists alternatives as ``[[alternatives]]`` tables. Each names its
costs and overrides parts of the base scenario (``rating``,
``failure_modes``, ``consequences``, ``uncertainty``), deep-merged over the
base exactly like ``base = ...`` (tables key by key, lists replaced whole).
The hazard is shared: an alternative may not change ``hazard``, ``grid``,
``seed`` or ``units``. An ``[economics]`` table gives the discount rate, the
period of analysis, the base year and optionally a future-year condition
(another hazard ensemble, other tables, or growth factors on damage and life
loss) whose risks are interpolated linearly between the two years and
annualized with the capital recovery factor (:mod:`riskcalc.economics`).

Pairing
-------
Every plan (the base, "without project", and each alternative) is propagated
on one common grid (the union of every plan's breakpoints), with the same
seed and the same chunk boundaries, so that draw ``d`` of every plan uses the
same hazard realization and, when the plans' knowledge-uncertainty structure
is the same (the same sampled parameters in the same order), the same random
numbers for the response parameters (common random numbers). The benefit of
draw ``d`` is then a paired difference and its percentiles are those of the
benefit itself, not of two independent risks. When an alternative changes
that structure (it adds or removes a sampled parameter), the hazard is still
paired but the response draws are not; the result says so
(``response_draws_paired``) and the percentiles of the benefit then include
the extra spread of unpaired response draws (the means are unaffected).
A plan without knowledge uncertainty is propagated with one draw per
realization and its value repeated over that realization's draws, which is
exact.

Units: money in the scenario's currency at constant price level, life loss
in statistical lives, probabilities per year.

References
----------
.. [1] US Water Resources Council (1983). Economic and Environmental
   Principles and Guidelines for Water and Related Land Resources
   Implementation Studies (with- and without-project conditions, period of
   analysis, annualized benefits and costs).
.. [2] Law, A.M. and Kelton, W.D. Simulation Modeling and Analysis.
   McGraw-Hill (common random numbers for comparing alternatives; any edition).
.. [3] ANCOLD (2003). Guidelines on Risk Assessment (cost to save a
   statistical life) [from memory; check the primary document].
"""

from __future__ import annotations

import copy
import dataclasses
import html
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from . import economics as ec

from ..risk.assess import CAUTION_TEXT, build_grid, weighted_summary
from ..io import to_plain as _plain
from ..errors import InputError
from ..hazard import read_ensemble
from ..hazard.curves import mode_curve
from ..hazard.families import FAMILIES
from ..risk.integrate import cell_masses
from ..risk.propagate import cell_integrands, chunk_rows_for, propagate

__all__ = [
    "BASE_NAME", "Alternative", "EconomicSettings", "PlanRisk", "Comparison",
    "parse_economics", "parse_alternatives", "plan_model", "sampling_signature", "evaluate_plans", "compare",
    "comparison_dict", "alternatives_table", "paired_differences_table", "plot_benefit_distributions",
    "memo_section", "attach_memo_section", "write_comparison",
]

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
#: Risk measures carried through (integrand names of :class:`riskcalc.model.RiskModel`).
MEASURES = ("afp", "ead", "all", "all_incremental")


# --------------------------------------------------------------------------
# Reading and validating
# --------------------------------------------------------------------------
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


def _base_dict(scenario) -> dict:
    return {k: v for k, v in scenario.raw.items() if k not in ("alternatives", "economics")}


def plan_model(scenario, overrides=(), prefix="", damage_factor=1.0, life_loss_factor=1.0):
    """The response and consequence model of the base with ``overrides`` deep-merged in order.

    Validated through :func:`riskcalc.scenario.build_model`, the code path of
    the base scenario; nothing is written to disk.

    Parameters
    ----------
    scenario : Scenario
    overrides : sequence of dict
        Overrides merged one after another over ``scenario.raw``.
    prefix : str
        Key prefix for error messages, e.g. ``"alternatives[2]"``.
    damage_factor, life_loss_factor : float
        Factors on every damage and life-loss value of the consequence table [-].

    Returns
    -------
    RiskModel
    """
    from ..config.scenario import _check, _merge, build_model

    d = _base_dict(scenario)
    for o in overrides:
        d = _merge(d, o)
    try:
        model = build_model(d, scenario.path, scenario.units, scenario.ensemble.quantity)
        unc = _check("uncertainty", d.get("uncertainty", {}), scenario.path, "uncertainty.")
    except InputError as exc:
        if not prefix:
            raise
        key = f"{prefix}.{exc.key}" if exc.key else prefix
        raise InputError(exc.detail, exc.file, key=key, row=exc.row, column=exc.column) from None
    if unc["draws_per_realization"] != scenario.uncertainty["draws_per_realization"]:
        raise InputError("alternatives share the base's Monte Carlo draws; set it in the base scenario",
                         scenario.path, key=f"{prefix}.uncertainty.draws_per_realization")
    if damage_factor != 1.0 or life_loss_factor != 1.0:
        c = model.consequences
        c = dataclasses.replace(c, damage_breach=c.damage_breach * damage_factor,
                                damage_no_breach=c.damage_no_breach * damage_factor,
                                life_loss_breach=c.life_loss_breach * life_loss_factor,
                                life_loss_no_breach=c.life_loss_no_breach * life_loss_factor)
        model = dataclasses.replace(model, consequences=c)
    return model


def _future_ensemble(scenario, settings):
    """The future-year hazard ensemble and mode parameters (the base's when the future keeps the hazard)."""
    from ..config.scenario import _check, _merge

    hz_override = settings.future.get("hazard")
    if not hz_override:
        return scenario.ensemble, scenario.mode_params
    file = scenario.path
    hz = _check("hazard", _merge(scenario.raw["hazard"], hz_override), file, "economics.future.hazard.")
    if hz["variable"] != scenario.ensemble.quantity:
        raise InputError("the future hazard must give the same variable as the base", file,
                         key="economics.future.hazard.variable")
    family = hz["family"].strip().lower()
    if family != "table" and family not in FAMILIES:
        raise InputError(f"unknown family '{hz['family']}'", file, key="economics.future.hazard.family")
    unit = scenario.units["discharge"] if hz["variable"] == "discharge" else scenario.units["stage"]
    ens = read_ensemble(hz["ensemble"], family, quantity=hz["variable"], unit=unit)
    base = scenario.ensemble
    if ens.size != base.size:
        raise InputError(f"the future ensemble has {ens.size} realizations but the base has {base.size}; row r of "
                         "the future ensemble must be the future of realization r", file,
                         key="economics.future.hazard.ensemble")
    if not np.allclose(ens.weights, base.weights, rtol=1e-9, atol=0):
        raise InputError("the future ensemble's weights differ from the base's; realizations must pair", file,
                         key="economics.future.hazard.ensemble")
    mode = hz["mode"] if "mode" in hz_override else (scenario.mode_params if family == base.family else {})
    return ens, {k: float(v) for k, v in (mode or {}).items()}


def sampling_signature(model) -> tuple:
    """The sequence of random draws :meth:`RiskModel.sample` makes, one entry a sampled parameter.

    Two models with the same signature, given the same generator state and
    number of draws, get the same underlying random numbers for each
    parameter (common random numbers), whatever the parameters' values.
    """
    sig = []
    if model.rating_offset_sd > 0:
        sig.append(("rating offset", "normal"))
    for m in model.modes:
        if m.shift_sd > 0:
            sig.append((f"shift:{m.name}", "normal"))
        if m.spread_range is not None:
            sig.append((f"spread:{m.name}", "uniform"))
    c = model.consequences
    for label, mult in (("damage multiplier", c.damage_multiplier), ("life-loss multiplier", c.life_loss_multiplier)):
        if mult.active:
            sig.append((label, mult.distribution))
    return tuple(sig)


# --------------------------------------------------------------------------
# Propagation on the shared hazard
# --------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class PlanRisk:
    """Risk of one plan in one condition year, per draw, on the shared grid.

    Attributes
    ----------
    plan : str
    year : int or None
    values : dict of ndarray (D,)
        ``afp`` [1/yr], ``ead`` [currency/yr], ``all`` and ``all_incremental`` [lives/yr].
    mode : dict of float
        The same on the mode curve with the nominal response.
    signature : tuple
        :func:`sampling_signature` of the plan's model.
    knowledge : bool
        Whether the plan's response has knowledge uncertainty.
    """

    plan: str
    year: int | None
    values: dict
    mode: dict
    signature: tuple
    knowledge: bool


def evaluate_plans(scenario, models: dict, ensembles: dict, *, workers=None) -> dict:
    """Propagate every plan in every condition year with the same realizations and response draws.

    Parameters
    ----------
    scenario : Scenario
        Gives the seed, the grid settings and ``draws_per_realization``.
    models : dict
        ``{year: {plan: RiskModel}}``.
    ensembles : dict
        ``{year: (HazardEnsemble, mode_params)}``; every ensemble has the same
        realizations count and weights.
    workers : int, optional

    Returns
    -------
    dict
        ``{"risks": {plan: [PlanRisk per year]}, "weights": (D,), "realization": (D,),
        "draws_per_realization": k, "grids": {year: (Q,)}}``.

    Notes
    -----
    All plans of a year share one grid (the union of their breakpoints); the
    chunk size is the smallest any plan of any year would use, and every
    plan is run with that many realizations per chunk, so the per-chunk
    random streams (``SeedSequence(seed).spawn``) line up across plans and
    years.
    """
    g = scenario.grid
    any_knowledge = any(m.has_knowledge_uncertainty for ms in models.values() for m in ms.values())
    k = int(scenario.uncertainty["draws_per_realization"]) if any_knowledge else 1
    grids, modes = {}, {}
    for year, (ens, mode_params) in ensembles.items():
        mode_one, _ = mode_curve(ens, mode_params or None)
        grid = build_grid(ens, tuple(models[year].values()), g, mode_params)
        grids[year] = grid
        modes[year] = cell_masses(mode_one.aep(grid)[0])
    rows = min(chunk_rows_for(m, grids[y].size) for y, ms in models.items() for m in ms.values())
    log_spacing = next(iter(ensembles.values()))[0].log_scale
    rule = g["rule"]
    risks: dict = {}
    chunks = set()
    weights = realization = None
    for year, ms in models.items():
        ens = ensembles[year][0]
        for plan, m in ms.items():
            prop = propagate(ens, m, grids[year], seed=scenario.seed, draws_per_realization=k, rule=rule,
                             log_spacing=log_spacing, workers=workers,
                             chunk_rows=rows)
            chunks.add(prop.n_chunks)
            rep = k // prop.draws_per_realization
            vals = {n: np.repeat(prop.column(n), rep) for n in MEASURES}
            w = np.repeat(prop.weights / rep, rep)
            if weights is None:
                weights, realization = w, np.repeat(prop.realization, rep)
            G = cell_integrands(m, grids[year], rule, log_spacing)
            mode_vals = dict(zip(m.output_names(), modes[year] @ G))
            risks.setdefault(plan, []).append(PlanRisk(plan=plan, year=year, values=vals,
                                                       mode={n: float(mode_vals[n]) for n in MEASURES},
                                                       signature=sampling_signature(m),
                                                       knowledge=m.has_knowledge_uncertainty))
    if len(chunks) != 1:  # the chunking rule of propagate changed: pairing of response draws is not guaranteed
        raise RuntimeError(f"plans were propagated in different chunkings {sorted(chunks)}; cannot pair draws")
    return {"risks": risks, "weights": weights, "realization": realization, "draws_per_realization": k,
            "grids": grids}


# --------------------------------------------------------------------------
# Comparison
# --------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class Comparison:
    """Every plan's risks and every alternative's economics; all outputs read this object.

    Attributes
    ----------
    scenario : Scenario
    settings : EconomicSettings
    alternatives : tuple of Alternative
    weights, realization : ndarray (D,)
        Draw weights (sum 1) and each draw's hazard realization.
    risks : dict
        ``{plan: [PlanRisk per condition year]}``, the base first.
    equivalent : dict
        ``{plan: {measure: (D,)}}``, equivalent annual values over the period.
    equivalent_mode : dict
        ``{plan: {measure: float}}`` on the mode curve.
    economics : dict
        ``{alternative: EconomicResult}`` per draw.
    figures : dict
        ``{alternative: dict}`` of figures of merit (see :func:`comparison_dict`).
    ranking : dict
    notes : list of str
    draws_per_realization : int
    grids : dict
        ``{year: (Q,)}``, the grid shared by every plan in that year.
    """

    scenario: object
    settings: EconomicSettings
    alternatives: tuple
    weights: np.ndarray
    realization: np.ndarray
    risks: dict
    equivalent: dict
    equivalent_mode: dict
    economics: dict
    figures: dict
    ranking: dict
    notes: list
    draws_per_realization: int = 1
    grids: dict = field(default_factory=dict)


def _annualize(series, settings):
    """Equivalent annual value of values at the condition years: (..., Y) -> (...)."""
    if settings.future_year is None:
        return np.asarray(series)[..., 0]
    return ec.annualize_time_varying(series, settings.rate, settings.period_years, years=list(settings.years),
                                     base_year=settings.base_year)


def _guideline_lines(scenario):
    from .guidelines import DEFAULT_GUIDELINES, from_config

    if scenario.guidelines:
        return from_config(scenario.guidelines, file=scenario.path).chart_lines
    return tuple(ln for gs in DEFAULT_GUIDELINES.values() for ln in gs.chart_lines)


def _fn_point(afp, all_incremental, lines):
    from .guidelines import check_point

    n = all_incremental / afp if afp > 0 else float("nan")
    checks = []
    for ln in lines:
        c = check_point(ln, afp, all_incremental)
        checks.append({"line": ln.name, "source": ln.source, "limit_per_yr": float(c.limit),
                       "ratio": float(c.ratio), "exceeds": bool(c.exceeds)})
    return {"afp_per_yr": float(afp), "n_lives": float(n), "checks": checks}


def _stats(values, weights):
    s, se = weighted_summary(values, weights)
    s["mc_standard_error"] = se
    return s


def _ratio(a, b):
    return a / b if b != 0 else (math.inf if a > 0 else (-math.inf if a < 0 else math.nan))


def compare(scenario, *, workers=None) -> Comparison:
    """Compare the scenario's alternatives with the base (without project) on the shared hazard.

    Parameters
    ----------
    scenario : Scenario
        With ``[[alternatives]]`` and ``[economics]``.
    workers : int, optional
        Threads for the Monte Carlo; results do not depend on it.

    Returns
    -------
    Comparison

    Notes
    -----
    Per draw ``d`` (paired): benefit ``b_d = EAD_without,d - EAD_with,d``
    with EAD the equivalent annual value over the period (linear
    interpolation between the base and future years, present worth at the
    base year times the capital recovery factor); net benefit ``b_d - C``;
    benefit-cost ratio ``b_d / C``, with ``C`` the annualized cost
    (:func:`riskcalc.economics.annualized_cost`). Headline figures are the
    weighted means; the headline benefit-cost ratio is mean benefit / ``C``.
    Cost per statistical life saved is ``(C - mean b) / mean reduction of
    ALL`` (total annualized life loss). The f-N point of a plan is its
    base-year predictive AFP and ``N = ALL_incremental / AFP``, the
    incremental life loss given failure. The mode figures use the mode curve
    and the nominal response in every year.

    References
    ----------
    .. [1] US Water Resources Council (1983), Principles and Guidelines.
    """
    settings = parse_economics(scenario)
    alts = parse_alternatives(scenario)
    base_year = settings.base_year
    ensembles = {base_year: (scenario.ensemble, scenario.mode_params)}
    models = {base_year: {BASE_NAME: plan_model(scenario)}}
    for a in alts:
        models[base_year][a.name] = plan_model(scenario, [a.override], prefix=f"alternatives[{a.index}]")
    if settings.future_year is not None:
        fy = settings.future_year
        ensembles[fy] = _future_ensemble(scenario, settings)
        fac = dict(damage_factor=settings.damage_factor, life_loss_factor=settings.life_loss_factor)
        models[fy] = {BASE_NAME: plan_model(scenario, [settings.future], prefix="economics.future", **fac)}
        for a in alts:
            models[fy][a.name] = plan_model(scenario, [a.override, settings.future, a.future_override],
                                            prefix=f"alternatives[{a.index}].future", **fac)
    ev = evaluate_plans(scenario, models, ensembles, workers=workers)
    risks, w = ev["risks"], ev["weights"]
    equivalent, equivalent_mode = {}, {}
    for plan, rs in risks.items():
        equivalent[plan] = {n: _annualize(np.stack([r.values[n] for r in rs], axis=-1), settings) for n in MEASURES}
        equivalent_mode[plan] = {n: float(_annualize(np.array([r.mode[n] for r in rs]), settings)) for n in MEASURES}
    lines = _guideline_lines(scenario)
    base_eq, base_mode = equivalent[BASE_NAME], equivalent_mode[BASE_NAME]
    economics, figures, notes = {}, {}, []
    base_sig = risks[BASE_NAME][0].signature
    for a in alts:
        eq, mo = equivalent[a.name], equivalent_mode[a.name]
        cost = float(ec.annualized_cost(a.first_cost, a.annual_om, settings.rate, settings.period_years,
                                        a.construction_months))
        idc = float(ec.interest_during_construction(a.first_cost, settings.rate, a.construction_months))
        if cost <= 0:
            raise InputError("the alternative costs nothing; expected first_cost or annual_om above 0",
                             scenario.path, key=f"alternatives[{a.index}].first_cost")
        res = ec.benefit_figures(base_eq["ead"], eq["ead"], cost, base_eq["all"], eq["all"])
        economics[a.name] = res
        mean_b = float(w @ res.expected_annual_benefit)
        mean_dall = float(w @ res.life_loss_reduction)
        mean_dafp = float(w @ (base_eq["afp"] - eq["afp"]))
        head = ec.benefit_figures(float(w @ base_eq["ead"]), float(w @ eq["ead"]), cost,
                                  float(w @ base_eq["all"]), float(w @ eq["all"]))
        mode_res = ec.benefit_figures(base_mode["ead"], mo["ead"], cost, base_mode["all"], mo["all"])
        mode_b = float(mode_res.expected_annual_benefit)
        paired = all(r.signature == base_sig for r in risks[a.name])
        if not paired:
            notes.append(f"{a.name}: its knowledge-uncertainty structure differs from the base's, so its response "
                         "draws are not paired with the base's (the hazard realizations are); the benefit's "
                         "percentiles are wider than with paired draws, its mean is unaffected")
        by = risks[a.name][0]
        figures[a.name] = {
            "description": a.description,
            "costs": {"first_cost": a.first_cost, "annual_om_per_yr": a.annual_om,
                      "construction_months": a.construction_months, "interest_during_construction": idc,
                      "investment_cost": a.first_cost + idc, "annualized_cost_per_yr": cost},
            "expected_annual_damage_per_yr": {"predictive": float(w @ eq["ead"]), "mode": mo["ead"],
                                              "ensemble": _stats(eq["ead"], w)},
            "expected_annual_benefit_per_yr": {"predictive": mean_b, "mode": mode_b,
                                               "ratio_predictive_to_mode": _ratio(mean_b, mode_b),
                                               "ensemble": _stats(res.expected_annual_benefit, w)},
            "net_benefit_per_yr": {"predictive": mean_b - cost, "mode": mode_b - cost,
                                   "ensemble": _stats(res.net_benefit, w)},
            "benefit_cost_ratio": {"predictive": float(head.benefit_cost_ratio), "mode": float(mode_res.benefit_cost_ratio),
                                   "ensemble": _stats(res.benefit_cost_ratio, w)},
            "afp_reduction_per_yr": {"predictive": mean_dafp, "mode": base_mode["afp"] - mo["afp"],
                                     "ensemble": _stats(base_eq["afp"] - eq["afp"], w)},
            "all_reduction_lives_per_yr": {"predictive": mean_dall, "mode": float(mode_res.life_loss_reduction),
                                           "ensemble": _stats(res.life_loss_reduction, w)},
            "cost_per_statistical_life_saved": {"predictive": float(head.cost_per_life_saved),
                                                "mode": float(mode_res.cost_per_life_saved)},
            "base_year": {"afp_per_yr": float(w @ by.values["afp"]), "ead_per_yr": float(w @ by.values["ead"]),
                          "all_lives_per_yr": float(w @ by.values["all"])},
            "fn_point": _fn_point(float(w @ by.values["afp"]), float(w @ by.values["all_incremental"]), lines),
            "response_draws_paired": paired,
        }
    pred_order = sorted(figures, key=lambda n: -figures[n]["net_benefit_per_yr"]["predictive"])
    mode_order = sorted(figures, key=lambda n: -figures[n]["net_benefit_per_yr"]["mode"])
    ranking = {"by": "net benefit", "predictive": pred_order, "mode": mode_order,
               "changes_between_predictive_and_mode": pred_order != mode_order,
               "top_changes": pred_order[0] != mode_order[0],
               "justified_predictive": [n for n in pred_order if figures[n]["net_benefit_per_yr"]["predictive"] > 0],
               "justified_mode": [n for n in mode_order if figures[n]["net_benefit_per_yr"]["mode"] > 0]}
    if ev["draws_per_realization"] > 1:
        notes.append(f"{ev['draws_per_realization']} response draws per realization; plans without knowledge "
                     "uncertainty repeat their realization's value over its draws (exact)")
    notes.append("all plans use one grid, the same hazard realizations and the same seed and chunking; the "
                 "grid holds every plan's breakpoints, so the without-project figures can differ from a single "
                 "`riskcalc run` in the last digits")
    return Comparison(scenario=scenario, settings=settings, alternatives=alts, weights=w,
                      realization=ev["realization"], risks=risks, equivalent=equivalent,
                      equivalent_mode=equivalent_mode, economics=economics, figures=figures, ranking=ranking,
                      notes=notes, draws_per_realization=ev["draws_per_realization"], grids=ev["grids"])


# --------------------------------------------------------------------------
# Outputs: one object, several views
# --------------------------------------------------------------------------
def comparison_dict(c: Comparison) -> dict:
    """The comparison.json structure (plain JSON types; non-finite numbers become null)."""
    sc, s, w = c.scenario, c.settings, c.weights
    base = {"expected_annual_damage_per_yr": {"predictive": float(w @ c.equivalent[BASE_NAME]["ead"]),
                                              "mode": c.equivalent_mode[BASE_NAME]["ead"],
                                              "ensemble": _stats(c.equivalent[BASE_NAME]["ead"], w)},
            "annualized_life_loss_lives_per_yr": {"predictive": float(w @ c.equivalent[BASE_NAME]["all"]),
                                                  "mode": c.equivalent_mode[BASE_NAME]["all"]},
            "annual_failure_probability_per_yr": {"predictive": float(w @ c.equivalent[BASE_NAME]["afp"]),
                                                  "mode": c.equivalent_mode[BASE_NAME]["afp"]},
            "fn_point": _fn_point(float(w @ c.risks[BASE_NAME][0].values["afp"]),
                                  float(w @ c.risks[BASE_NAME][0].values["all_incremental"]),
                                  _guideline_lines(sc))}
    return _plain({
        "title": sc.title, "units": sc.units,
        "economics": {"rate": s.rate, "period_years": s.period_years, "base_year": s.base_year,
                      "future_year": s.future_year, "damage_factor": s.damage_factor,
                      "life_loss_factor": s.life_loss_factor,
                      "capital_recovery_factor": float(ec.capital_recovery_factor(s.rate, s.period_years))},
        "draws": int(w.size), "draws_per_realization": c.draws_per_realization, "seed": sc.seed,
        "without_project": base, "alternatives": c.figures, "ranking": c.ranking, "notes": c.notes,
        "caution": CAUTION_TEXT,
    })


def alternatives_table(c: Comparison):
    """One row an alternative; units in the column names."""
    import pandas as pd

    cur = c.scenario.units["currency"]
    rows = []
    for name, f in c.figures.items():
        b, bcr = f["expected_annual_benefit_per_yr"], f["benefit_cost_ratio"]
        rows.append({
            "alternative": name,
            f"first_cost_{cur}": f["costs"]["first_cost"],
            f"annual_om_{cur}_per_yr": f["costs"]["annual_om_per_yr"],
            "construction_months": f["costs"]["construction_months"],
            f"interest_during_construction_{cur}": f["costs"]["interest_during_construction"],
            f"annualized_cost_{cur}_per_yr": f["costs"]["annualized_cost_per_yr"],
            f"ead_without_{cur}_per_yr": float(c.weights @ c.equivalent[BASE_NAME]["ead"]),
            f"ead_with_{cur}_per_yr": f["expected_annual_damage_per_yr"]["predictive"],
            f"benefit_{cur}_per_yr": b["predictive"],
            f"benefit_p05_{cur}_per_yr": b["ensemble"]["p05"],
            f"benefit_p95_{cur}_per_yr": b["ensemble"]["p95"],
            f"benefit_mode_{cur}_per_yr": b["mode"],
            "benefit_ratio_predictive_to_mode": b["ratio_predictive_to_mode"],
            f"net_benefit_{cur}_per_yr": f["net_benefit_per_yr"]["predictive"],
            f"net_benefit_mode_{cur}_per_yr": f["net_benefit_per_yr"]["mode"],
            "bcr": bcr["predictive"], "bcr_p05": bcr["ensemble"]["p05"], "bcr_p95": bcr["ensemble"]["p95"],
            "bcr_mode": bcr["mode"],
            "afp_reduction_per_yr": f["afp_reduction_per_yr"]["predictive"],
            "all_reduction_lives_per_yr": f["all_reduction_lives_per_yr"]["predictive"],
            f"net_cost_per_life_saved_{cur}": f["cost_per_statistical_life_saved"]["predictive"],
            "afp_base_year_per_yr": f["fn_point"]["afp_per_yr"],
            "fn_point_n_lives": f["fn_point"]["n_lives"],
            "rank_predictive": c.ranking["predictive"].index(name) + 1,
            "rank_mode": c.ranking["mode"].index(name) + 1,
            "response_draws_paired": f["response_draws_paired"],
        })
    return pd.DataFrame(rows)


def paired_differences_table(c: Comparison):
    """Long table: one row an alternative and a draw, the paired differences from the base."""
    import pandas as pd

    cur = c.scenario.units["currency"]
    frames = []
    d = np.arange(c.weights.size)
    base = c.equivalent[BASE_NAME]
    for a in c.alternatives:
        eq, res = c.equivalent[a.name], c.economics[a.name]
        frames.append(pd.DataFrame({
            "alternative": a.name, "draw": d, "realization": c.realization, "weight": c.weights,
            f"benefit_{cur}_per_yr": res.expected_annual_benefit,
            f"net_benefit_{cur}_per_yr": res.net_benefit,
            "bcr": res.benefit_cost_ratio,
            "afp_reduction_per_yr": base["afp"] - eq["afp"],
            "all_reduction_lives_per_yr": res.life_loss_reduction,
        }))
    return pd.concat(frames, ignore_index=True)


def plot_benefit_distributions(c: Comparison, path_stem=None):
    """Weighted histograms of each alternative's annual benefit per draw, with the mean, mode-curve and cost lines.

    Parameters
    ----------
    c : Comparison
    path_stem : path, optional
        Where to save (PNG and SVG via :func:`riskcalc.plots.save`); the figure is returned when omitted.
    """
    from ..outputs.figures import STYLE, plt, save

    cur = c.scenario.units["currency"].upper()
    names = [a.name for a in c.alternatives]
    rc = {"font.size": 9, "axes.titlesize": 10, "axes.labelsize": 9, "legend.fontsize": 8,
          "axes.spines.top": False, "axes.spines.right": False, "svg.hashsalt": "riskcalc", "svg.fonttype": "none"}
    allb = np.concatenate([c.economics[n].expected_annual_benefit for n in names]) / 1e6
    costs = [c.figures[n]["costs"]["annualized_cost_per_yr"] / 1e6 for n in names]
    lo, hi = np.nanpercentile(allb, 0.5), np.nanpercentile(allb, 99.5)
    lo, hi = min(lo, min(costs), 0.0), max(hi, max(costs))
    bins = np.linspace(lo, hi + 1e-12 * max(1.0, abs(hi)), 60)
    with plt.rc_context(rc):
        fig, axes = plt.subplots(len(names), 1, figsize=(7.0, 1.0 + 1.6 * len(names)), sharex=True, squeeze=False)
        for ax, n in zip(axes[:, 0], names):
            b = np.clip(c.economics[n].expected_annual_benefit / 1e6, bins[0], bins[-1])
            f = c.figures[n]
            ax.hist(b, bins=bins, weights=c.weights, color=STYLE["band"]["color"], alpha=0.8,
                    label="paired draws")
            ax.axvline(f["expected_annual_benefit_per_yr"]["predictive"] / 1e6, **STYLE["predictive"],
                       label="predictive (mean)")
            ax.axvline(f["expected_annual_benefit_per_yr"]["mode"] / 1e6, **STYLE["mode"], label="mode curve")
            ax.axvline(f["costs"]["annualized_cost_per_yr"] / 1e6, color=STYLE["accent"], lw=1.4,
                       ls=(0, (1, 1.5)), label="annualized cost")
            ax.set_ylabel("weight")
            ax.set_title(f"{n}: benefit-cost ratio {f['benefit_cost_ratio']['predictive']:.2f} "
                         f"(mode curve {f['benefit_cost_ratio']['mode']:.2f})", loc="left")
            ax.grid(True, axis="x", color=STYLE["grid"], lw=0.6)
        axes[0, 0].legend(loc="upper right", frameon=False)
        axes[-1, 0].set_xlabel(f"expected annual benefit [million {cur}/yr] (draws beyond the 0.5-99.5 % range "
                               "are drawn in the end bins)")
        fig.suptitle(f"{c.scenario.title}: benefit distributions", x=0.01, ha="left", fontsize=10)
        if path_stem is None:
            return fig
        return save(fig, path_stem)


def _money(v):
    if v is None or not np.isfinite(v):
        return "n/a" if v is None or np.isnan(v) else ("∞" if v > 0 else "−∞")
    return f"{v:,.0f}"


def _g(v, digits=3):
    if v is None or not np.isfinite(v):
        return "n/a"
    return f"{v:.{digits}g}"


def _table_rows(c: Comparison):
    cur = c.scenario.units["currency"]
    header = ["alternative", f"annualized cost [{cur}/yr]", f"benefit [{cur}/yr]", "benefit 5–95 %",
              f"benefit, mode curve [{cur}/yr]", "pred/mode", f"net benefit [{cur}/yr]", "BCR (5–95 %)",
              "AFP reduction [1/yr]", "ALL reduction [lives/yr]", f"net cost per statistical life saved [{cur}] (a)", "rank pred/mode"]
    rows = []
    for n in c.ranking["predictive"]:
        f = c.figures[n]
        b, bcr = f["expected_annual_benefit_per_yr"], f["benefit_cost_ratio"]
        rows.append([n, _money(f["costs"]["annualized_cost_per_yr"]), _money(b["predictive"]),
                     f"{_money(b['ensemble']['p05'])} to {_money(b['ensemble']['p95'])}", _money(b["mode"]),
                     _g(b["ratio_predictive_to_mode"]), _money(f["net_benefit_per_yr"]["predictive"]),
                     f"{bcr['predictive']:.2f} ({bcr['ensemble']['p05']:.2f}–{bcr['ensemble']['p95']:.2f})",
                     _g(f["afp_reduction_per_yr"]["predictive"]), _g(f["all_reduction_lives_per_yr"]["predictive"]),
                     _money(f["cost_per_statistical_life_saved"]["predictive"]),
                     f"{c.ranking['predictive'].index(n) + 1} / {c.ranking['mode'].index(n) + 1}"])
    return header, rows


_NET_COST_NOTE = ("(a) Net cost per statistical life saved = (annualized cost − expected annual benefit) / reduction "
                  "in annualized life loss; a negative value means the economic benefits alone exceed the cost.")


def _ranking_sentence(c: Comparison) -> str:
    r = c.ranking
    s = f"Ranked by net benefit on the predictive (mean) hazard: {', '.join(r['predictive'])}."
    if r["changes_between_predictive_and_mode"]:
        s += (f" On the single most likely (mode) curve the order would be {', '.join(r['mode'])}: "
              "justifying or ranking the alternatives on the mode curve would mis-rank them.")
    else:
        s += " The order is the same on the mode curve, though the mode curve's benefits differ (see pred/mode)."
    jp, jm = r["justified_predictive"], r["justified_mode"]
    if jp != jm:
        s += (f" Net benefit is positive for {', '.join(jp) or 'none'} on the predictive hazard but for "
              f"{', '.join(jm) or 'none'} on the mode curve.")
    return s


def memo_section(c: Comparison) -> dict:
    """The alternatives section of the decision memo.

    Returns
    -------
    dict
        ``{"title", "markdown", "html" (an escaped fragment), "figures": [stems]}``;
        the figure stems are relative to the figures folder.
    """
    s = c.settings
    header, rows = _table_rows(c)
    period = (f"a {s.period_years}-year period from {s.base_year}" if s.base_year is not None
              else f"a {s.period_years}-year period")
    intro = (f"Alternatives compared with the without-project condition on the same {c.weights.size} paired draws "
             f"of the hazard ensemble, at a discount rate of {100 * s.rate:g} % over {period}.")
    if s.future_year is not None:
        intro += (f" Risk is interpolated linearly between {s.base_year} and the future condition of {s.future_year} "
                  "and annualized with the capital recovery factor.")
    fn_lines = []
    for n in c.ranking["predictive"]:
        p = c.figures[n]["fn_point"]
        worst = max(p["checks"], key=lambda ch: -1 if ch["ratio"] is None or not np.isfinite(ch["ratio"])
                    else ch["ratio"], default=None)
        text = f"{n}: f-N point AFP {_g(p['afp_per_yr'])} per year, N {_g(p['n_lives'])}"
        if worst is not None and np.isfinite(worst["ratio"]):
            text += f"; largest ratio to a reference line {worst['ratio']:.2f} ({worst['line']})"
        fn_lines.append(text)
    caution = ("These figures support, and never replace, the judgment of qualified, licensed engineers and "
               "economists; the governing agency's current policy, discount rate and local codes decide. "
               + CAUTION_TEXT)
    md = [intro, "", "| " + " | ".join(header) + " |", "|" + "---|" * len(header)]
    md += ["| " + " | ".join(r) + " |" for r in rows]
    md += ["", _NET_COST_NOTE, "", _ranking_sentence(c), "", "f-N points (base year, predictive):", ""]
    md += [f"- {t}" for t in fn_lines]
    if c.notes:
        md += ["", "Notes:", ""] + [f"- {t}" for t in c.notes]
    md += ["", "![Benefit distributions](figures/benefit_distributions.png)", "", f"*{caution}*", ""]
    e = html.escape
    h = [f"<section class=\"alternatives\"><h2>{e('Alternatives and economics')}</h2>", f"<p>{e(intro)}</p>",
         "<table><thead><tr>" + "".join(f"<th>{e(x)}</th>" for x in header) + "</tr></thead><tbody>"]
    h += ["<tr>" + "".join(f"<td>{e(x)}</td>" for x in r) + "</tr>" for r in rows]
    h += ["</tbody></table>", f"<p class=\"note\">{e(_NET_COST_NOTE)}</p>", f"<p>{e(_ranking_sentence(c))}</p>",
          "<ul>" + "".join(f"<li>{e(t)}</li>" for t in fn_lines) + "</ul>"]
    if c.notes:
        h.append("<ul>" + "".join(f"<li>{e(t)}</li>" for t in c.notes) + "</ul>")
    h += [f"<p class=\"caution\"><em>{e(caution)}</em></p>", "</section>"]
    return {"title": "Alternatives and economics", "markdown": "\n".join(md), "html": "\n".join(h),
            "figures": ["benefit_distributions"]}


def attach_memo_section(result, c: Comparison) -> dict:
    """Add :func:`memo_section` to ``result.extras["memo_sections"]`` (a RiskResult) and return the section."""
    sec = memo_section(c)
    result.extras.setdefault("memo_sections", []).append(sec)
    return sec


def write_comparison_files(c: Comparison, folder, *, figures=True) -> None:
    """Write comparison.json, comparison.md, tables/alternatives.csv, tables/paired_differences.csv and
    figures/benefit_distributions.* into an existing folder (a run's or a comparison's)."""
    from ..io import write_csv, write_json

    folder = Path(folder)
    write_json(folder / "comparison.json", comparison_dict(c))
    (folder / "tables").mkdir(exist_ok=True)
    write_csv(folder / "tables" / "alternatives.csv", alternatives_table(c))
    write_csv(folder / "tables" / "paired_differences.csv", paired_differences_table(c))
    if figures:
        plot_benefit_distributions(c, folder / "figures" / "benefit_distributions")
    sec = memo_section(c)
    (folder / "comparison.md").write_text(f"# {sec['title']}\n\n{sec['markdown']}", encoding="utf-8")


def write_comparison(c: Comparison, out, *, overwrite=False, figures=True) -> Path:
    """Write the comparison's files (:func:`write_comparison_files`) into ``out`` atomically."""
    from ..io import atomic_output_dir

    with atomic_output_dir(out, overwrite=overwrite) as tmp:
        write_comparison_files(c, tmp, figures=figures)
    return Path(out)
