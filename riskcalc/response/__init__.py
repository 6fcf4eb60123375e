"""Response: rating curve (discharge to stage), fragility curves and failure modes."""

from .fragility import (FRAGILITY_KINDS, FailureMode, FragilityCurve, combine_independent, read_fragility_table,
                        unimodal_bounds)
from .rating import EXTRAPOLATION_RULES, RatingCurve, StageSpread, gauss_hermite_normal, read_rating_table

__all__ = ["RatingCurve", "StageSpread", "read_rating_table", "gauss_hermite_normal", "EXTRAPOLATION_RULES",
           "FragilityCurve", "FailureMode", "combine_independent", "unimodal_bounds", "read_fragility_table",
           "FRAGILITY_KINDS"]
