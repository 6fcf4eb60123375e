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

import dataclasses
import math
from dataclasses import dataclass, field
import numpy as np
from . import economics as ec
from ..risk.assess import build_grid
from ..risk.records import weighted_summary
from ..errors import InputError
from ..hazard.curves import mode_curve
from ..risk.integrate import cell_masses
from ..risk.propagate import chunk_rows_for, propagate
from ..config.decision import BASE_NAME, EconomicSettings, parse_alternatives, parse_economics


#: Risk measures carried through (integrand names of :class:`riskcalc.response.chain.ResponseChain`).
MEASURES = ("afp", "ead", "all", "all_incremental")


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
    from ..config.decision import build_plan_model

    model = build_plan_model(scenario.raw, scenario.path, scenario.units, scenario.ensemble.quantity,
                             scenario.uncertainty["draws_per_realization"], overrides, prefix)
    if damage_factor != 1.0 or life_loss_factor != 1.0:
        model = dataclasses.replace(model, consequences=model.consequences.scaled(damage_factor, life_loss_factor))
    return model


def _future_ensemble(scenario, settings):
    """The future-year hazard ensemble and mode parameters (the base's when the future keeps the hazard)."""
    from ..config.decision import read_future_hazard

    return read_future_hazard(scenario.raw["hazard"], settings.future.get("hazard"), scenario.path, scenario.units,
                              scenario.ensemble, scenario.mode_params)


def sampling_signature(chain) -> tuple:
    """The sequence of random draws a plan's Monte Carlo makes: the signature of its registry of uncertain
    inputs (:attr:`riskcalc.response.uncertain.UncertainInputs.signature`)."""
    return chain.uncertain.signature


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
            mode_vals = dict(zip(prop.names, prop.on_measure(modes[year])))
            risks.setdefault(plan, []).append(PlanRisk(plan=plan, year=year, values=vals,
                                                       mode={n: float(mode_vals[n]) for n in MEASURES},
                                                       signature=sampling_signature(m),
                                                       knowledge=m.has_knowledge_uncertainty))
    if len(chunks) != 1:  # the chunking rule of propagate changed: pairing of response draws is not guaranteed
        raise RuntimeError(f"plans were propagated in different chunkings {sorted(chunks)}; cannot pair draws")
    return {"risks": risks, "weights": weights, "realization": realization, "draws_per_realization": k,
            "grids": grids}


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
    from .guidelines import DEFAULT_GUIDELINES, GuidelineSet, from_config

    if isinstance(scenario.guidelines, GuidelineSet):
        return scenario.guidelines.chart_lines
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
    return {**s.as_dict(), "mc_standard_error": se}


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
