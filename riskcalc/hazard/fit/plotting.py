"""Plotting positions of an annual-peak record with historical information (for figures only).

Without thresholds the ``n`` recorded values get ``p_i = (i - a) / (n + 1 - 2a)`` by
descending rank i (``a = 0``: Weibull). With threshold periods the positions of Hirsch &
Stedinger [1]_ are used, with the lowest threshold T of all periods: over the ``n`` years of
the record (the years of every threshold period and the other recorded years), the ``e``
values at or above T get ``p_i = (e / n) (i - a) / (e + 1 - 2a)`` and the ``s`` values
below it ``p_j = e / n + (1 - e / n) (j - a) / (s + 1 - 2a)`` [from memory]. An interval
year is placed at its midpoint (geometric for a positive quantity), or at its one finite
bound. Plotting positions are a picture of the data; the fit does not use them.

References
----------
.. [1] Hirsch, R.M. and Stedinger, J.R. (1987). Plotting positions for historical floods and
   their precision. Water Resources Research 23(4), 715-727.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .peaks import PeakRecord

__all__ = ["plotting_positions"]


def _midpoints(lower, upper, positive: bool) -> np.ndarray:
    lo = np.where(np.isfinite(lower) & ((lower > 0) if positive else True), lower, np.nan)
    hi = np.where(np.isfinite(upper), upper, np.nan)
    mid = np.sqrt(lo * hi) if positive else 0.5 * (lo + hi)
    return np.where(np.isnan(mid), np.where(np.isnan(lo), hi, lo), mid)


def plotting_positions(record: PeakRecord, *, a: float = 0.0, positive: bool = True) -> pd.DataFrame:
    """One row a recorded year: ``year``, ``kind`` (``systematic``, ``threshold period``, ``interval``),
    ``value`` (the peak or the interval's plotting value), ``lower``, ``upper`` and ``aep`` (plotting
    position), ordered from the largest value.
    """
    years = np.concatenate([record.years, record.interval_years])
    value = np.concatenate([record.peaks, _midpoints(record.lower, record.upper, positive)])
    lower = np.concatenate([record.peaks, record.lower])
    upper = np.concatenate([record.peaks, record.upper])
    in_period = np.zeros(years.size, dtype=bool)
    for a0, b0 in record.periods:
        in_period |= (years >= a0) & (years <= b0)
    kind = np.where(
        np.arange(years.size) >= record.n_exact, "interval", np.where(in_period, "threshold period", "systematic")
    )
    order = np.argsort(-value, kind="stable")
    years, value, lower, upper, kind = years[order], value[order], lower[order], upper[order], kind[order]
    aep = np.empty(value.size)
    if record.thresholds.size == 0:
        n = value.size
        aep[:] = (np.arange(1, n + 1) - a) / (n + 1 - 2 * a)
    else:
        t = float(record.thresholds.min())
        n = int(value.size + record.below.sum())
        above = value >= t
        e = int(above.sum())
        s = int((~above).sum())
        pe = e / n
        aep[above] = pe * (np.arange(1, e + 1) - a) / (e + 1 - 2 * a)
        aep[~above] = pe + (1 - pe) * (np.arange(1, s + 1) - a) / (s + 1 - 2 * a)
    return pd.DataFrame({"year": years, "kind": kind, "value": value, "lower": lower, "upper": upper, "aep": aep})
