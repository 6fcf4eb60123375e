"""Bayesian flood-frequency analysis of an annual-peak record with historical information.

``peaks`` reads and checks the record, ``likelihood`` gives the log-likelihood of exact,
interval and below-threshold years, ``priors`` the priors, ``diagnostics`` split R-hat and
effective sample size, ``sampler`` the seeded ensemble sampler, ``fit`` puts them together
(:func:`fit_peaks`), and ``plotting`` the plotting positions of the figures.
"""

from .fit import CAUTION_FIT, DEFAULT_DRAWS, DEFAULT_SEED, FitResult, fit_from_files, fit_peaks
from .peaks import MIN_VALUES, PeakRecord, make_record, read_peaks, read_record, read_thresholds

__all__ = [
    "CAUTION_FIT",
    "DEFAULT_DRAWS",
    "DEFAULT_SEED",
    "FitResult",
    "fit_peaks",
    "fit_from_files",
    "read_record",
    "MIN_VALUES",
    "PeakRecord",
    "make_record",
    "read_peaks",
    "read_thresholds",
]
