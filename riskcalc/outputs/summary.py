"""The summary.json structure of a run, read from its typed records (documented keys; add, don't rename)."""

from __future__ import annotations

from ..io import to_plain
from ..risk.records import HEADLINES
from .labels import CAUTION

__all__ = ["summary_dict"]


def summary_dict(result) -> dict:
    """Every headline figure and check of a :class:`~riskcalc.risk.records.RiskResult` as plain JSON values."""
    r = result
    overall = r.overall
    out = {k: h.as_dict() for k, h in overall.items()}
    out["mode_understatement"] = {k: overall[k].ratio_predictive_to_mode for k, _, _ in HEADLINES}
    out["mode_understatement"]["crest_check"] = r.crest.as_dict()
    out["mode_understatement"]["crest_stage_check"] = None if r.crest_stage is None else r.crest_stage.as_dict()
    vp, vm, vmed = (
        (r.values_predictive, r.values_mode, r.values_median)
        if r.study is None
        else (r.study.predictive, r.study.mode, r.study.median_curve)
    )
    out["incremental"] = {
        k: {"predictive": vp[n], "mode": vm[n], "median_curve": vmed[n]}
        for k, n in (("expected_annual_damage", "ead_incremental"), ("annualized_life_loss", "all_incremental"))
    }
    chain = r.scenario.model
    out["failure_modes"] = {}
    for name in chain.failure_mode_names:
        n = f"afp_fm:{name}"
        a = f"afp_fm_adjusted:{name}"
        out["failure_modes"][name] = {
            "predictive": r.values_predictive[n],
            "mode": r.values_mode[n],
            "predictive_common_cause_adjusted": r.values_predictive[a],
            "mode_common_cause_adjusted": r.values_mode[a],
        }
    out["annual_failure_probability_bounds"] = {
        "lower_fully_dependent": r.values_predictive["afp_lower_bound"],
        "upper_independent": r.values_predictive["afp"],
        "independent": r.values_predictive["afp"],
        "upper_series": r.values_predictive["afp_upper_bound"],
        "assumption": "the system value 1 - prod(1 - P_i) assumes failure modes independent given the stage; "
        "any dependence gives a value between max P_i and min(1, sum P_i)",
        "common_cause_adjustment": "proportional: P_f P_i / sum_j P_j, so the adjusted failure-mode values add "
        "up to the system value",
    }
    if r.study is not None:
        out["annual_failure_probability_bounds"]["applies_to"] = (
            "the flood loading (the total over loadings: total.annual_failure_probability_combination)"
        )
    if r.study is not None:
        out["loadings"] = {ld.name: _loading_dict(ld) for ld in r.study.loadings}
        out["total"] = {
            "annual_failure_probability_combination": r.study.afp_combination,
            "breakdown": r.study.breakdown(),
            "note": "headline figures above are totals over the loadings; 'failure_modes', 'crest_check', "
            "'ensemble_size', 'truncation' and 'extrapolation' describe the flood loading",
        }
    out["exposure"] = _exposure(r.scenario.model.consequences)
    out["individual_risk"] = [x.as_dict() for x in r.individual_risk] if r.individual_risk else None
    out["ensemble_size"] = r.ensemble_size.as_dict()
    from ..decision.reference_checks import reference_checks

    out["reference_lines"] = reference_checks(r)
    if r.extras.get("grid_error") is not None:  # the grid's discretization error beside the Monte Carlo error
        out["grid_error"] = r.extras["grid_error"].as_dict()
    out["truncation"] = r.truncation.as_dict()
    out["extrapolation"] = r.extrapolation.as_dict()
    out["sensitivity"] = r.sensitivity
    out["warnings"] = list(r.warnings)
    out["notes"] = list(r.notes)
    out["provenance"] = r.provenance
    out["title"] = r.scenario.title
    out["description"] = r.scenario.description
    out["units"] = r.scenario.units
    out["caution"] = CAUTION
    return to_plain(out)


def _loading_dict(ld) -> dict:
    """One loading's figures: headline records, failure modes and notes."""
    d = {"kind": ld.kind, "has_hazard_ensemble": ld.has_hazard_ensemble}
    d.update({k: h.as_dict() for k, h in ld.headline().items()})
    d["failure_modes"] = {
        m: {
            "predictive": ld.predictive[f"afp_fm:{m}"],
            "mode": ld.mode[f"afp_fm:{m}"],
            "predictive_common_cause_adjusted": ld.predictive[f"afp_fm_adjusted:{m}"],
            "mode_common_cause_adjusted": ld.mode[f"afp_fm_adjusted:{m}"],
        }
        for m in ld.failure_mode_names
    }
    return d


def _exposure(cons):
    """The exposure scenarios of the consequences (None when there is only one)."""
    if cons.exposure_weights is None:
        return None
    return [{"name": n, "weight": float(w)} for n, w in zip(cons.exposure_names, cons.exposure_weights)]
