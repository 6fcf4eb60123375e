"""Life loss from population at risk: exposure scenarios and fatality rates from flood severity and warning.

Exposure scenarios
------------------
The people exposed to a breach flood depend on when it happens (day or night,
summer or winter) and on how much warning they get. An :class:`ExposureScenario`
has a weight (its share of the time, or its probability given a failure), a
factor on the population at risk of the consequence tables, and optionally the
warning time and the understanding of the threat that select fatality rates by
Graham's method. The annualized life loss is the weighted sum over scenarios (it
is linear in life loss); the F-N curve keeps the scenarios apart, so that its
tail is the night-time, short-warning one.

Fatality rates (Graham 1999)
----------------------------
Graham's empirical method gives a fatality rate (fatalities / population at
risk) by flood severity (low, medium, high), warning time (none: under 15
minutes; some: 15 to 60 minutes; adequate: more than 60 minutes) and, when there
is warning, the understanding of flood severity (vague or precise), with a
suggested value and a range. :data:`GRAHAM_RATES` holds the table **as recalled
from memory** [from memory; check against DSO-99-06 before relying on it]; a
scenario can replace any entry. Severity is read from the depth times velocity
of the breach flood: low below 4.6 m²/s (50 ft²/s) [from memory], medium at and
above it; high (the flood sweeps the area clean) only where a scenario sets a
threshold for it, since Graham ties it to the destruction seen, not to one number.

For high severity Graham suggests the same rates whatever the warning, applied
to the people who remain in the floodplain after warning; riskcalc applies them
to the population at risk of the table (conservative when people leave).

References
----------
.. [1] Graham, W.J. (1999). A Procedure for Estimating Loss of Life Caused by
   Dam Failure. DSO-99-06, US Bureau of Reclamation, Denver.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = [
    "ExposureScenario",
    "GRAHAM_RATES",
    "SEVERITIES",
    "warning_class",
    "severity_class",
    "graham_rate",
    "graham_rates",
    "LOW_MEDIUM_DV_M2S",
]

#: Severity classes in increasing order.
SEVERITIES = ("low", "medium", "high")

#: Depth x velocity [m²/s] at and above which severity is medium (50 ft²/s) [from memory].
LOW_MEDIUM_DV_M2S = 4.6

#: Graham (1999) fatality rates [from memory]: (severity, warning class, understanding) ->
#: (suggested, low end, high end). Understanding is "any" without warning.
GRAHAM_RATES: dict = {
    ("high", "none", "any"): (0.75, 0.30, 1.00),
    ("high", "some", "vague"): (0.75, 0.30, 1.00),
    ("high", "some", "precise"): (0.75, 0.30, 1.00),
    ("high", "adequate", "vague"): (0.75, 0.30, 1.00),
    ("high", "adequate", "precise"): (0.75, 0.30, 1.00),
    ("medium", "none", "any"): (0.15, 0.03, 0.35),
    ("medium", "some", "vague"): (0.04, 0.01, 0.08),
    ("medium", "some", "precise"): (0.02, 0.005, 0.04),
    ("medium", "adequate", "vague"): (0.03, 0.005, 0.06),
    ("medium", "adequate", "precise"): (0.01, 0.002, 0.02),
    ("low", "none", "any"): (0.01, 0.0, 0.02),
    ("low", "some", "vague"): (0.007, 0.0, 0.015),
    ("low", "some", "precise"): (0.002, 0.0, 0.004),
    ("low", "adequate", "vague"): (0.0003, 0.0, 0.0006),
    ("low", "adequate", "precise"): (0.0002, 0.0, 0.0004),
}


def warning_class(hours: float) -> str:
    """Graham's warning-time class: ``none`` below 0.25 h, ``some`` from 0.25 h to 1 h, ``adequate`` above 1 h."""
    if not hours >= 0:
        raise ValueError(f"warning time {hours} h is not a number >= 0")
    if hours < 0.25:
        return "none"
    return "some" if hours <= 1.0 else "adequate"


def severity_class(depth_velocity, high_from=math.inf, medium_from=LOW_MEDIUM_DV_M2S) -> np.ndarray:
    """Severity index (0 low, 1 medium, 2 high) of each depth x velocity value [m²/s]."""
    dv = np.asarray(depth_velocity, float)
    return np.where(dv >= high_from, 2, np.where(dv >= medium_from, 1, 0))


def graham_rate(severity: str, warning_hours: float, understanding: str = "vague", table=None) -> tuple:
    """Suggested fatality rate and its range (suggested, low, high) for one case of Graham (1999).

    Parameters
    ----------
    severity : {"low", "medium", "high"}
    warning_hours : float
        Warning time before the flood arrives [h].
    understanding : {"vague", "precise"}
        Understanding of flood severity by those warned (ignored without warning).
    table : dict, optional
        Rates replacing :data:`GRAHAM_RATES`.
    """
    if severity not in SEVERITIES:
        raise ValueError(f"severity '{severity}' is not low, medium or high")
    if understanding not in ("vague", "precise"):
        raise ValueError(f"understanding '{understanding}' is not vague or precise")
    w = warning_class(warning_hours)
    key = (severity, w, "any" if w == "none" else understanding)
    return tuple((table or GRAHAM_RATES)[key])


def graham_rates(severity_index, warning_hours, understanding="vague", table=None) -> tuple:
    """Arrays (suggested, low, high) of fatality rates for severity indices (0, 1, 2) at one warning case."""
    idx = np.asarray(severity_index, int)
    rows = np.array([graham_rate(s, warning_hours, understanding, table) for s in SEVERITIES])  # (3, 3)
    return rows[idx, 0], rows[idx, 1], rows[idx, 2]


@dataclass(frozen=True)
class ExposureScenario:
    """One exposure scenario: its weight, population factor and warning.

    Attributes
    ----------
    name : str
    weight : float
        Probability of the scenario given a failure (the weights of a set add up to 1).
    population_factor : float
        Factor on the population at risk (and life loss) of the consequence tables.
    warning_hours : float or None
        Warning time [h], for fatality rates by Graham's method.
    understanding : {"vague", "precise"}
    """

    name: str
    weight: float
    population_factor: float = 1.0
    warning_hours: float | None = None
    understanding: str = "vague"

    def __post_init__(self):
        if not 0 < self.weight <= 1:
            raise ValueError(f"exposure weight {self.weight} is not in (0, 1]")
        if not self.population_factor >= 0:
            raise ValueError(f"population factor {self.population_factor} is negative")
