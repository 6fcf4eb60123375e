"""The summary.json structure of a run, read from its typed records (documented keys; add, don't rename)."""

from __future__ import annotations

from ..io import to_plain
from ..risk.records import HEADLINES
from .labels import CAUTION

__all__ = ["summary_dict"]


def summary_dict(result) -> dict:
    """Every headline figure and check of a :class:`~riskcalc.risk.records.RiskResult` as plain JSON values."""
    r = result
    out = {k: h.as_dict() for k, h in r.headline.items()}
    out["mode_understatement"] = {k: r.headline[k].ratio_predictive_to_mode for k, _, _ in HEADLINES}
    out["mode_understatement"]["crest_check"] = r.crest.as_dict()
    out["mode_understatement"]["crest_stage_check"] = None if r.crest_stage is None else r.crest_stage.as_dict()
    out["incremental"] = {
        k: {"predictive": r.values_predictive[n], "mode": r.values_mode[n], "median_curve": r.values_median[n]}
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
