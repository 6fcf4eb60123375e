"""The annual-peak record of a frequency analysis: reading and checking it.

A record is one table of years (``year``, ``peak``, and optionally ``peak_lower`` and
``peak_upper``), and optionally a second table of perception-threshold periods
(``start_year``, ``end_year``, ``threshold``). Units travel in the column names
(``peak_m3s``, ``peak_lower_m3s``, ``threshold_m3s``); every column of a record must
carry the same unit.

Each row of the peaks table is one year of one of two kinds:

* an exact year: ``peak`` given, ``peak_lower`` and ``peak_upper`` blank;
* an interval (censored) year: ``peak`` blank, the peak known only to lie between
  ``peak_lower`` and ``peak_upper`` (a blank lower bound means "no lower bound", a
  blank upper bound "no upper bound": a flood known only to have exceeded a level).

A threshold period says that from ``start_year`` to ``end_year`` (inclusive) every
flood above ``threshold`` is known. A year of the period that has no row in the peaks
table therefore had a peak below the threshold; the period's length (its historical
period) and the number of such years enter the likelihood. A year of the period that
has a row was recorded because its flood exceeded the threshold, so its recorded
peak (or the upper bound of its interval) must lie above the threshold. Years outside
every period and without a row carry no information.

The data types are those of Bulletin 17C [1]_ (systematic peaks, historical peaks,
interval estimates, perception thresholds).

References
----------
.. [1] England, J.F., Cohn, T.A., Faber, B.A., Stedinger, J.R., Thomas, W.O., Veilleux,
   A.G., Kiang, J.E. and Mason, R.R. (2019). Guidelines for Determining Flood Flow
   Frequency, Bulletin 17C. USGS Techniques and Methods 4-B5, version 1.1, ch. 4 and 7.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ...errors import InputError
from ...io import read_table, split_unit

__all__ = ["PeakRecord", "read_record", "read_peaks", "read_thresholds", "make_record", "MIN_VALUES", "QUANTITY_UNITS"]

#: Fewest years with a recorded value (exact or interval) a fit accepts.
MIN_VALUES = 10

#: Unit codes a peak column may carry.
QUANTITY_UNITS = ("m3s", "cfs", "m", "ft")


@dataclass(frozen=True, eq=False)
class PeakRecord:
    """An annual-peak record with its historical information.

    Attributes
    ----------
    years : ndarray (N,) of int
        The year of each exact peak.
    peaks : ndarray (N,)
        Exact annual peaks [unit].
    interval_years : ndarray (M,) of int
    lower, upper : ndarray (M,)
        Bounds of the interval years [unit]; ``-inf`` (or 0 for a positive quantity) when
        there is no lower bound, ``inf`` when there is no upper bound.
    thresholds : ndarray (K,)
        Perception threshold of each period [unit].
    periods : ndarray (K, 2) of int
        First and last year of each period.
    below : ndarray (K,) of int
        Years of each period with no row: their peak was below the threshold.
    unit : str or None
    source : str or None
        The peaks file.
    threshold_source : str or None
        The thresholds file.
    """

    years: np.ndarray
    peaks: np.ndarray
    interval_years: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    lower: np.ndarray = field(default_factory=lambda: np.zeros(0))
    upper: np.ndarray = field(default_factory=lambda: np.zeros(0))
    thresholds: np.ndarray = field(default_factory=lambda: np.zeros(0))
    periods: np.ndarray = field(default_factory=lambda: np.zeros((0, 2), dtype=np.int64))
    below: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    unit: str | None = None
    source: str | None = None
    threshold_source: str | None = None

    @property
    def n_exact(self) -> int:
        return int(self.peaks.size)

    @property
    def n_interval(self) -> int:
        return int(self.lower.size)

    @property
    def n_below(self) -> int:
        return int(self.below.sum())

    @property
    def n_years(self) -> int:
        """Years that carry information: exact, interval and below-threshold years."""
        return self.n_exact + self.n_interval + self.n_below

    @property
    def has_history(self) -> bool:
        return self.n_interval > 0 or self.thresholds.size > 0

    def summary(self) -> dict:
        """The data summary of fit.json."""
        p = self.peaks
        out = {
            "source": None if self.source is None else Path(self.source).name,
            "unit": self.unit,
            "exact_years": self.n_exact,
            "interval_years": self.n_interval,
            "below_threshold_years": self.n_below,
            "years_with_information": self.n_years,
            "first_year": int(min(np.concatenate([self.years, self.interval_years, self.periods.ravel()]))),
            "last_year": int(max(np.concatenate([self.years, self.interval_years, self.periods.ravel()]))),
            "exact_peaks": {
                "min": float(p.min()) if p.size else None,
                "max": float(p.max()) if p.size else None,
                "mean": float(p.mean()) if p.size else None,
                "sd": float(p.std(ddof=1)) if p.size > 1 else None,
            },
            "threshold_periods": [
                {
                    "start_year": int(a),
                    "end_year": int(b),
                    "length_years": int(b - a + 1),
                    "threshold": float(t),
                    "years_below_threshold": int(n),
                }
                for (a, b), t, n in zip(self.periods, self.thresholds, self.below)
            ],
        }
        if self.threshold_source is not None:
            out["thresholds_source"] = Path(self.threshold_source).name
        return out


# ----------------------------------------------------------------------
# Readers
# ----------------------------------------------------------------------
def _unit_column(table, base, path, *, required):
    """The column named ``base`` or ``base_<unit>``; returns (name or None, unit or None)."""
    found = []
    for c in table.columns:
        s = split_unit(c, (base,))
        if s is not None and (s[1] is None or s[1] in QUANTITY_UNITS):
            found.append((c, s[1]))
    if len(found) > 1:
        raise InputError(
            f"columns {', '.join(repr(c) for c, _ in found)} give the same quantity; expected one",
            path,
            row=table.header_row,
        )
    if not found:
        if required:
            raise InputError(
                f"missing the '{base}' column; expected '{base}' (optionally with a unit, e.g. '{base}_m3s')",
                path,
                row=table.header_row,
            )
        return None, None
    return found[0]


def _cells(table, name, path, *, positive, what):
    """A column as floats with NaN for blank cells; text and non-finite values are refused."""
    out = np.full(len(table), np.nan)
    for i, (raw, row) in enumerate(zip(table.text(name), table.rows)):
        raw = raw.strip()
        if raw == "":
            continue
        try:
            v = float(raw)
        except ValueError:
            raise InputError(f"'{raw[:30]}' is not a number; expected {what}", path, row=row, column=name) from None
        if not math.isfinite(v):
            raise InputError(f"'{raw[:30]}' is not finite; expected {what}", path, row=row, column=name)
        if positive and not v > 0:
            raise InputError(
                f"{raw} is not above 0; expected {what} (a log family needs positive peaks)",
                path,
                row=row,
                column=name,
            )
        out[i] = v
    return out


def _years(table, name, path):
    out = np.empty(len(table), dtype=np.int64)
    for i, (raw, row) in enumerate(zip(table.text(name), table.rows)):
        raw = raw.strip()
        if raw == "":
            raise InputError("empty cell; expected a year (a whole number)", path, row=row, column=name)
        try:
            v = float(raw)
        except ValueError:
            raise InputError(
                f"'{raw[:30]}' is not a year; expected a whole number", path, row=row, column=name
            ) from None
        if not math.isfinite(v) or v != round(v):
            raise InputError(f"'{raw[:30]}' is not a year; expected a whole number", path, row=row, column=name)
        out[i] = int(v)
    return out


def _same_unit(units, path, row):
    given = {u for _, u in units if u is not None}
    if len(given) > 1:
        raise InputError(
            "the columns give different units (" + ", ".join(f"{c}: {u}" for c, u in units if u) + "); expected one",
            path,
            row=row,
        )
    return given.pop() if given else None


def read_peaks(path, *, positive: bool = False, sheet=None):
    """Read a peaks table (see the module docstring).

    Parameters
    ----------
    path : path
        CSV or XLSX.
    positive : bool
        Refuse peaks and bounds that are not above 0 (the log families, lp3 and lognormal).

    Returns
    -------
    dict
        ``years``, ``peaks`` (NaN where blank), ``lower``, ``upper`` (NaN where blank),
        ``rows`` (file row numbers), the column names and ``unit``.

    Raises
    ------
    InputError
        Missing or unknown columns, text or non-finite cells, a year given twice, a row
        with both a peak and bounds or with neither, an interval whose lower bound is not
        below its upper bound, non-positive values for a log family.
    """
    path = Path(path)
    table = read_table(path, what="peaks table", sheet=sheet)
    peak, pu = _unit_column(table, "peak", path, required=True)
    lo, lu = _unit_column(table, "peak_lower", path, required=False)
    hi, hu = _unit_column(table, "peak_upper", path, required=False)
    if (lo is None) != (hi is None):
        missing = "peak_lower" if lo is None else "peak_upper"
        raise InputError(
            f"missing column '{missing}': interval years need both peak_lower and peak_upper (a bound may be blank)",
            path,
            row=table.header_row,
        )
    cols = [c for c in (peak, lo, hi) if c is not None]
    table.require(("year", *cols), (), what="peaks table")
    unit = _same_unit([(peak, pu), (lo, lu), (hi, hu)], path, table.header_row)
    years = _years(table, "year", path)
    what = "a peak > 0" if positive else "a finite peak"
    peaks = _cells(table, peak, path, positive=positive, what=what)
    n = len(table)
    if lo is not None:
        # a lower bound of 0 means "no lower bound" and is allowed for a log family
        lower = _cells(table, lo, path, positive=False, what="a lower bound of the peak")
        upper = _cells(table, hi, path, positive=positive, what="an upper bound of the peak > 0" if positive else what)
        if positive:
            for i in np.flatnonzero(lower < 0):
                raise InputError(
                    f"{lower[i]:g} is negative; expected a lower bound >= 0 (0 or blank: no lower bound)",
                    path,
                    row=table.rows[i],
                    column=lo,
                )
    else:
        lower = np.full(n, np.nan)
        upper = np.full(n, np.nan)
    seen: dict = {}
    for i, (y, row) in enumerate(zip(years, table.rows)):
        if y in seen:
            raise InputError(
                f"year {y} appears twice (also row {seen[y]}); expected one row a year", path, row=row, column="year"
            )
        seen[y] = row
        has_peak = not np.isnan(peaks[i])
        has_bound = not (np.isnan(lower[i]) and np.isnan(upper[i]))
        if has_peak and has_bound:
            raise InputError(
                "the row gives both a peak and bounds; expected either an exact peak or an interval "
                "(peak blank, peak_lower and/or peak_upper given)",
                path,
                row=row,
                column=peak,
            )
        if not has_peak and not has_bound:
            raise InputError(
                "empty cell; expected a peak (or, for an interval year, peak_lower and/or peak_upper)",
                path,
                row=row,
                column=peak,
            )
        if has_bound and not np.isnan(lower[i]) and not np.isnan(upper[i]) and not lower[i] < upper[i]:
            raise InputError(
                f"the interval [{lower[i]:g}, {upper[i]:g}] is empty; expected peak_lower below peak_upper",
                path,
                row=row,
                column=hi,
            )
    return {
        "years": years,
        "peaks": peaks,
        "lower": lower,
        "upper": upper,
        "rows": list(table.rows),
        "peak_column": peak,
        "upper_column": hi,
        "unit": unit,
        "path": path,
    }


def read_thresholds(path, *, positive: bool = False, sheet=None) -> dict:
    """Read a table of perception-threshold periods (``start_year``, ``end_year``, ``threshold``).

    Raises
    ------
    InputError
        Missing or unknown columns, text cells, a period that ends before it starts,
        overlapping periods, a non-positive threshold for a log family.
    """
    path = Path(path)
    table = read_table(path, what="thresholds table", sheet=sheet)
    thr, unit = _unit_column(table, "threshold", path, required=True)
    table.require(("start_year", "end_year", thr), (), what="thresholds table")
    a = _years(table, "start_year", path)
    b = _years(table, "end_year", path)
    t = _cells(table, thr, path, positive=positive, what="a threshold > 0" if positive else "a finite threshold")
    for i, row in enumerate(table.rows):
        if np.isnan(t[i]):
            raise InputError("empty cell; expected a threshold", path, row=row, column=thr)
        if b[i] < a[i]:
            raise InputError(f"the period ends in {b[i]}, before it starts in {a[i]}", path, row=row, column="end_year")
    order = np.argsort(a, kind="stable")
    for j, k in zip(order[:-1], order[1:]):
        if a[k] <= b[j]:
            raise InputError(
                f"the period {a[k]}-{b[k]} overlaps the period {a[j]}-{b[j]} (row {table.rows[j]}); "
                "expected one threshold a year",
                path,
                row=table.rows[k],
                column="start_year",
            )
    return {"start": a, "end": b, "threshold": t, "rows": list(table.rows), "column": thr, "unit": unit, "path": path}


def make_record(peaks: dict, thresholds: dict | None = None, *, positive: bool = False) -> PeakRecord:
    """Combine a read peaks table and thresholds table into a :class:`PeakRecord`.

    Raises
    ------
    InputError
        Units that differ between the two tables; a recorded peak (or interval) in a
        threshold period that lies below the period's threshold (a flood recorded
        because it exceeded the threshold cannot be smaller than it); fewer than
        :data:`MIN_VALUES` years with a recorded value.
    """
    path = peaks["path"]
    years, pk, lo, hi = peaks["years"], peaks["peaks"], peaks["lower"], peaks["upper"]
    exact = ~np.isnan(pk)
    unit = peaks["unit"]
    starts = np.zeros(0, dtype=np.int64)
    ends = np.zeros(0, dtype=np.int64)
    thr = np.zeros(0)
    below = np.zeros(0, dtype=np.int64)
    if thresholds is not None:
        tpath = thresholds["path"]
        tu = thresholds["unit"]
        if unit is not None and tu is not None and unit != tu:
            raise InputError(
                f"threshold unit '{tu}' differs from the peaks' unit '{unit}' ({Path(path).name}); expected one unit",
                tpath,
                column=thresholds["column"],
            )
        unit = unit or tu
        starts, ends, thr = thresholds["start"], thresholds["end"], thresholds["threshold"]
        below = np.zeros(starts.size, dtype=np.int64)
        for k in range(starts.size):
            inside = (years >= starts[k]) & (years <= ends[k])
            for i in np.flatnonzero(inside):
                top = pk[i] if exact[i] else hi[i]
                if not np.isnan(top) and top < thr[k]:
                    col = peaks["peak_column"] if exact[i] else peaks["upper_column"]
                    raise InputError(
                        f"{top:g} in {years[i]} is below the perception threshold {thr[k]:g} of "
                        f"{starts[k]}-{ends[k]} ({Path(tpath).name}, row {thresholds['rows'][k]}); a year of a "
                        "threshold period is listed because its flood exceeded the threshold: expected a peak "
                        "at or above it, or a lower threshold",
                        path,
                        row=peaks["rows"][i],
                        column=col,
                    )
            below[k] = int(ends[k] - starts[k] + 1 - inside.sum())
    n_values = int(years.size)
    if n_values < MIN_VALUES:
        raise InputError(
            f"{n_values} years with a recorded peak or interval; expected at least {MIN_VALUES}",
            path,
            column=peaks["peak_column"],
        )
    floor = 0.0 if positive else -np.inf
    lower = np.where(np.isnan(lo), floor, lo)[~exact]
    upper = np.where(np.isnan(hi), np.inf, hi)[~exact]
    return PeakRecord(
        years=years[exact],
        peaks=pk[exact],
        interval_years=years[~exact],
        lower=lower,
        upper=upper,
        thresholds=np.asarray(thr, float),
        periods=np.column_stack([starts, ends]).astype(np.int64) if starts.size else np.zeros((0, 2), np.int64),
        below=below,
        unit=unit,
        source=str(path),
        threshold_source=None if thresholds is None else str(thresholds["path"]),
    )


def read_record(peaks_path, family: str, *, thresholds=None, sheet=None) -> PeakRecord:
    """Read and check a peaks table (and a thresholds table) for a fit of ``family``.

    The log families (lp3, lognormal) refuse peaks, upper bounds and thresholds that are not
    above 0. Every problem is an :class:`~riskcalc.errors.InputError` naming file, row and column.
    """
    positive = str(family).strip().lower() in ("lp3", "lognormal")
    pk = read_peaks(peaks_path, positive=positive, sheet=sheet)
    th = read_thresholds(thresholds, positive=positive) if thresholds else None
    return make_record(pk, th, positive=positive)
