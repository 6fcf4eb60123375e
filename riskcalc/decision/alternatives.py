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
from typing import Any
from dataclasses import dataclass, field
import numpy as np
from . import economics as ec
from ..risk.assess import build_grid
from ..risk.records import weighted_summary
from ..errors import InputError
from ..hazard.curves import mode_curve
from ..risk.integrate import cell_masses, evaluation_points, fn_levels, point_masses
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

    model = build_plan_model(
        scenario.raw,
        scenario.path,
        scenario.units,
        scenario.ensemble.quantity,
        scenario.uncertainty["draws_per_realization"],
        overrides,
        prefix,
    )
    if damage_factor != 1.0 or life_loss_factor != 1.0:
        model = dataclasses.replace(model, consequences=model.consequences.scaled(damage_factor, life_loss_factor))
    return model


def _future_ensemble(scenario, settings):
    """The future-year hazard ensemble and mode parameters (the base's when the future keeps the hazard)."""
    from ..config.decision import read_future_hazard

    return read_future_hazard(
        scenario.raw["hazard"],
        settings.future.get("hazard"),
        scenario.path,
        scenario.units,
        scenario.ensemble,
        scenario.mode_params,
    )


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
    fn : dict or None
        F-N curves on the year's common life-loss levels (nominal response, incremental life loss):
        ``levels (L,)``, ``predictive (L,)``, ``mode (L,)``, ``draws (D, L)`` (paired with the draws, or None
        when not kept) and ``basis`` (what the rows of ``draws`` are).
    """

    plan: str
    year: int | None
    values: dict
    mode: dict
    signature: tuple
    knowledge: bool
    fn: dict | None = None


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
    from ..risk.grid_error import choose_points, points_given

    g = scenario.grid
    points = None
    if not points_given(scenario):
        # the default grid: the smallest accurate one for every plan, chosen on the first condition year; the later
        # years use that size on a grid built from their own ensemble and breakpoints (their accuracy is not
        # checked separately: one pilot instead of one a year)
        y0 = next(iter(ensembles))
        ens0, mp0 = ensembles[y0]
        points = choose_points(
            dataclasses.replace(scenario, ensemble=ens0, mode_params=mp0), tuple(models[y0].values())
        )[0]
    any_knowledge = any(m.has_knowledge_uncertainty for ms in models.values() for m in ms.values())
    k = int(scenario.uncertainty["draws_per_realization"]) if any_knowledge else 1
    grids, modes = {}, {}
    for year, (ens, mode_params) in ensembles.items():
        mode_one, _ = mode_curve(ens, mode_params or None)
        grid = build_grid(ens, tuple(models[year].values()), g, mode_params, points=points)
        grids[year] = grid
        modes[year] = cell_masses(mode_one.aep(grid)[0])
    rows = min(chunk_rows_for(m, grids[y].size) for y, ms in models.items() for m in ms.values())
    log_spacing = next(iter(ensembles.values()))[0].log_scale
    rule = g["rule"]
    # F-N levels common to every plan of a year (as a run chooses them: 1 and log-spaced up to the largest
    # nominal incremental life loss), so the plans' F-N curves are read at the same N
    levels = {}
    for year, ms in models.items():
        mid = evaluation_points(grids[year], log_spacing, "midpoint")
        levels[year] = fn_levels(max([1.0] + [m.on(mid).max_incremental_life_loss() for m in ms.values()]))
    risks: dict = {}
    chunks = set()
    weights = realization = None
    for year, ms in models.items():
        ens = ensembles[year][0]
        for plan, m in ms.items():
            prop = propagate(
                ens,
                m,
                grids[year],
                seed=scenario.seed,
                draws_per_realization=k,
                rule=rule,
                log_spacing=log_spacing,
                workers=workers,
                chunk_rows=rows,
                fn_levels=levels[year],
            )
            chunks.add(prop.n_chunks)
            rep = k // prop.draws_per_realization
            vals = {n: np.repeat(prop.column(n), rep) for n in MEASURES}
            w = np.repeat(prop.weights / rep, rep)
            if weights is None:
                weights, realization = w, np.repeat(prop.realization, rep)
            mode_vals = dict(zip(prop.names, prop.on_measure(modes[year])))
            risks.setdefault(plan, []).append(
                PlanRisk(
                    plan=plan,
                    year=year,
                    values=vals,
                    mode={n: float(mode_vals[n]) for n in MEASURES},
                    signature=sampling_signature(m),
                    knowledge=m.has_knowledge_uncertainty,
                    fn=_plan_fn(m, prop, levels[year], modes[year], rep, k),
                )
            )
    if len(chunks) != 1:  # the chunking rule of propagate changed: pairing of response draws is not guaranteed
        raise RuntimeError(f"plans were propagated in different chunkings {sorted(chunks)}; cannot pair draws")
    return {"risks": risks, "weights": weights, "realization": realization, "draws_per_realization": k, "grids": grids}


def _plan_fn(chain, prop, levels, mode_masses, rep, k) -> dict:
    """F-N curves of one plan in one year: predictive and mode (nominal response) and one per draw."""
    fn_matrix = chain.on(prop.points).fn_integrand(levels)[0]
    out = {
        "levels": levels,
        "predictive": prop.point_masses_predictive @ fn_matrix,
        "mode": point_masses(mode_masses, prop.rule) @ fn_matrix,
        "draws": None,
        "basis": "the per-draw F-N curves were not kept (too many realizations × levels)",
    }
    fpd = getattr(prop, "fn_per_draw", None)
    if fpd is not None:
        out.update(draws=np.repeat(np.asarray(fpd, float), rep, axis=0), basis="the F-N curve of every draw")
    elif prop.fn_per_realization is not None:
        basis = "the F-N curve of every hazard realization"
        if chain.has_knowledge_uncertainty:
            basis += " with the nominal response: the sampled response uncertainty is not in this share"
        # each realization's k draws share its curve; their weights w_r / k add up to w_r
        out.update(draws=np.repeat(np.asarray(prop.fn_per_realization, float), k, axis=0), basis=basis)
    return out


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

    scenario: Any
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
    return ec.annualize_time_varying(
        series, settings.rate, settings.period_years, years=list(settings.years), base_year=settings.base_year
    )


def _period_mean(series, settings):
    """Undiscounted mean over the period of values at the condition years: (..., Y) -> (...)."""
    if settings.future_year is None:
        return np.asarray(series)[..., 0]
    return ec.undiscounted_mean(series, settings.period_years, years=list(settings.years), base_year=settings.base_year)


def _guideline_lines(scenario):
    """The chart lines of the scenario (its [guidelines], else the defaults of its structure)."""
    from .guidelines import scenario_guideline_set

    return scenario_guideline_set(scenario)[0].chart_lines


def _all_lines(scenario):
    """Every line of the scenario, individual-risk lines too (reported as not assessed)."""
    from .guidelines import scenario_guideline_set

    return scenario_guideline_set(scenario)[0].lines


def _fn_point(afp, all_incremental, lines):
    """The f-N point (AFP, N = ALL_inc / AFP) against the f-N lines (life-loss and AFP lines) only: an F-N
    limit line limits the F-N curve (see :func:`condition_year_figures`), not a point."""
    from .reference_checks import point_ratios, position

    all_incremental = max(0.0, float(all_incremental))
    n = all_incremental / afp if afp > 0 else float("nan")
    checks = []
    for ln in lines:
        if ln.kind == "fn_limit" or (ln.kind == "probability" and not ln.on_chart):
            continue
        ratio, _, limit = (float(np.asarray(x)) for x in point_ratios(ln, afp, all_incremental))
        checks.append(
            {
                "line": ln.name,
                "source": ln.source,
                "limit_per_yr": limit,
                "ratio": ratio,
                "exceeds": bool(ratio > 1),
                "position": position(ratio),
            }
        )
    return {"afp_per_yr": float(afp), "n_lives": float(n), "checks": checks}


def condition_year_figures(
    risk: PlanRisk, weights, lines, base: PlanRisk | None = None, condition: str = "base year", realization=None
) -> dict:
    """The risk of one plan in one condition year, not discounted, against the reference lines.

    Parameters
    ----------
    risk : PlanRisk
    weights : ndarray (D,)
        Draw weights, paired with ``risk.values``.
    lines : sequence of lines
        Chart lines (no individual-risk line is assessed).
    base : PlanRisk, optional
        The without-project plan in the same year: adds the reductions (paired per draw).
    condition : str
        ``"base year"`` or ``"future year"``.
    realization : ndarray (D,) of int, optional
        Hazard realization of each draw: the standard errors treat a realization's draws as a cluster.

    Returns
    -------
    dict
        ``year``, ``condition``, ``afp_per_yr``, ``ead_per_yr``, ``all_lives_per_yr``,
        ``all_incremental_lives_per_yr`` (predictive = weighted mean over the draws, mode), the ``fn_point``,
        ``reference_lines`` (:func:`riskcalc.decision.reference_checks.line_checks`: the position of the
        predictive and mode figures and the share of draws above each line) and ``reference_lines_counts``;
        with ``base``, ``afp_reduction_per_yr`` and ``all_reduction_lives_per_yr``. These are the values of
        that year, never discounted: tolerable-risk statements are made per condition year.
    """
    from .reference_checks import Figures, count_positions, line_checks

    w = np.asarray(weights, float)
    v, mo = risk.values, risk.mode
    pred = {n: float(w @ v[n]) for n in MEASURES}
    fn = risk.fn or {}
    levels = fn.get("levels")
    checks = line_checks(
        lines,
        levels,
        Figures(pred["afp"], pred["all_incremental"], fn.get("predictive")),
        Figures(mo["afp"], mo["all_incremental"], fn.get("mode")),
        Figures(v["afp"], v["all_incremental"], fn.get("draws")),
        w,
        fn_basis=fn.get("basis", ""),
    )
    out = {
        "year": risk.year,
        "condition": condition,
        "afp_per_yr": {"predictive": pred["afp"], "mode": mo["afp"], "ensemble": _stats(v["afp"], w, realization)},
        "ead_per_yr": {"predictive": pred["ead"], "mode": mo["ead"]},
        "all_lives_per_yr": {
            "predictive": pred["all"],
            "mode": mo["all"],
            "ensemble": _stats(v["all"], w, realization),
        },
        "all_incremental_lives_per_yr": {"predictive": pred["all_incremental"], "mode": mo["all_incremental"]},
        "fn_point": _fn_point(pred["afp"], pred["all_incremental"], lines),
        "reference_lines": checks,
        "reference_lines_counts": count_positions(checks),
    }
    if base is not None:
        for key, n in (("afp_reduction_per_yr", "afp"), ("all_reduction_lives_per_yr", "all")):
            d = base.values[n] - v[n]
            out[key] = {"predictive": float(w @ d), "mode": base.mode[n] - mo[n], "ensemble": _stats(d, w, realization)}
    return out


def _conditions(settings) -> list[str]:
    return ["base year" if k == 0 else "future year" for k in range(len(settings.years))]


def _stats(values, weights, realization=None):
    """Mean, percentiles and the Monte Carlo standard error; with ``realization``, the draws of one hazard
    realization are a cluster (they share its curve), as for the run's headline figures."""
    s, se = weighted_summary(values, weights)
    if realization is not None:
        from ..risk.standard_errors import clustered_standard_error

        se = clustered_standard_error(values, weights, realization)
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
            models[fy][a.name] = plan_model(
                scenario,
                [a.override, settings.future, a.future_override],
                prefix=f"alternatives[{a.index}].future",
                **fac,
            )
    ev = evaluate_plans(scenario, models, ensembles, workers=workers)
    risks, w, rz = ev["risks"], ev["weights"], ev["realization"]
    equivalent, equivalent_mode = {}, {}
    for plan, rs in risks.items():
        equivalent[plan] = {n: _annualize(np.stack([r.values[n] for r in rs], axis=-1), settings) for n in MEASURES}
        equivalent_mode[plan] = {n: float(_annualize(np.array([r.mode[n] for r in rs]), settings)) for n in MEASURES}
    lines, all_lines = _guideline_lines(scenario), _all_lines(scenario)
    conditions = _conditions(settings)
    base_eq, base_mode = equivalent[BASE_NAME], equivalent_mode[BASE_NAME]
    # life loss is never discounted: its mean over the years of the period (linear between condition years)
    plain = {
        plan: {n: _period_mean(np.stack([r.values[n] for r in rs], axis=-1), settings) for n in ("all",)}
        for plan, rs in risks.items()
    }
    plain_mode = {
        plan: {n: float(_period_mean(np.array([r.mode[n] for r in rs]), settings)) for n in ("all",)}
        for plan, rs in risks.items()
    }
    economics, figures, notes = {}, {}, []
    base_sig = risks[BASE_NAME][0].signature
    for a in alts:
        eq, mo = equivalent[a.name], equivalent_mode[a.name]
        cost = float(
            ec.annualized_cost(a.first_cost, a.annual_om, settings.rate, settings.period_years, a.construction_months)
        )
        idc = float(ec.interest_during_construction(a.first_cost, settings.rate, a.construction_months))
        if cost <= 0:
            raise InputError(
                "the alternative costs nothing; expected first_cost or annual_om above 0",
                scenario.path,
                key=f"alternatives[{a.index}].first_cost",
            )
        res = ec.benefit_figures(base_eq["ead"], eq["ead"], cost, base_eq["all"], eq["all"])
        economics[a.name] = res
        mean_b = float(w @ res.expected_annual_benefit)
        mean_dall = float(w @ res.life_loss_reduction)
        mean_dafp = float(w @ (base_eq["afp"] - eq["afp"]))
        head = ec.benefit_figures(
            float(w @ base_eq["ead"]), float(w @ eq["ead"]), cost, float(w @ base_eq["all"]), float(w @ eq["all"])
        )
        mode_res = ec.benefit_figures(base_mode["ead"], mo["ead"], cost, base_mode["all"], mo["all"])
        mode_b = float(mode_res.expected_annual_benefit)
        paired = all(r.signature == base_sig for r in risks[a.name])
        if not paired:
            notes.append(
                f"{a.name}: its knowledge-uncertainty structure differs from the base's, so its response "
                "draws are not paired with the base's (the hazard realizations are); the benefit's "
                "percentiles are wider than with paired draws, its mean is unaffected"
            )
        by = risks[a.name][0]
        d_all = plain[BASE_NAME]["all"] - plain[a.name]["all"]
        mean_d_all = float(w @ d_all)
        mode_d_all = plain_mode[BASE_NAME]["all"] - plain_mode[a.name]["all"]
        net_cost = {
            "predictive": float(ec.net_cost_per_life_saved(cost, mean_b, mean_d_all)),
            "mode": float(ec.net_cost_per_life_saved(cost, mode_b, mode_d_all)),
        }
        years = [
            condition_year_figures(r, w, all_lines, base=b, condition=cnd, realization=rz)
            for r, b, cnd in zip(risks[a.name], risks[BASE_NAME], conditions)
        ]
        figures[a.name] = {
            "description": a.description,
            "costs": {
                "first_cost": a.first_cost,
                "annual_om_per_yr": a.annual_om,
                "construction_months": a.construction_months,
                "interest_during_construction": idc,
                "investment_cost": a.first_cost + idc,
                "annualized_cost_per_yr": cost,
            },
            "expected_annual_damage_per_yr": {
                "predictive": float(w @ eq["ead"]),
                "mode": mo["ead"],
                "ensemble": _stats(eq["ead"], w, rz),
            },
            "expected_annual_benefit_per_yr": {
                "predictive": mean_b,
                "mode": mode_b,
                "ratio_predictive_to_mode": _ratio(mean_b, mode_b),
                "ensemble": _stats(res.expected_annual_benefit, w, rz),
            },
            "net_benefit_per_yr": {
                "predictive": mean_b - cost,
                "mode": mode_b - cost,
                "ensemble": _stats(res.net_benefit, w, rz),
            },
            "benefit_cost_ratio": {
                "predictive": float(head.benefit_cost_ratio),
                "mode": float(mode_res.benefit_cost_ratio),
                "ensemble": _stats(res.benefit_cost_ratio, w, rz),
            },
            "afp_reduction_per_yr": {
                "predictive": mean_dafp,
                "mode": base_mode["afp"] - mo["afp"],
                "ensemble": _stats(base_eq["afp"] - eq["afp"], w, rz),
            },
            "all_reduction_lives_per_yr": {
                "predictive": mean_dall,
                "mode": float(mode_res.life_loss_reduction),
                "ensemble": _stats(res.life_loss_reduction, w, rz),
            },
            "cost_per_statistical_life_saved": {
                "predictive": float(head.cost_per_life_saved),
                "mode": float(mode_res.cost_per_life_saved),
            },
            "base_year": {
                "afp_per_yr": float(w @ by.values["afp"]),
                "ead_per_yr": float(w @ by.values["ead"]),
                "all_lives_per_yr": float(w @ by.values["all"]),
            },
            "fn_point": _fn_point(float(w @ by.values["afp"]), float(w @ by.values["all_incremental"]), lines),
            "response_draws_paired": paired,
            # added: risk per condition year (not discounted), the undiscounted life-loss reduction and the net
            # cost per statistical life saved on it
            "condition_years": years,
            "all_reduction_lives_per_yr_undiscounted": {
                "predictive": mean_d_all,
                "mode": mode_d_all,
                "ensemble": _stats(d_all, w, rz),
            },
            "net_cost_per_statistical_life_saved": net_cost,
        }
    pred_order = sorted(figures, key=lambda n: -figures[n]["net_benefit_per_yr"]["predictive"])
    mode_order = sorted(figures, key=lambda n: -figures[n]["net_benefit_per_yr"]["mode"])
    ranking = {
        "by": "net benefit",
        "economic_only": True,
        "note": "the ranking is economic only (net benefit); it does not rank life safety: read each plan's "
        "position against the reference lines per condition year (condition_years)",
        "predictive": pred_order,
        "mode": mode_order,
        "changes_between_predictive_and_mode": pred_order != mode_order,
        "top_changes": pred_order[0] != mode_order[0],
        "justified_predictive": [n for n in pred_order if figures[n]["net_benefit_per_yr"]["predictive"] > 0],
        "justified_mode": [n for n in mode_order if figures[n]["net_benefit_per_yr"]["mode"] > 0],
    }
    if ev["draws_per_realization"] > 1:
        notes.append(
            f"{ev['draws_per_realization']} response draws per realization; plans without knowledge "
            "uncertainty repeat their realization's value over its draws (exact)"
        )
    notes.append(
        "all plans use one grid, the same hazard realizations and the same seed and chunking; the "
        "grid holds every plan's breakpoints, so the without-project figures can differ from a single "
        "`riskcalc run` in the last digits"
    )
    return Comparison(
        scenario=scenario,
        settings=settings,
        alternatives=alts,
        weights=w,
        realization=ev["realization"],
        risks=risks,
        equivalent=equivalent,
        equivalent_mode=equivalent_mode,
        economics=economics,
        figures=figures,
        ranking=ranking,
        notes=notes,
        draws_per_realization=ev["draws_per_realization"],
        grids=ev["grids"],
    )
