"""Tidy tables built from result objects; units in the column names."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..io import unit_suffix
from ..response.chain import failure_mode_output

__all__ = ["hazard_by_quantity", "hazard_by_aep"]


def hazard_by_quantity(curves) -> pd.DataFrame:
    """One row a grid quantity: predictive, mode and median AEP and the horizontal band."""
    u = unit_suffix(curves.unit)
    lo, hi = curves.band_names
    # the AEP band at fixed quantity: the upper AEP limit comes from the lower quantity curve
    return pd.DataFrame(
        {
            f"{curves.quantity}{u}": curves.grid,
            "aep_predictive": curves.aep_predictive,
            "aep_mode": curves.aep_mode,
            "aep_median": curves.aep_median,
            f"aep_{lo}": curves.aep_lower,
            f"aep_{hi}": curves.aep_upper,
        }
    )


def hazard_by_aep(curves) -> pd.DataFrame:
    """One row an AEP: predictive, mode and median quantities and the vertical band."""
    lo, hi = curves.band_names
    q, u = curves.quantity, unit_suffix(curves.unit)
    return pd.DataFrame(
        {
            "aep": curves.aeps,
            f"{q}_predictive{u}": curves.quantity_predictive,
            f"{q}_mode{u}": curves.quantity_mode,
            f"{q}_median{u}": curves.quantity_median,
            f"{q}_{lo}{u}": curves.quantity_lower,
            f"{q}_{hi}{u}": curves.quantity_upper,
            "return_period_yr": 1.0 / curves.aeps,
        }
    )


def standard_aep_table(curves, aeps) -> pd.DataFrame:
    """The standard-AEP rows of :func:`hazard_by_aep` (interpolated on probability paper)."""
    from ..hazard.curves import invert_on_paper

    q, u = curves.quantity, unit_suffix(curves.unit)
    lo, hi = curves.band_names
    out = {"aep": np.asarray(aeps, float)}
    out["return_period_yr"] = 1.0 / out["aep"]
    for name, vals in (
        (f"{q}_mode{u}", curves.quantity_mode),
        (f"{q}_median{u}", curves.quantity_median),
        (f"{q}_predictive{u}", curves.quantity_predictive),
        (f"{q}_{lo}{u}", curves.quantity_lower),
        (f"{q}_{hi}{u}", curves.quantity_upper),
    ):
        out[name] = invert_on_paper(vals, curves.aeps, aeps, curves.log_scale)
    return pd.DataFrame(out)


def per_draw_table(result) -> pd.DataFrame:
    """One row a Monte Carlo draw: its realization, weight and risks."""
    prop = result.propagation
    ens = result.scenario.ensemble
    cur = result.scenario.units["currency"]
    labels = np.asarray(ens.labels if ens.labels else [str(i + 1) for i in range(ens.size)], dtype=object)
    cols = {
        "realization": labels[prop.realization],
        "draw": np.tile(np.arange(1, prop.draws_per_realization + 1), ens.size),
        "weight": prop.weights,
    }
    rename = {
        "afp": "afp_per_yr",
        "afp_lower_bound": "afp_lower_bound_per_yr",
        "afp_upper_bound": "afp_upper_bound_per_yr",
        "ead": f"ead_{cur}_per_yr",
        "ead_incremental": f"ead_incremental_{cur}_per_yr",
        "all": "all_lives_per_yr",
        "all_incremental": "all_incremental_lives_per_yr",
    }
    for i, n in enumerate(prop.names):
        fm = n.split(":", 1)[-1].replace(" ", "_")
        key = rename.get(
            n,
            f"afp_per_yr_{fm}"
            if n.startswith("afp_fm:")
            else f"afp_adjusted_per_yr_{fm}"
            if n.startswith("afp_fm_adjusted:")
            else n,
        )
        cols[key] = prop.values[:, i]
    return pd.DataFrame(cols)


def fn_table(result) -> pd.DataFrame:
    """F-N: annual probability of N or more fatalities on each curve (and ensemble percentiles); the total over
    loadings when the scenario has several."""
    fn = result.overall_fn
    out = {
        "life_loss_n": fn["levels"],
        "f_predictive_per_yr": fn["predictive"],
        "f_mode_per_yr": fn["mode"],
        "f_median_curve_per_yr": fn["median_curve"],
    }
    for q in ("p05", "p50", "p95"):
        if q in fn:
            out[f"f_{q}_per_yr"] = fn[q]
    return pd.DataFrame(out)


def response_table(result, n=400) -> pd.DataFrame:
    """Stage, failure probabilities and nominal consequences along the hazard quantity."""
    sc = result.scenario
    chain = sc.model
    x = (
        np.geomspace(result.grid[0], result.grid[-1], n)
        if result.curves.log_scale
        else np.linspace(result.grid[0], result.grid[-1], n)
    )
    v = chain.on(x).curves()
    u, cur = sc.units, sc.units["currency"]
    q = sc.ensemble.quantity
    out = {
        f"{q}_{u['discharge'] if q == 'discharge' else u['stage']}": x,
        "aep_predictive": np.interp(
            np.log(x) if result.curves.log_scale else x,
            np.log(result.grid) if result.curves.log_scale else result.grid,
            result.propagation.aep_predictive,
        ),
    }
    if q == "discharge":
        out[f"stage_{u['stage']}"] = v["stage"]
    for name in chain.failure_mode_names:
        out[f"p_failure_{name.replace(' ', '_')}"] = v[failure_mode_output(name)]
    out["p_failure_system"] = v["afp"]
    out["p_failure_lower_bound"] = v["afp_lower_bound"]
    out["p_failure_upper_bound"] = v["afp_upper_bound"]
    out[f"damage_breach_{cur}"] = v["damage_breach"]
    out[f"damage_no_breach_{cur}"] = v["damage_no_breach"]
    out["life_loss_breach"] = v["life_loss_breach"]
    out["life_loss_no_breach"] = v["life_loss_no_breach"]
    return pd.DataFrame(out)


def aep_band_table(result) -> pd.DataFrame:
    """Contribution of each AEP band (of the predictive curve) to AFP, EAD and ALL."""
    cur = result.scenario.units["currency"]
    bands = result.contributions["annual_failure_probability"]["bands"]
    return pd.DataFrame(
        {
            "aep_upper": [b[0] for b in bands],
            "aep_lower": [b[1] for b in bands],
            "afp_per_yr": result.contributions["annual_failure_probability"]["values"],
            f"ead_{cur}_per_yr": result.contributions["expected_annual_damage"]["values"],
            "all_lives_per_yr": result.contributions["annualized_life_loss"]["values"],
        }
    )


def loading_table(result) -> pd.DataFrame:
    """One row a loading and one a failure mode of each: predictive AFP, EAD, ALL and shares of the total."""
    cur = result.scenario.units["currency"]
    rows = result.study.breakdown()
    df = pd.DataFrame(rows)
    return df.rename(columns={"ead_predictive": f"ead_predictive_{cur}_per_yr"})


def fn_by_loading_table(result) -> pd.DataFrame:
    """F-N of every loading (long format) and of the total."""
    parts = []
    for ld in result.study.loadings:
        parts.append(
            pd.DataFrame(
                {
                    "loading": ld.name,
                    "life_loss_n": ld.fn.levels,
                    "f_predictive_per_yr": ld.fn.predictive,
                    "f_mode_per_yr": ld.fn.mode,
                }
            )
        )
    fn = result.study.fn
    parts.append(
        pd.DataFrame(
            {
                "loading": "total",
                "life_loss_n": fn.levels,
                "f_predictive_per_yr": fn.predictive,
                "f_mode_per_yr": fn.mode,
            }
        )
    )
    return pd.concat(parts, ignore_index=True)


def individual_risk_table(result) -> pd.DataFrame:
    """Individual risk of every location or group: predictive, mode and the 5-95 % of the draws."""
    return pd.DataFrame(
        [
            {
                "group": x.name,
                "exposure": x.exposure,
                "fatality_rate_given_failure": x.fatality_rate,
                "individual_risk_predictive_per_yr": x.predictive,
                "individual_risk_mode_per_yr": x.mode,
                "individual_risk_p05_per_yr": x.p05,
                "individual_risk_p50_per_yr": x.p50,
                "individual_risk_p95_per_yr": x.p95,
                "failure_modes_counted": "; ".join(x.failure_modes),
            }
            for x in result.individual_risk
        ]
    )


def run_tables(result) -> dict:
    """The run's tidy tables, keyed by their file stem under ``tables/``."""
    q = result.curves.quantity
    extra = {}
    if result.study is not None:
        extra["risk_by_loading"] = loading_table(result)
        extra["fn_curve_by_loading"] = fn_by_loading_table(result)
    if result.individual_risk:
        extra["individual_risk"] = individual_risk_table(result)
    return {
        "per_draw": per_draw_table(result),
        "fn_curve": fn_table(result),
        f"hazard_by_{q}": hazard_by_quantity(result.curves),
        "hazard_by_aep": hazard_by_aep(result.curves),
        f"response_by_{result.scenario.ensemble.quantity}": response_table(result),
        "risk_by_aep_band": aep_band_table(result),
        **extra,
    }
