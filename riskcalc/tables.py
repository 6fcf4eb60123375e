"""Tidy tables built from result objects; units in the column names."""

from __future__ import annotations

import numpy as np
import pandas as pd

from .io import unit_suffix

__all__ = ["hazard_by_quantity", "hazard_by_aep"]


def hazard_by_quantity(curves) -> pd.DataFrame:
    """One row a grid quantity: predictive, mode and median AEP and the horizontal band."""
    u = unit_suffix(curves.unit)
    lo, hi = curves.band_names
    # the AEP band at fixed quantity: the upper AEP limit comes from the lower quantity curve
    return pd.DataFrame({
        f"{curves.quantity}{u}": curves.grid,
        "aep_predictive": curves.aep_predictive,
        "aep_mode": curves.aep_mode,
        "aep_median": curves.aep_median,
        f"aep_{lo}": curves.aep_lower,
        f"aep_{hi}": curves.aep_upper,
    })


def hazard_by_aep(curves) -> pd.DataFrame:
    """One row an AEP: predictive, mode and median quantities and the vertical band."""
    lo, hi = curves.band_names
    q, u = curves.quantity, unit_suffix(curves.unit)
    return pd.DataFrame({
        "aep": curves.aeps,
        "return_period_yr": 1.0 / curves.aeps,
        f"{q}_predictive{u}": curves.quantity_predictive,
        f"{q}_mode{u}": curves.quantity_mode,
        f"{q}_median{u}": curves.quantity_median,
        f"{q}_{lo}{u}": curves.quantity_lower,
        f"{q}_{hi}{u}": curves.quantity_upper,
    })


def standard_aep_table(curves, aeps) -> pd.DataFrame:
    """The standard-AEP rows of :func:`hazard_by_aep` (interpolated on probability paper)."""
    from .hazard.curves import invert_on_paper

    q, u = curves.quantity, unit_suffix(curves.unit)
    lo, hi = curves.band_names
    out = {"aep": np.asarray(aeps, float)}
    out["return_period_yr"] = 1.0 / out["aep"]
    for name, vals in ((f"{q}_mode{u}", curves.quantity_mode), (f"{q}_median{u}", curves.quantity_median),
                       (f"{q}_predictive{u}", curves.quantity_predictive), (f"{q}_{lo}{u}", curves.quantity_lower),
                       (f"{q}_{hi}{u}", curves.quantity_upper)):
        out[name] = invert_on_paper(vals, curves.aeps, aeps, curves.log_scale)
    return pd.DataFrame(out)
