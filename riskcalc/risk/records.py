"""Typed result records of a risk run: every output reads these fields, nothing re-spells them.

Each record is a frozen dataclass whose field names are the keys of ``summary.json``
(:meth:`as_dict` gives that structure; records can also be read by key, ``record["predictive"]``,
with the same names). :class:`RiskResult` holds them with the propagation and the curves.
"""

from __future__ import annotations

from typing import Any

import dataclasses
from dataclasses import dataclass, field

import numpy as np

from ..io import to_plain

__all__ = [
    "HEADLINES",
    "EnsembleStats",
    "Headline",
    "DesignFloodCheck",
    "CrestCheck",
    "CrestStageCheck",
    "Truncation",
    "Extrapolation",
    "EnsembleSize",
    "FNCurve",
    "RiskResult",
    "weighted_summary",
]

#: Headline outputs: summary key, integrand name, unit kind.
HEADLINES = (
    ("annual_failure_probability", "afp", "per year"),
    ("expected_annual_damage", "ead", "currency per year"),
    ("annualized_life_loss", "all", "lives per year"),
)


class _Record:
    """Read access by field name (``r["predictive"]``) and the plain-JSON structure (:meth:`as_dict`)."""

    def __getitem__(self, key):
        if key not in self._keys():
            raise KeyError(key)
        return getattr(self, key)

    def get(self, key, default=None):
        return getattr(self, key) if key in self._keys() else default

    def __contains__(self, key):
        return key in self._keys()

    def _keys(self):
        return tuple(f.name for f in dataclasses.fields(self) if not f.name.startswith("_"))

    def keys(self):
        return self._keys()

    def as_dict(self) -> dict:
        out = {}
        for k in self._keys():
            v = getattr(self, k)
            out[k] = v.as_dict() if isinstance(v, _Record) else v
        return to_plain(out)


@dataclass(frozen=True)
class EnsembleStats(_Record):
    """Weighted mean and percentiles of a figure over the Monte Carlo draws."""

    mean: float
    p05: float
    p50: float
    p95: float


def weighted_summary(values, weights) -> tuple[EnsembleStats, float]:
    """Weighted mean, 5th / 50th / 95th percentiles, and the standard error of the mean of independent draws.

    The standard error of a self-normalized weighted mean of independent draws is
    sqrt(Σ w_i² (v_i − v̄)²) (equal weights: the usual s / √n, up to the n / (n − 1) factor).
    """
    from ..hazard.curves import weighted_quantile

    v = np.asarray(values, float)
    w = np.asarray(weights, float)
    mean = float(w @ v)
    q = weighted_quantile(v, w, [0.05, 0.5, 0.95])[:, 0]
    se = float(np.sqrt(np.sum((w * (v - mean)) ** 2)))
    return EnsembleStats(mean, float(q[0]), float(q[1]), float(q[2])), se


@dataclass(frozen=True)
class Headline(_Record):
    """One headline figure (AFP, EAD or ALL) on every measure.

    Attributes
    ----------
    predictive : float
        On the predictive hazard, with the sampled response uncertainty (mean over all draws).
    mode, median_curve : float
        On the mode and median curves with the nominal response.
    ensemble : EnsembleStats
        Over the draws.
    mc_standard_error : float
        Monte Carlo standard error of ``predictive``.
    ratio_predictive_to_mode : float
    predictive_nominal_response : float
        On the predictive hazard with the nominal response.
    ratio_hazard_only : float
        ``predictive_nominal_response / mode``: the part of the gap that comes from using one curve.
    """

    predictive: float
    mode: float
    median_curve: float
    ensemble: EnsembleStats
    mc_standard_error: float
    ratio_predictive_to_mode: float
    predictive_nominal_response: float
    ratio_hazard_only: float


@dataclass(frozen=True)
class DesignFloodCheck(_Record):
    """The design flood of one curve (mode or median) read on the predictive curve.

    Attributes
    ----------
    quantity : float
        The curve's design-AEP quantity (discharge or stage) [hazard units]; written under the hazard
        variable's name in ``summary.json``.
    stage : float
        Its stage [stage units].
    aep_on_predictive : float
    return_period_on_predictive_yr : float or None
    chance_in_years_nominal : float
        1 − (1 − design AEP)^n: the chance the curve itself states.
    chance_in_years_predictive : float
        Σ_r w_r [1 − (1 − p_r)^n]: every year shares one unknown curve.
    chance_in_years_predictive_independent_years : float
        1 − (1 − p̄)^n: as if each year drew its own curve; overstates the chance (Jensen).
    """

    quantity_name: str
    quantity: float
    stage: float
    aep_on_predictive: float
    return_period_on_predictive_yr: float | None
    chance_in_years_nominal: float
    chance_in_years_predictive: float
    chance_in_years_predictive_independent_years: float

    def __getitem__(self, key):
        return self.quantity if key == self.quantity_name else super().__getitem__(key)

    def as_dict(self) -> dict:
        d = super().as_dict()
        d.pop("quantity_name")
        d = {self.quantity_name: d.pop("quantity"), **d}
        return d


@dataclass(frozen=True)
class CrestStageCheck(_Record):
    """How often the real crest (or top of levee) is reached, on every measure.

    Attributes
    ----------
    crest_stage : float
        [stage units], from ``[checks] crest_stage``.
    quantity_at_crest : float
        The hazard quantity whose rating stage is the crest [hazard units].
    aep_predictive, aep_mode, aep_median_curve : float
        Annual probability that the peak stage reaches the crest, with the rating's natural variability
        and the nominal response (nominal rating offset).
    ratio_predictive_to_mode : float
    years : int
    chance_in_years_predictive : float
        Σ_r w_r [1 − (1 − p_r)^n] over the realizations' own AEPs of the crest.
    chance_in_years_mode : float
        1 − (1 − p_mode)^n.
    """

    crest_stage: float
    quantity_at_crest: float
    aep_predictive: float
    aep_mode: float
    aep_median_curve: float
    ratio_predictive_to_mode: float
    years: int
    chance_in_years_predictive: float
    chance_in_years_mode: float


@dataclass(frozen=True)
class EnsembleSize(_Record):
    """How many independent realizations the ensemble is worth.

    Attributes
    ----------
    effective_size_from_weights : float
        1 / Σ w_r² (Kish's effective sample size of the weights).
    assumes_independent_members : bool
        True when the ensemble has no MCMC order: the standard errors then treat its members as
        independent draws.
    autocorrelation_time : dict or None
        Integrated autocorrelation time per headline figure (MCMC ensembles).
    effective_size_mcmc : dict or None
        ``effective_size_from_weights / autocorrelation_time`` per headline figure.
    """

    effective_size_from_weights: float
    assumes_independent_members: bool
    autocorrelation_time: dict | None
    effective_size_mcmc: dict | None


@dataclass(frozen=True)
class CrestCheck(_Record):
    """Design floods of the mode and median curves at ``design_aep`` read on the predictive curve."""

    design_aep: float
    years: int
    mode: DesignFloodCheck
    median_curve: DesignFloodCheck


@dataclass(frozen=True)
class Truncation(_Record):
    """Probability mass outside the grid and the risk carried by the tail cell above it."""

    quantity_name: str
    aep_above_grid: float
    aep_below_grid: float
    top_of_grid: float
    bottom_of_grid: float
    share_of_afp_from_tail: float
    tail_contribution: dict

    def as_dict(self) -> dict:
        q = self.quantity_name
        return to_plain(
            {
                "aep_above_grid": self.aep_above_grid,
                "aep_below_grid": self.aep_below_grid,
                f"top_of_grid_{q}": self.top_of_grid,
                f"bottom_of_grid_{q}": self.bottom_of_grid,
                "share_of_afp_from_tail": self.share_of_afp_from_tail,
                "tail_contribution": self.tail_contribution,
            }
        )

    def __getitem__(self, key):
        return self.as_dict()[key]


@dataclass(frozen=True)
class Extrapolation(_Record):
    """Risk carried where a table is extended: above the rating table (stage extrapolated) and above the
    consequence table's last stage (consequences held constant)."""

    rating_table_top: float | None
    aep_beyond_rating_table: float
    share_of_afp_beyond_rating_table: float
    consequence_table_top_stage: float
    share_of_ead_above_consequence_table: float
    share_of_all_above_consequence_table: float


@dataclass(frozen=True, eq=False)
class FNCurve(_Record):
    """F-N curves: annual probability of N or more fatalities at the life-loss ``levels``.

    ``p05``, ``p50``, ``p95`` are percentiles over the realizations (None when not kept).
    """

    levels: np.ndarray
    predictive: np.ndarray
    mode: np.ndarray
    median_curve: np.ndarray
    p05: np.ndarray | None = None
    p50: np.ndarray | None = None
    p95: np.ndarray | None = None

    def _keys(self):
        base = ("levels", "predictive", "mode", "median_curve")
        return base + (("p05", "p50", "p95") if self.p05 is not None else ())


@dataclass(frozen=True, eq=False)
class RiskResult:
    """Everything a risk run computed (:func:`riskcalc.risk.assess.assess`); every output reads it.

    Attributes
    ----------
    scenario : Scenario
    grid : ndarray (Q,)
    curves : HazardCurves
    propagation : Propagation
    cell_aep : ndarray (Q,)
        Representative predictive AEP of each evaluation point.
    values_predictive, values_mode, values_median : dict of str to float
        Every integrand's risk on each measure (keys: the chain's output names).
    headline : dict of str to Headline
        Keyed by the summary keys of :data:`HEADLINES`.
    fn : FNCurve
    crest : CrestCheck
        The design flood of the mode and median curves read on the predictive curve (a hypothetical crest
        set at that flood).
    crest_stage : CrestStageCheck or None
        The real crest, when the scenario gives ``[checks] crest_stage``.
    truncation : Truncation
    extrapolation : Extrapolation
    ensemble_size : EnsembleSize
    contributions : dict
        ``{summary key: {"bands": [(hi, lo)], "values": ndarray}}``, risk by AEP band.
    warnings, notes : list of str
    provenance : dict
    sensitivity : dict or None
    extras : dict
    study : StudyResult or None
        The loadings, their total and breakdown (:mod:`riskcalc.risk.loadings`) when the scenario has
        ``[[loadings]]``; the headline records above are then the flood loading's and :attr:`overall`
        the total.
    individual_risk : tuple of IndividualRisk
    """

    scenario: Any
    grid: np.ndarray
    curves: Any
    propagation: Any
    cell_aep: np.ndarray
    values_predictive: dict
    values_mode: dict
    values_median: dict
    headline: dict
    fn: FNCurve
    crest: CrestCheck
    truncation: Truncation
    extrapolation: Extrapolation
    ensemble_size: EnsembleSize
    contributions: dict
    warnings: list
    notes: list
    provenance: dict
    sensitivity: dict | None = None
    crest_stage: CrestStageCheck | None = None
    extras: dict = field(default_factory=dict)
    study: Any = None
    individual_risk: tuple = ()

    @property
    def overall(self) -> dict:
        """The headline records of the whole study: the total over loadings, or the flood loading's."""
        return self.study.headline if self.study is not None else self.headline

    @property
    def overall_fn(self):
        """The F-N curves of the whole study (total over loadings), or the flood loading's."""
        return self.study.fn if self.study is not None else self.fn

    def tables(self) -> dict:
        """The run's tidy tables as pandas DataFrames, keyed by their file stem under ``tables/``."""
        from ..outputs.tables import run_tables

        return run_tables(self)

    def summary(self) -> dict:
        """The summary.json structure."""
        from ..outputs.summary import summary_dict

        return summary_dict(self)
