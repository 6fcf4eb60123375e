"""Loadings other than the flood: earthquakes and normal operation, their failure modes and consequences.

A study sums the risk over loadings. The flood loading is the response chain of
:mod:`riskcalc.response.chain`; this module holds the other two.

* **Seismic**: failure modes with lognormal fragility in the ground-motion
  measure a, P_i(a, h) = Φ(ln(a / A_i(h)) / β_i(h)), median A_i and logarithmic
  standard deviation β_i (randomness) constant or tabulated against the pool
  level h; knowledge uncertainty in the median as a lognormal factor
  exp(β_U,i z) (the split of the composite β into randomness β_R and
  uncertainty β_U of Kennedy & Ravindra 1984). Failure modes are independent
  given (a, h): P_f = 1 − Π(1 − P_i).
* **Static** (normal operation): each failure mode has an annual probability
  p_i with a distribution for its knowledge uncertainty; P_f = 1 − Π(1 − p_i).

For both, breach consequences are read at the pool level from the failure
mode's own consequence table (or the loading's, or the scenario's), and there
are no consequences without breach (no flood reaches the valley at normal pool
unless the structure fails).

References
----------
.. [1] Kennedy, R.P. and Ravindra, M.K. (1984). Seismic fragilities for nuclear
   power plant risk studies. Nuclear Engineering and Design 79, 47-68.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import special

from .consequences import ConsequenceCurves

__all__ = ["SeismicFragility", "AnnualProbability", "SeismicLoading", "StaticLoading", "FloodLoading"]


@dataclass(frozen=True, eq=False)
class SeismicFragility:
    """A seismic failure mode: lognormal fragility in ground motion, median and β against pool level.

    Attributes
    ----------
    name : str
    stage : ndarray (S,)
        Pool levels of the median and β (one value: constant).
    median : ndarray (S,)
        Median ground motion A(h) [the hazard's measure].
    beta : ndarray (S,)
        Logarithmic standard deviation β_R(h) (randomness).
    median_log_sd : float
        β_U, knowledge uncertainty of the median (0: none).
    consequences : ConsequenceCurves or None
        Breach consequences of this mode (None: the loading's).
    """

    name: str
    stage: np.ndarray
    median: np.ndarray
    beta: np.ndarray
    median_log_sd: float = 0.0
    consequences: ConsequenceCurves | None = None

    def prob(self, a, h, median_factor=1.0) -> np.ndarray:
        """P(failure | a, h): a (..., J), h broadcastable, median_factor broadcastable."""
        med = np.interp(h, self.stage, self.median) * median_factor
        b = np.interp(h, self.stage, self.beta)
        z = np.log(np.asarray(a, float) / med) / b
        return special.ndtr(z)


@dataclass(frozen=True)
class AnnualProbability:
    """An annual failure probability with its knowledge uncertainty.

    ``fixed`` (value), ``lognormal`` (median, beta; draws above 1 are clipped to 1), ``triangular``
    (low, mode, high) or ``loguniform`` (low, high; nominal the geometric mean).
    """

    distribution: str
    value: float = math.nan
    median: float = math.nan
    beta: float = 0.0
    low: float = math.nan
    mode: float = math.nan
    high: float = math.nan

    @property
    def nominal(self) -> float:
        d = self.distribution
        if d == "fixed":
            return self.value
        if d == "lognormal":
            return self.median
        if d == "triangular":
            return self.mode
        return math.sqrt(self.low * self.high)

    @property
    def uncertain(self) -> bool:
        return self.distribution != "fixed" and not (self.distribution == "lognormal" and self.beta == 0)

    def ppf(self, u) -> np.ndarray:
        """Quantiles at ``u`` in (0, 1)."""
        u = np.asarray(u, float)
        d = self.distribution
        if d == "fixed":
            return np.full(u.shape, self.value)
        if d == "lognormal":
            return np.minimum(self.median * np.exp(self.beta * special.ndtri(u)), 1.0)
        if d == "triangular":
            from scipy import stats

            c = (self.mode - self.low) / (self.high - self.low)
            return stats.triang(c, loc=self.low, scale=self.high - self.low).ppf(u)
        return np.exp(np.log(self.low) + u * (np.log(self.high) - np.log(self.low)))

    def mean(self) -> float:
        """The exact mean (lognormal: median exp(β²/2), before clipping at 1)."""
        d = self.distribution
        if d == "fixed":
            return self.value
        if d == "lognormal":
            return self.median * math.exp(self.beta**2 / 2)
        if d == "triangular":
            return (self.low + self.mode + self.high) / 3
        return (self.high - self.low) / (math.log(self.high) - math.log(self.low))


@dataclass(frozen=True, eq=False)
class StaticFailureMode:
    """A normal-operation failure mode: an annual probability and its breach consequences."""

    name: str
    probability: AnnualProbability
    consequences: ConsequenceCurves | None = None


class _Modes:
    """The failure-mode names of a loading with ``failure_modes``."""

    failure_modes: tuple

    @property
    def failure_mode_names(self) -> tuple:
        return tuple(m.name for m in self.failure_modes)


@dataclass(frozen=True, eq=False)
class SeismicLoading(_Modes):
    """An earthquake loading: hazard curves, pool levels, failure modes and consequences."""

    name: str
    hazard: object  # SeismicHazard
    pool: object  # PoolLevels
    failure_modes: tuple
    consequences: ConsequenceCurves
    points: int = 400
    draws: int = 0
    kind: str = "seismic"


@dataclass(frozen=True, eq=False)
class StaticLoading(_Modes):
    """Normal operation: failure modes with annual probabilities, at pool levels."""

    name: str
    pool: object  # PoolLevels
    failure_modes: tuple
    consequences: ConsequenceCurves
    draws: int = 0
    kind: str = "static"


@dataclass(frozen=True, eq=False)
class FloodLoading:
    """A further flood loading: another scenario file's hazard, response and consequences."""

    name: str
    scenario: Any  # Scenario
    kind: str = "flood"

    @property
    def failure_mode_names(self) -> tuple:
        return self.scenario.model.failure_mode_names
