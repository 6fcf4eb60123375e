"""A whole risk run: scenario in, one result object out.

:func:`assess` chains the stages of the data flow (grid, propagation, summary
curves, risk on the predictive, mode and median curves, F-N, the crest check,
truncation and warnings) and returns a :class:`RiskResult`, which every output
(summary.json, tables, figures, memo) reads; nothing is recomputed for display.
"""

from __future__ import annotations

import datetime as _dt
import platform
from dataclasses import dataclass, field

import numpy as np

from .. import __version__
from ..errors import InputError
from ..hazard.curves import hazard_curves, invert_on_paper, mode_curve, quantity_grid, weighted_quantile
from .integrate import aep_band_contributions, cell_masses, cell_points, chance_in_years, fn_levels
from ..io import sha256
from ..io import to_plain as _plain
from ..outputs.labels import CAUTION as CAUTION_TEXT
from .propagate import Propagation, cell_fn_matrix, default_workers, propagate

__all__ = ["RiskResult", "assess", "HEADLINES", "weighted_summary"]

#: Headline outputs: summary key, integrand name, unit kind.
HEADLINES = (
    ("annual_failure_probability", "afp", "per year"),
    ("expected_annual_damage", "ead", "currency per year"),
    ("annualized_life_loss", "all", "lives per year"),
)

#: Relative Monte Carlo standard error above which the run warns.
REL_SE_WARN = 0.05
#: Share of a headline figure from the tail cell above the grid above which the run warns.
TRUNCATION_WARN = 0.01


def weighted_summary(values, weights):
    """Weighted mean, 5th / 50th / 95th percentiles and the standard error of the mean.

    The standard error of a self-normalized weighted mean is sqrt(Σ w_i² (v_i − v̄)²)
    (equal weights: the usual s / √n, up to the n / (n − 1) factor).
    """
    v = np.asarray(values, float)
    w = np.asarray(weights, float)
    mean = float(w @ v)
    q = weighted_quantile(v, w, [0.05, 0.5, 0.95])[:, 0]
    se = float(np.sqrt(np.sum((w * (v - mean)) ** 2)))
    return {"mean": mean, "p05": float(q[0]), "p50": float(q[1]), "p95": float(q[2])}, se


@dataclass(frozen=True, eq=False)
class RiskResult:
    """Everything a risk run computed. See :func:`assess`."""

    scenario: object
    grid: np.ndarray
    curves: object
    propagation: Propagation
    cell_aep: np.ndarray
    values_predictive: dict
    values_mode: dict
    values_median: dict
    headline: dict
    fn: dict
    crest: dict
    truncation: dict
    extrapolation: dict
    contributions: dict
    warnings: list
    notes: list
    provenance: dict
    sensitivity: dict | None = None
    extras: dict = field(default_factory=dict)

    def tables(self) -> dict:
        """The run's tidy tables as pandas DataFrames, keyed by their file stem under ``tables/``."""
        from ..outputs.tables import (aep_band_table, fn_table, hazard_by_aep, hazard_by_quantity, per_draw_table,
                             response_table)

        q = self.curves.quantity
        return {"per_draw": per_draw_table(self), "fn_curve": fn_table(self),
                f"hazard_by_{q}": hazard_by_quantity(self.curves), "hazard_by_aep": hazard_by_aep(self.curves),
                f"response_by_{self.scenario.ensemble.quantity}": response_table(self),
                "risk_by_aep_band": aep_band_table(self)}

    def summary(self) -> dict:
        """The summary.json structure."""
        out = {k: v for k, v in self.headline.items()}
        out["mode_understatement"] = {k: self.headline[k]["ratio_predictive_to_mode"] for k, _, _ in HEADLINES}
        out["mode_understatement"]["crest_check"] = self.crest
        out["incremental"] = {k: {"predictive": self.values_predictive[n], "mode": self.values_mode[n],
                                  "median_curve": self.values_median[n]}
                              for k, n in (("expected_annual_damage", "ead_incremental"),
                                           ("annualized_life_loss", "all_incremental"))}
        out["failure_modes"] = {n.split(":", 1)[1]: {"predictive": self.values_predictive[n],
                                                     "mode": self.values_mode[n]}
                                for n in self.values_predictive if n.startswith("afp_mode:")}
        out["annual_failure_probability_bounds"] = {
            "lower_fully_dependent": self.values_predictive["afp_lower_bound"],
            "upper_independent": self.values_predictive["afp"]}
        out["truncation"] = self.truncation
        out["extrapolation"] = self.extrapolation
        out["sensitivity"] = self.sensitivity
        out["warnings"] = list(self.warnings)
        out["notes"] = list(self.notes)
        out["provenance"] = self.provenance
        out["title"] = self.scenario.title
        out["description"] = self.scenario.description
        out["units"] = self.scenario.units
        out["caution"] = CAUTION_TEXT
        return _plain(out)


def run_date() -> str:
    """Today's date (ISO), or the date of ``SOURCE_DATE_EPOCH`` when set (the reproducible-builds
    convention), so that outputs can be byte-identical across days."""
    import os

    epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if epoch.isdigit():
        return _dt.datetime.fromtimestamp(int(epoch), _dt.timezone.utc).date().isoformat()
    return _dt.date.today().isoformat()


def _grid_breakpoints(model, variable):
    """Response breakpoints (table stages, fragility medians) as grid quantities."""
    pts = [model.consequences.stage]
    for m in model.modes:
        pts.append(m.stage_points())
    h = np.concatenate(pts) if pts else np.array([])
    if variable == "stage" or model.rating is None:
        return h
    r = model.rating
    inside = (h > r.stage[0]) & (h < r.stage[-1])
    return np.concatenate([r.discharge, r.discharge_at(h[inside])])


def build_grid(ens, models, grid_settings, mode_params=None, points=None):
    """The quantity grid of a run: spans the ensemble and its mode curve, holds every model's breakpoints,
    and is checked against each model's rating table.

    Raises
    ------
    InputError
        When the ensemble spans no range, or a rating table under ``extrapolation = "refuse"`` does not
        cover the grid.
    """
    g = grid_settings
    mode_one, _ = mode_curve(ens, mode_params or None)
    bps = np.concatenate([_grid_breakpoints(m, ens.quantity) for m in models])
    try:
        grid = quantity_grid(ens, g["aep_max"], g["aep_min"], int(points or g["points"]), breakpoints=bps,
                             extra_curves=(mode_one,))
    except ValueError as exc:
        raise InputError(str(exc), ens.source) from None
    for m in models:
        if m.rating is not None:
            m.rating.check_covers(grid[0], grid[-1], where="rating.extrapolation")
    return grid


def assess(scenario, *, workers=None, progress=None, draws_per_realization=None, grid_points=None) -> RiskResult:
    """Run the whole risk chain for a :class:`~riskcalc.scenario.Scenario`.

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
    sc = scenario
    ens, model = sc.ensemble, sc.model
    g = sc.grid
    npts = int(grid_points or g["points"])
    grid = build_grid(ens, (model,), g, sc.mode_params, points=npts)
    log_spacing = ens.log_scale
    rule = g["rule"]
    k = int(draws_per_realization or sc.uncertainty["draws_per_realization"])
    if not model.has_knowledge_uncertainty:
        k = 1
    nw = workers or sc.uncertainty.get("workers") or default_workers()
    pts = cell_points(grid, log_spacing, "midpoint")
    levels = fn_levels(max(1.0, model.max_incremental_life_loss(pts)))
    prop = propagate(ens, model, grid, seed=sc.seed, draws_per_realization=k, rule=rule, log_spacing=log_spacing,
                     workers=nw, fn_levels=levels, progress=progress)
    curves = hazard_curves(ens, grid, level=sc.credible_level, aep_max=g["aep_max"], aep_min=g["aep_min"],
                           mode_params=sc.mode_params or None, predictive=prop.aep_predictive)
    G = prop.integrands
    names = prop.names
    m_pred = prop.masses_predictive
    m_mode = cell_masses(curves.aep_mode)
    m_med = cell_masses(curves.aep_median)
    v_pred_measure = m_pred @ G
    v_mode = dict(zip(names, m_mode @ G))
    v_med = dict(zip(names, m_med @ G))
    if k == 1 and not model.has_knowledge_uncertainty:
        v_pred = dict(zip(names, v_pred_measure))
    else:
        v_pred = dict(zip(names, prop.weights @ prop.values))
    headline = {}
    warnings, notes = [], [curves.mode_note]
    for key, n, _ in HEADLINES:
        ens_stats, se = weighted_summary(prop.column(n), prop.weights)
        pv, mv = v_pred[n], v_mode[n]
        ratio = pv / mv if mv > 0 else (float("inf") if pv > 0 else float("nan"))
        pn = float(v_pred_measure[names.index(n)])
        ratio_h = pn / mv if mv > 0 else (float("inf") if pn > 0 else float("nan"))
        headline[key] = {"predictive": pv, "mode": mv, "median_curve": v_med[n], "ensemble": ens_stats,
                         "mc_standard_error": se, "ratio_predictive_to_mode": ratio,
                         "predictive_nominal_response": pn, "ratio_hazard_only": ratio_h}
        if pv > 0 and se / pv > REL_SE_WARN:
            warnings.append(f"{key.replace('_', ' ')}: the Monte Carlo standard error is {100 * se / pv:.1f} % of "
                            f"the predictive value; the ensemble ({ens.size} realizations) is too small for the "
                            "AEPs that carry this risk")
    ess = 1.0 / float(np.sum(ens.weights ** 2))
    if ess < 200 * (1 - 1e-9):
        warnings.append(f"the ensemble's effective size is {ess:.0f} realizations; percentiles and the predictive "
                        "tail are uncertain below about 200")
    # F-N: nominal response, incremental life loss, natural variability folded in
    pf_cells = G[:, names.index("afp")]
    FN = cell_fn_matrix(model, grid, levels, rule, log_spacing)
    fn = {"levels": levels, "predictive": m_pred @ FN, "mode": m_mode @ FN, "median_curve": m_med @ FN}
    if prop.fn_per_realization is not None:
        fn_q = weighted_quantile(prop.fn_per_realization, ens.weights, [0.05, 0.5, 0.95])
        fn.update(p05=fn_q[0], p50=fn_q[1], p95=fn_q[2])
    # crest check: the design flood of the mode and median curves, read on the predictive curve
    p_d, years = sc.checks["design_aep"], sc.checks["years"]
    crest = {"design_aep": p_d, "years": years}
    for label, curve in (("mode", curves.mode), ("median_curve", curves.median)):
        x = float(curve.quantile(np.array([p_d]))[0, 0])
        p_pred = float(ens.weights @ ens.aep(np.array([x]))[:, 0])
        crest[label] = {ens.quantity: x, "stage": float(model.stage_at(np.array([x]))[0]),
                        "aep_on_predictive": p_pred, "return_period_on_predictive_yr": 1 / p_pred if p_pred > 0 else None,
                        "chance_in_years_nominal": float(chance_in_years(p_d, years)),
                        "chance_in_years_predictive": float(chance_in_years(p_pred, years))}
    # truncation above the grid and mass below it
    tail = {n: float(m_pred[-1] * G[-1, i]) for i, n in enumerate(names)}
    truncation = {"aep_above_grid": float(prop.aep_predictive[-1]), "aep_below_grid": float(1 - prop.aep_predictive[0]),
                  f"top_of_grid_{ens.quantity}": float(grid[-1]), f"bottom_of_grid_{ens.quantity}": float(grid[0]),
                  "share_of_afp_from_tail": tail["afp"] / v_pred_measure[0] if v_pred_measure[0] > 0 else 0.0,
                  "tail_contribution": {"annual_failure_probability": tail["afp"], "expected_annual_damage": tail["ead"],
                                        "annualized_life_loss": tail["all"]}}
    for key, n, _ in HEADLINES:
        tot = v_pred_measure[names.index(n)]
        if tot > 0 and tail[n] / tot > TRUNCATION_WARN:
            warnings.append(f"{100 * tail[n] / tot:.1f} % of the {key.replace('_', ' ')} comes from floods above the "
                            f"grid (AEP {prop.aep_predictive[-1]:.2g}); lower grid.aep_min")
    # extrapolation beyond the rating table
    extrap = {"rating_table_top": None, "aep_beyond_rating_table": 0.0, "share_of_afp_beyond_rating_table": 0.0}
    if model.rating is not None:
        top = model.rating.discharge[-1]
        beyond = pts > top
        extrap["rating_table_top"] = float(top)
        extrap["aep_beyond_rating_table"] = float(m_pred[beyond].sum())
        share = float((m_pred[beyond] * pf_cells[beyond]).sum() / v_pred_measure[0]) if v_pred_measure[0] > 0 else 0.0
        extrap["share_of_afp_beyond_rating_table"] = share
        if extrap["aep_beyond_rating_table"] > 0 and share > 0.01:
            warnings.append(f"{100 * share:.1f} % of the annual failure probability comes from discharges above the "
                            f"rating table ({top:g}), where stage is extrapolated (rating.extrapolation = \"extend\")")
    cell_aep = np.concatenate([np.sqrt(np.maximum(prop.aep_predictive[:-1] * prop.aep_predictive[1:], 0)),
                               prop.aep_predictive[-1:]])
    contributions = {}
    for key, n, _ in HEADLINES:
        labels, c = aep_band_contributions(m_pred, G[:, names.index(n)], cell_aep)
        contributions[key] = {"bands": labels, "values": c}
    if model.has_knowledge_uncertainty:
        notes.append(f"knowledge uncertainty in the response is sampled: {k} draw(s) per realization; the predictive "
                     "figures are the means over all draws, the mode and median curves use the nominal response")
    nom_mean = ens.weights @ prop.nominal_values
    lin = float(np.max(np.abs(nom_mean - v_pred_measure) / np.maximum(np.abs(v_pred_measure), 1e-300)))
    notes.append("linearity: the risk on the predictive masses equals the weighted mean of the per-realization "
                 f"risks (nominal response; largest relative difference {lin:.1e})")
    notes.append("F-N uses the nominal response and the incremental life loss (given breach minus given no "
                 "breach), with natural variability of stage folded in")
    # risk already present at the bottom of the grid: the mass below it is counted as carrying none
    below = float(1 - prop.aep_predictive[0])
    for key, n, _ in HEADLINES:
        tot = v_pred_measure[names.index(n)]
        g0 = G[0, names.index(n)]
        if tot > 0 and g0 > 0.01 * G[:, names.index(n)].max():
            warnings.append(f"the {key.replace('_', ' ')} integrand is already {g0:.3g} at the bottom of the grid, "
                            f"where the response should be inactive; the {below:.2g} of annual peaks below the grid "
                            f"are counted as carrying no risk (up to {100 * below * g0 / tot:.2g} % more); check the "
                            "response tables and the hazard variable, or raise grid.aep_max")
    if np.all(pf_cells > 0.999):
        warnings.append("the system failure probability is above 0.999 over the whole grid: the structure fails "
                        "for every flood considered; check the fragility curves, stage datum and hazard variable")
    # a mode curve far from the ensemble (explicit parameters, say)
    x_mode = float(curves.mode.quantile(np.array([sc.checks["design_aep"]]))[0, 0])
    lo_b, hi_b = (float(invert_on_paper(q, curves.aeps, [sc.checks["design_aep"]], curves.log_scale)[0])
                  for q in (curves.quantity_lower, curves.quantity_upper))
    if not lo_b <= x_mode <= hi_b:
        warnings.append(f"the mode curve's {sc.checks['design_aep']:g}-AEP {ens.quantity} ({x_mode:.4g}) lies outside "
                        f"the ensemble's {round(100 * sc.credible_level)} % band ({lo_b:.4g} to {hi_b:.4g}); check the "
                        "explicit mode parameters")
    provenance = {"riskcalc_version": __version__, "date": run_date(), "seed": sc.seed,
                  "python": platform.python_version(), "scenario": str(sc.path.name),
                  "inputs": dict(sc.file_hashes) or {str(p.name): sha256(p) for p in sc.files},
                  "settings": {"grid_points": int(grid.size), "aep_max": g["aep_max"], "aep_min": g["aep_min"],
                               "rule": rule, "credible_level": sc.credible_level, "draws_per_realization": k,
                               "realizations": ens.size, "family": ens.family, "hazard_variable": ens.quantity,
                               "hermite_nodes": model.hermite_nodes if model.natural is not None else 0}}
    return RiskResult(scenario=sc, grid=grid, curves=curves, propagation=prop, cell_aep=cell_aep,
                      values_predictive=v_pred, values_mode=v_mode, values_median=v_med, headline=headline, fn=fn,
                      crest=crest, truncation=truncation, extrapolation=extrap, contributions=contributions,
                      warnings=warnings, notes=notes, provenance=provenance)
