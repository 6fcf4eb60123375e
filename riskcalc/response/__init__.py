"""Response: rating curve, fragility curves and failure modes, consequences, uncertain inputs, the chain.

Data flow inside the stage: quantity -> stage (:mod:`.rating`) -> failure-mode probabilities and
system P_f (:mod:`.fragility`) -> consequences (:mod:`.consequences`), with knowledge uncertainty
from one registry (:mod:`.uncertain`), evaluated by the one chain (:mod:`.chain`).
"""

from .chain import OUTPUTS, ChainOnPoints, ResponseChain, failure_mode_output
from .consequences import ConsequenceCurves, read_consequence_table
from .fragility import FRAGILITY_KINDS, FailureMode, FragilityCurve, combine_independent, read_fragility_table
from .rating import EXTRAPOLATION_RULES, RatingCurve, StageSpread, gauss_hermite_normal, read_rating_table
from .uncertain import ResponseParameters, UncertainInputs, UncertainParameter

__all__ = [
    "RatingCurve",
    "StageSpread",
    "read_rating_table",
    "gauss_hermite_normal",
    "EXTRAPOLATION_RULES",
    "FragilityCurve",
    "FailureMode",
    "combine_independent",
    "read_fragility_table",
    "FRAGILITY_KINDS",
    "ConsequenceCurves",
    "read_consequence_table",
    "UncertainParameter",
    "UncertainInputs",
    "ResponseParameters",
    "ResponseChain",
    "ChainOnPoints",
    "OUTPUTS",
    "failure_mode_output",
]
