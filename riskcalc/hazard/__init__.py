"""Hazard: frequency families, the ensemble, and its summary curves."""

from .curves import (
    STANDARD_AEPS,
    HazardCurves,
    band_aeps,
    hazard_curves,
    invert_on_paper,
    median_curve,
    mode_curve,
    predictive_aep,
    quantity_grid,
    weighted_quantile,
)
from .ensemble import HazardEnsemble, read_curve_table, read_ensemble, read_parameter_ensemble
from .families import FAMILIES, aep, get_family, quantile

__all__ = [
    "FAMILIES",
    "aep",
    "quantile",
    "get_family",
    "HazardEnsemble",
    "read_ensemble",
    "read_parameter_ensemble",
    "read_curve_table",
    "HazardCurves",
    "hazard_curves",
    "predictive_aep",
    "quantity_grid",
    "weighted_quantile",
    "invert_on_paper",
    "mode_curve",
    "median_curve",
    "band_aeps",
    "STANDARD_AEPS",
]
