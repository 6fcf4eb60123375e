"""A whole risk run: scenario in, one :class:`~riskcalc.risk.records.RiskResult` out.

:func:`assess` chains the stages of the data flow, each a small function below:
the grid (:func:`build_grid`), the propagation (:func:`~riskcalc.risk.propagate.propagate`),
the summary curves, the headline figures on the predictive, mode and median curves
(:func:`headline_figures`), the F-N curves (:func:`fn_curves`), the design-flood check
(:func:`crest_check`), truncation and extrapolation (:func:`tail_checks`), the warnings
(:mod:`riskcalc.risk.diagnostics`) and the provenance. Every output reads the result;
nothing is recomputed for display.
"""

from __future__ import annotations

import datetime as _dt
import os
import platform

import numpy as np

from .. import __version__
from ..errors import InputError
from ..hazard.curves import hazard_curves, invert_on_paper, mode_curve, quantity_grid, weighted_quantile
from ..io import sha256
from . import diagnostics as dg
from .integrate import aep_band_contributions, cell_masses, chance_in_years, evaluation_points, fn_levels, point_aep
from .propagate import Propagation, default_workers, propagate
from .standard_errors import clustered_standard_error, ensemble_autocorrelation
from .records import (
    HEADLINES,
    EnsembleSize,
    CrestCheck,
    CrestStageCheck,
    DesignFloodCheck,
    Extrapolation,
    FNCurve,
    Headline,
    RiskResult,
    Truncation,
    weighted_summary,
)

__all__ = ["assess", "build_grid", "run_date", "headline_figures", "fn_curves", "crest_check", "tail_checks"]


def run_date() -> str:
    """Today's date (ISO), or the date of ``SOURCE_DATE_EPOCH`` when set (the reproducible-builds
    convention), so that outputs can be byte-identical across days."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if epoch.isdigit():
        return _dt.datetime.fromtimestamp(int(epoch), _dt.timezone.utc).date().isoformat()
    return _dt.date.today().isoformat()


def _grid_breakpoints(chain, variable):
    """Response breakpoints (table stages, fragility medians) as grid quantities."""
    pts = [chain.consequences.stage] + [m.stage_points() for m in chain.failure_modes]
    h = np.concatenate(pts)
    if variable == "stage" or chain.rating is None:
        return h
    r = chain.rating
    inside = (h > r.stage[0]) & (h < r.stage[-1])
    return np.concatenate([r.discharge, r.discharge_at(h[inside])])


def build_grid(ens, chains, grid_settings, mode_params=None, points=None):
    """The quantity grid of a run: spans the ensemble and its mode curve, holds every chain's breakpoints,
    and is checked against each chain's rating table.

    Raises
    ------
    InputError
        When the ensemble spans no range, or a rating table under ``extrapolation = "refuse"`` does not
        cover the grid.
    """
    g = grid_settings
    if g.get("min_points", 0) > g.get("max_points", np.inf):
        raise InputError(f"{g['max_points']} is below grid.min_points = {g['min_points']}", key="grid.max_points")
    mode_one, _ = mode_curve(ens, mode_params or None)
    bps = np.concatenate([_grid_breakpoints(m, ens.quantity) for m in chains])
    try:
        grid = quantity_grid(
            ens, g["aep_max"], g["aep_min"], int(points or g["points"]), breakpoints=bps, extra_curves=(mode_one,)
        )
    except ValueError as exc:
        raise InputError(str(exc), ens.source) from None
    for m in chains:
        if m.rating is not None:
            m.rating.check_covers(grid[0], grid[-1], where="rating.extrapolation")
    return grid


def _ratio(a, b):
    return a / b if b > 0 else (float("inf") if a > 0 else float("nan"))


def _life_loss_range(on, chain):
    """Smallest and largest incremental life loss the F-N table must cover: the nominal range on the grid,
    widened by the spread of a life-loss factor (its 0.1 % and 99.9 % quantiles)."""
    inc = on.incremental_life_loss()
    pos = inc[inc > 0]
    if pos.size == 0:
        return 1.0, 1.0
    lo, hi = float(pos.min()), float(pos.max())
    for p in chain.uncertain.parameters:
        if p.target == "life_loss_factor":
            lo *= float(p.quantile(1e-3)) / p.nominal
            hi *= float(p.quantile(1 - 1e-3)) / p.nominal
    return max(lo, hi * 1e-6), hi


def headline_figures(prop: Propagation, v_pred: dict, v_mode: dict, v_med: dict, v_nominal: dict) -> dict:
    """The three headline figures on every measure, with their ensemble statistics and standard errors.

    The Monte Carlo standard error treats the draws of one realization as a cluster
    (:func:`~riskcalc.risk.standard_errors.clustered_standard_error`): they share its curve.
    """
    out = {}
    for key, n, _ in HEADLINES:
        stats, _ = weighted_summary(prop.column(n), prop.weights)
        se = clustered_standard_error(prop.column(n), prop.weights, prop.realization)
        pv, mv, pn = v_pred[n], v_mode[n], v_nominal[n]
        out[key] = Headline(
            predictive=pv,
            mode=mv,
            median_curve=v_med[n],
            ensemble=stats,
            mc_standard_error=se,
            ratio_predictive_to_mode=_ratio(pv, mv),
            predictive_nominal_response=pn,
            ratio_hazard_only=_ratio(pn, mv),
        )
    return out


def fn_curves(on, prop: Propagation, levels, m_mode, m_med) -> FNCurve:
    """F-N curves of the incremental life loss, natural variability folded in.

    The predictive F-N is the weighted mean of every draw's F-N, each with its own response and
    consequence parameters, so that its area equals the predictive incremental ALL (the same draws);
    the band is the draws' 5 / 50 / 95 % points. The mode and median curves use the nominal response,
    like their headline figures. When the per-draw table is too large to keep, the predictive F-N falls
    back to the nominal response (and the result says so in a note).
    """
    from .integrate import point_masses

    FN = on.fn_integrand(levels)[0]
    fn = dict(
        levels=levels, mode=point_masses(m_mode, prop.rule) @ FN, median_curve=point_masses(m_med, prop.rule) @ FN
    )
    if prop.fn_per_draw is not None:
        fn["predictive"] = prop.weights @ prop.fn_per_draw
        q = weighted_quantile(prop.fn_per_draw, prop.weights, [0.05, 0.5, 0.95])
        fn.update(p05=q[0], p50=q[1], p95=q[2])
    else:
        fn["predictive"] = prop.point_masses_predictive @ FN
    return FNCurve(**fn)


def n_year_chance(weights, aep_members, years: int) -> float:
    """Chance of at least one exceedance in ``years`` years on the predictive hazard.

    All years share one unknown curve, so the chance is Σ_r w_r [1 − (1 − p_r)^n], the ensemble mean of
    each curve's chance; 1 − (1 − p̄)^n (independent years under the mean AEP) overstates it by
    Jensen's inequality, since 1 − (1 − p)^n is concave in p.
    """
    return float(np.asarray(weights, float) @ chance_in_years(np.asarray(aep_members, float), years))


def ensemble_size(ens, prop: Propagation) -> EnsembleSize:
    """Effective size of the ensemble: from its weights, and from its autocorrelation when it is an ordered
    MCMC sample (per headline figure, on the realizations' nominal-response values)."""
    ess = 1.0 / float(np.sum(ens.weights**2))
    if ens.chain is None:
        return EnsembleSize(
            effective_size_from_weights=ess,
            assumes_independent_members=True,
            autocorrelation_time=None,
            effective_size_mcmc=None,
        )
    tau = {
        key: ensemble_autocorrelation(prop.nominal_values[:, prop.names.index(n)], ens.chain, ens.iteration)
        for key, n, _ in HEADLINES
    }
    return EnsembleSize(
        effective_size_from_weights=ess,
        assumes_independent_members=False,
        autocorrelation_time=tau,
        effective_size_mcmc={k: ess / v for k, v in tau.items()},
    )


def crest_check(ens, chain, curves, design_aep: float, years: int) -> CrestCheck:
    """The design flood of the mode and median curves at ``design_aep``, read on the predictive curve."""
    out = {}
    for label, curve in (("mode", curves.mode), ("median_curve", curves.median)):
        x = float(curve.quantile(np.array([design_aep]))[0, 0])
        members = ens.aep(np.array([x]))[:, 0]
        p = float(ens.weights @ members)
        out[label] = DesignFloodCheck(
            quantity_name=ens.quantity,
            quantity=x,
            stage=float(chain.stage_at(np.array([x]))[0]),
            aep_on_predictive=p,
            return_period_on_predictive_yr=1 / p if p > 0 else None,
            chance_in_years_nominal=float(chance_in_years(design_aep, years)),
            chance_in_years_predictive=n_year_chance(ens.weights, members, years),
            chance_in_years_predictive_independent_years=float(chance_in_years(p, years)),
        )
    return CrestCheck(design_aep=design_aep, years=years, **out)


def crest_stage_check(ens, chain, curves, crest: float, years: int) -> CrestStageCheck:
    """AEP of the peak stage reaching ``crest`` on the predictive, mode and median curves.

    P(h(X) + ε >= crest) = E_ε[p(x(crest − ε))], with x(·) the rating's inverse (the quantity itself for
    a stage hazard), ε the rating's natural variability (Gauss-Hermite, sd taken at the crest's quantity)
    and the nominal response: exact quadrature on the nodes, no grid involved. Every realization's own
    AEP gives the n-year chance Σ_r w_r [1 − (1 − p_r)^n].
    """
    from ..response.rating import gauss_hermite_normal

    c = float(crest) - float(chain.uncertain.nominal(1).stage_offset[0])
    inv = (lambda h: np.asarray(h, float)) if chain.rating is None else chain.rating.discharge_at
    x_c = float(inv(np.array([c]))[0])
    if chain.natural_active:
        z, w = gauss_hermite_normal(chain.hermite_nodes)
        sd = float(chain.natural.at(np.array([max(x_c, 1e-300)]))[0])
        x = inv(c - sd * z)
    else:
        x, w = np.array([x_c]), np.ones(1)
    per_r = ens.aep(x) @ w
    pred = float(ens.weights @ per_r)
    mode = float(curves.mode.aep(x)[0] @ w)
    med = float(curves.median.aep(x)[0] @ w)
    return CrestStageCheck(
        crest_stage=float(crest),
        quantity_at_crest=x_c,
        aep_predictive=pred,
        aep_mode=mode,
        aep_median_curve=med,
        ratio_predictive_to_mode=_ratio(pred, mode),
        years=years,
        chance_in_years_predictive=n_year_chance(ens.weights, per_r, years),
        chance_in_years_mode=float(chance_in_years(mode, years)),
    )


def tail_checks(
    prop: Propagation, chain, grid, quantity: str, totals: dict, stage_unit: str = "", discharge_unit: str = ""
):
    """Truncation above and below the grid, and extrapolation beyond the rating table, with their warnings."""
    names, G = prop.names, prop.integrands
    m_pred = prop.masses_predictive
    tail = {n: float(m_pred[-1] * G[-1, i]) for i, n in enumerate(names)}  # the tail cell, evaluated at x_J
    afp = totals["afp"]
    trunc = Truncation(
        quantity_name=quantity,
        aep_above_grid=float(prop.aep_predictive[-1]),
        aep_below_grid=float(1 - prop.aep_predictive[0]),
        top_of_grid=float(grid[-1]),
        bottom_of_grid=float(grid[0]),
        share_of_afp_from_tail=tail["afp"] / afp if afp > 0 else 0.0,
        tail_contribution={k: tail[n] for k, n, _ in HEADLINES},
    )
    warns = dg.truncation_warnings(tail, totals, trunc.aep_above_grid)
    w = prop.point_masses_predictive
    top, aep_beyond, share = None, 0.0, 0.0
    if chain.rating is not None:
        top = float(chain.rating.discharge[-1])
        beyond = prop.points > top
        share = float((w[beyond] * G[beyond, names.index("afp")]).sum() / afp) if afp > 0 else 0.0
        aep_beyond = float(m_pred[evaluation_points(grid, True, "midpoint") > top].sum())
        warns += dg.extrapolation_warnings(aep_beyond, share, top, discharge_unit)
    # consequences are held constant above the consequence table's last stage
    c_top = float(chain.consequences.stage[-1])
    above = chain.stage_at(prop.points) > c_top
    shares = {}
    for key, n in (("expected_annual_damage", "ead"), ("annualized_life_loss", "all")):
        tot = totals[n]
        shares[key] = float((w[above] * G[above, names.index(n)]).sum() / tot) if tot > 0 else 0.0
    warns += dg.consequence_table_warnings(shares, c_top, stage_unit)
    extrap = Extrapolation(
        rating_table_top=top,
        aep_beyond_rating_table=aep_beyond,
        share_of_afp_beyond_rating_table=share,
        consequence_table_top_stage=c_top,
        share_of_ead_above_consequence_table=shares["expected_annual_damage"],
        share_of_all_above_consequence_table=shares["annualized_life_loss"],
    )
    return trunc, extrap, warns


def _provenance(sc, grid, rule, k, ens, chain) -> dict:
    return {
        "riskcalc_version": __version__,
        "date": run_date(),
        "seed": sc.seed,
        "python": platform.python_version(),
        "scenario": str(sc.path.name),
        "inputs": dict(sc.file_hashes) or {str(p.name): sha256(p) for p in sc.files},
        "settings": {
            "grid_points": int(grid.size),
            "aep_max": sc.grid["aep_max"],
            "aep_min": sc.grid["aep_min"],
            "rule": rule,
            "credible_level": sc.credible_level,
            "draws_per_realization": k,
            "realizations": ens.size,
            "family": ens.family,
            "hazard_variable": ens.quantity,
            "hermite_nodes": chain.hermite_nodes if chain.natural is not None else 0,
        },
    }


def scenario_life_loss_range(sc) -> tuple:
    """The incremental life-loss range of a scenario's flood loading on its grid (for common F-N levels)."""
    ens, chain = sc.ensemble, sc.model
    grid = build_grid(ens, (chain,), sc.grid, sc.mode_params)
    return _life_loss_range(chain.on(evaluation_points(grid, ens.log_scale, "midpoint")), chain)


def _study_levels(sc, own_range) -> np.ndarray:
    """F-N levels covering the life loss of every loading of the study."""
    from .loadings import loading_life_loss_range

    ranges = [own_range]
    for ld in sc.loadings:
        r = scenario_life_loss_range(ld.scenario) if ld.kind == "flood" else loading_life_loss_range(ld, sc.model)
        if r is not None and r[1] > 0:
            ranges.append(r)
    return fn_levels(min(r[0] for r in ranges), max(r[1] for r in ranges))


def _study(sc, res, levels, workers):
    """The other loadings of the study, their total and the individual risks (None, () when there are none)."""
    from .loadings import assess_seismic, assess_static, combine_loadings, individual_risks, loading_from_risk

    results = [loading_from_risk(res, "flood")]
    root = np.random.SeedSequence([int(sc.seed), 0x10AD])
    streams = root.spawn(len(sc.loadings) + 1)
    n = res.propagation.weights.size
    for ld, ss in zip(sc.loadings, streams):
        if ld.kind == "flood":
            sub = assess(ld.scenario, workers=workers, fn_levels_override=levels)
            results.append(loading_from_risk(sub, ld.name))
        elif ld.kind == "seismic":
            results.append(assess_seismic(ld, sc.model, levels, n, ss))
        else:
            results.append(assess_static(ld, sc.model, levels, n, ss))
    study = combine_loadings(results, streams[-1])
    irs = individual_risks(results, study.picks, study.weights, sc.individual_risk) if sc.individual_risk else ()
    return (study if sc.loadings else None), irs


def assess(
    scenario, *, workers=None, progress=None, draws_per_realization=None, grid_points=None, fn_levels_override=None
) -> RiskResult:
    """Run the whole risk chain for a :class:`~riskcalc.config.scenario.Scenario`.

    Parameters
    ----------
    scenario : Scenario
    workers : int, optional
        Threads for the chunked Monte Carlo (results do not depend on it).
    progress : callable, optional
        ``progress(done, total)`` after each chunk.
    draws_per_realization, grid_points : int, optional
        Override the scenario's settings.

    Returns
    -------
    RiskResult
    """
    from . import grid_error as ge

    sc = scenario
    ens, chain = sc.ensemble, sc.model
    nw = workers or sc.uncertainty.get("workers") or default_workers()
    choice, tried = ("given", ()) if grid_points or ge.points_given(sc) else ("adaptive", None)
    if tried is None:
        grid_points, tried = ge.choose_points(sc, workers=nw)
    grid = build_grid(ens, (chain,), sc.grid, sc.mode_params, points=int(grid_points or sc.grid["points"]))
    rule, log_spacing = sc.grid["rule"], ens.log_scale
    k = int(draws_per_realization or sc.uncertainty["draws_per_realization"]) if chain.has_knowledge_uncertainty else 1
    on_mid = chain.on(evaluation_points(grid, log_spacing, "midpoint"))
    if fn_levels_override is not None:
        levels = np.asarray(fn_levels_override, float)
    elif getattr(sc, "loadings", ()):
        levels = _study_levels(sc, _life_loss_range(on_mid, chain))
    else:
        levels = fn_levels(*_life_loss_range(on_mid, chain))
    prop = propagate(
        ens,
        chain,
        grid,
        seed=sc.seed,
        draws_per_realization=k,
        rule=rule,
        log_spacing=log_spacing,
        workers=nw,
        fn_levels=levels,
        progress=progress,
    )
    curves = hazard_curves(
        ens,
        grid,
        level=sc.credible_level,
        aep_max=sc.grid["aep_max"],
        aep_min=sc.grid["aep_min"],
        mode_params=sc.mode_params or None,
        predictive=prop.aep_predictive,
    )
    names = prop.names
    m_mode, m_med = cell_masses(curves.aep_mode), cell_masses(curves.aep_median)
    v_nominal = dict(zip(names, prop.on_measure(prop.masses_predictive)))
    v_mode = dict(zip(names, prop.on_measure(m_mode)))
    v_med = dict(zip(names, prop.on_measure(m_med)))
    v_pred = (
        v_nominal if k == 1 and not chain.has_knowledge_uncertainty else dict(zip(names, prop.weights @ prop.values))
    )
    headline = headline_figures(prop, v_pred, v_mode, v_med, v_nominal)
    on = chain.on(prop.points)
    fn = fn_curves(on, prop, levels, m_mode, m_med)
    crest = crest_check(ens, chain, curves, sc.checks["design_aep"], sc.checks["years"])
    truncation, extrapolation, tail_warnings = tail_checks(
        prop, chain, grid, ens.quantity, v_nominal, sc.units.get("stage", ""), sc.units.get("discharge", "")
    )
    size = ensemble_size(ens, prop)
    grid_err = ge.with_monte_carlo(
        ge.estimate(
            chain,
            grid,
            {"predictive": prop.aep_predictive, "mode": curves.aep_mode, "median_curve": curves.aep_median},
            rule=rule,
            log_spacing=log_spacing,
            seed=sc.seed or 1,
            target=float(sc.grid.get("target_error") or ge.TARGET),
            choice=choice,
            tried=tried,
        ),
        headline,
    )
    crest_stage = None
    if sc.checks.get("crest_stage") is not None:
        crest_stage = crest_stage_check(ens, chain, curves, sc.checks["crest_stage"], sc.checks["years"])
    cell_aep = point_aep(prop.aep_predictive, rule)
    w_pred = prop.point_masses_predictive
    contributions = {}
    for key, n, _ in HEADLINES:
        labels, c = aep_band_contributions(w_pred, prop.integrands[:, names.index(n)], cell_aep)
        contributions[key] = {"bands": labels, "values": c}
    # warnings and notes
    x_mode = float(curves.mode.quantile(np.array([sc.checks["design_aep"]]))[0, 0])
    lo_b, hi_b = (
        float(invert_on_paper(q, curves.aeps, [sc.checks["design_aep"]], curves.log_scale)[0])
        for q in (curves.quantity_lower, curves.quantity_upper)
    )
    warnings = (
        dg.monte_carlo_warnings(headline, ens.size)
        + dg.ensemble_size_warnings(ens.weights)
        + dg.autocorrelation_warnings(size)
        + tail_warnings
        + dg.grid_bottom_warnings(prop.integrands, names, v_nominal, truncation.aep_below_grid)
        + dg.always_failing_warnings(prop.integrands[:, names.index("afp")])
        + dg.mode_outside_band_warnings(
            x_mode, lo_b, hi_b, sc.checks["design_aep"], ens.quantity, sc.credible_level, ens.unit or ""
        )
        + ge.grid_error_warnings(grid_err)
    )
    if getattr(sc, "loadings", ()):  # every warning above is about the flood loading
        warnings = ["flood loading: " + w for w in warnings]
    notes = [curves.mode_note]
    if size.assumes_independent_members:
        notes.append(
            "the Monte Carlo standard errors treat the ensemble's members as independent draws (the "
            "ensemble gives no MCMC chain/iteration order to estimate their autocorrelation); draws of "
            "one realization are treated as a cluster"
        )
    else:
        notes.append(
            "the ensemble is an ordered MCMC sample; integrated autocorrelation time "
            + ", ".join(f"{dg.short(k)} {v:.2f}" for k, v in size.autocorrelation_time.items())
            + " (Sokal 1997)"
        )
    if chain.has_knowledge_uncertainty:
        notes.append(
            f"knowledge uncertainty in the response is sampled: {k} draw(s) per realization; the predictive "
            "figures are the means over all draws, the mode and median curves use the nominal response"
        )
    nom_mean = ens.weights @ prop.nominal_values
    base = np.array([v_nominal[n] for n in names])
    lin = float(np.max(np.abs(nom_mean - base) / np.maximum(np.abs(base), 1e-300)))
    notes.append(
        "linearity: the risk on the predictive masses equals the weighted mean of the per-realization "
        f"risks (nominal response; largest relative difference {lin:.1e})"
    )
    if prop.fn_per_draw is not None:
        notes.append(
            "F-N uses the incremental life loss (given breach minus given no breach) with natural "
            "variability of stage folded in; the predictive F-N and its band include every draw's response "
            "and consequence parameters, the mode and median curves the nominal response"
        )
    else:
        notes.append(
            "F-N uses the incremental life loss with natural variability folded in and the nominal "
            "response: the per-draw F-N table was too large to keep, so the predictive F-N omits the "
            "sampled response uncertainty"
        )
    result = RiskResult(
        scenario=sc,
        grid=grid,
        curves=curves,
        propagation=prop,
        cell_aep=cell_aep,
        values_predictive=v_pred,
        values_mode=v_mode,
        values_median=v_med,
        headline=headline,
        fn=fn,
        crest=crest,
        truncation=truncation,
        extrapolation=extrapolation,
        ensemble_size=size,
        contributions=contributions,
        warnings=warnings,
        notes=notes,
        crest_stage=crest_stage,
        provenance=_provenance(sc, grid, rule, k, ens, chain),
        extras={"grid_error": grid_err},
    )
    if getattr(sc, "loadings", ()) or getattr(sc, "individual_risk", ()):
        import dataclasses

        study, irs = _study(sc, result, levels, nw)
        if study is not None:
            notes = notes + [n for ld in study.loadings for n in ld.notes]
            notes.append(
                "the headline figures are totals over the loadings (flood"
                + "".join(f", {ld.name}" for ld in study.loadings[1:])
                + "), taken as independent; sensitivity indices and alternatives cover the flood loading"
            )
        result = dataclasses.replace(result, study=study, individual_risk=irs, notes=notes)
    return result
