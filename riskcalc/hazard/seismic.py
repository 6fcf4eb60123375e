"""Seismic hazard curves and the reservoir level at the time of an earthquake.

Seismic hazard is delivered as curves of the annual frequency of exceedance
λ(a) of a ground-motion measure a (peak ground acceleration in g, a spectral
acceleration), one curve per logic-tree branch or fractile, each with a weight.
A :class:`SeismicHazard` holds them on the table's ground-motion levels and
interpolates each curve linearly in log λ against log a (a power law between
table points, the usual local form of a hazard curve, Cornell et al. 2002).

The reservoir level when the earthquake strikes is random: a pool-duration
table gives the fraction of time each level is exceeded. :class:`PoolLevels`
splits it into bins of equal probability and represents each by its median
level.

Table formats (invented names, units in the column names):

* hazard curves: the ground-motion column ``<measure>_<unit>`` (e.g. ``pga_g``)
  increasing, then one column per curve with positive, non-increasing annual
  frequencies of exceedance; the scenario gives each curve column's weight;
* pool duration: ``stage_<unit>`` increasing and ``fraction_exceeded`` strictly
  decreasing from 1 (first row: always exceeded) to 0 (last row: never).

References
----------
.. [1] Cornell, C.A., Jalayer, F., Hamburger, R.O. and Foutch, D.A. (2002).
   Probabilistic basis for 2000 SAC Federal Emergency Management Agency steel
   moment frame guidelines. Journal of Structural Engineering 128(4), 526-533.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..io import read_table

__all__ = ["SeismicHazard", "read_seismic_hazard", "PoolLevels", "read_pool_duration", "fixed_pool"]


@dataclass(frozen=True, eq=False)
class SeismicHazard:
    """An ensemble of seismic hazard curves with weights.

    Attributes
    ----------
    measure : str
        The ground-motion column's name, e.g. ``pga_g``.
    levels : ndarray (M,)
        Ground-motion levels, increasing and positive.
    frequency : ndarray (R, M)
        Annual frequency of exceedance of every curve at the levels [1/yr].
    weights : ndarray (R,)
    names : tuple of str
    mode_index : int
        The most likely curve (largest weight, or the one the scenario names).
    source : str
    """

    measure: str
    levels: np.ndarray
    frequency: np.ndarray
    weights: np.ndarray
    names: tuple
    mode_index: int
    source: str = ""

    @property
    def size(self) -> int:
        return int(self.weights.size)

    def frequency_at(self, a, rows=None) -> np.ndarray:
        """λ_r(a) of the curves (all, or ``rows``) at levels ``a``: (R, len(a)); log-log interpolation.

        Beyond the table the end segments' power laws are extended (the curves must be tabulated over
        the range that matters; the loading's results report the frequency above the table).
        """
        x = np.log(np.asarray(a, float))
        lx = np.log(self.levels)
        ly = np.log(self.frequency if rows is None else self.frequency[rows])
        j = np.clip(np.searchsorted(lx, x) - 1, 0, lx.size - 2)
        t = (x - lx[j]) / (lx[j + 1] - lx[j])
        return np.exp(ly[:, j] + t * (ly[:, j + 1] - ly[:, j]))

    def grid(self, points: int) -> np.ndarray:
        """A log-spaced ground-motion grid over the table's range."""
        return np.geomspace(self.levels[0], self.levels[-1], int(points))


def read_seismic_hazard(path, weights: dict, mode: str = "", *, file=None, key="hazard") -> SeismicHazard:
    """Read a table of seismic hazard curves (see the module docstring).

    Raises
    ------
    InputError
        A ground-motion column that does not increase or is not positive, a frequency that is not
        positive or rises with ground motion, a curve column without weight or a weight without column,
        weights that do not add up to 1, a ``mode`` that is not a curve column.
    """
    t = read_table(path, what="seismic hazard table")
    if len(t.columns) < 2:
        raise InputError(
            "expected a ground-motion column (e.g. pga_g) and at least one curve column", t.path, row=t.header_row
        )
    measure = t.columns[0]
    a = t.numbers(measure, what="a ground-motion level > 0")
    for i in range(len(a)):
        if not a[i] > 0:
            raise InputError(f"{a[i]:g} is not a ground-motion level > 0", t.path, row=t.rows[i], column=measure)
        if i and not a[i] > a[i - 1]:
            raise InputError(
                f"{a[i]:g} is not above the previous row's {a[i - 1]:g}; levels must increase",
                t.path,
                row=t.rows[i],
                column=measure,
            )
    if len(a) < 2:
        raise InputError("expected at least two ground-motion levels", t.path, row=t.header_row)
    names = t.columns[1:]
    wl = {str(k).strip().lower(): v for k, v in weights.items()}
    for n in names:
        if n not in wl:
            raise InputError(
                f"curve column '{n}' has no weight in the scenario's hazard.weights", t.path, row=t.header_row, column=n
            )
    for k in wl:
        if k not in names:
            raise InputError(
                f"weight given for '{k}', which is not a column of {t.path.name}", file or t.path, key=f"{key}.weights"
            )
    w = np.array([float(wl[n]) for n in names])
    if abs(w.sum() - 1.0) > 1e-6:
        raise InputError(f"the curve weights add up to {w.sum():.6g}; expected 1", file or t.path, key=f"{key}.weights")
    freq = []
    for n in names:
        f = t.numbers(n, what="an annual frequency of exceedance > 0")
        for i in range(len(f)):
            if not f[i] > 0:
                raise InputError(
                    f"{f[i]:g} is not an annual frequency of exceedance > 0 (tabulate curves only where they are "
                    "positive)",
                    t.path,
                    row=t.rows[i],
                    column=n,
                )
            if i and f[i] > f[i - 1]:
                raise InputError(
                    f"{f[i]:g} rises above the previous row's {f[i - 1]:g}; an exceedance frequency cannot increase",
                    t.path,
                    row=t.rows[i],
                    column=n,
                )
        freq.append(f)
    if mode:
        m = mode.strip().lower()
        if m not in names:
            raise InputError(f"'{mode}' is not a curve column of {t.path.name}", file or t.path, key=f"{key}.mode")
        mi = names.index(m)
    else:
        mi = int(np.argmax(w))
    return SeismicHazard(measure, a, np.array(freq), w / w.sum(), tuple(names), mi, str(t.path))


@dataclass(frozen=True)
class PoolLevels:
    """Reservoir levels at a random time: representative stages and their probabilities."""

    stage: np.ndarray
    probability: np.ndarray


def fixed_pool(stage: float) -> PoolLevels:
    """One reservoir level with probability 1."""
    return PoolLevels(np.array([float(stage)]), np.ones(1))


def read_pool_duration(path, bins: int, stage_unit: str | None = None) -> PoolLevels:
    """Pool levels from a pool-duration table, in ``bins`` bins of equal probability.

    The level is exceeded a fraction f(h) of the time, so its distribution function is 1 − f(h); bin k
    covers non-exceedance probabilities [k/B, (k+1)/B] and is represented by the level at (k + 1/2)/B
    (linear interpolation in the table).

    Raises
    ------
    InputError
        Stages that do not increase, fractions that do not fall strictly, a first fraction other than 1 or a
        last other than 0, a stage unit that is not the scenario's.
    """
    t = read_table(path, what="pool-duration table")
    sc = t.stage_column(what="pool-duration table", stage_unit=stage_unit)
    t.require((sc, "fraction_exceeded"), what="pool-duration table")
    h = t.numbers(sc, what="a reservoir level")
    f = t.numbers("fraction_exceeded", lo=0.0, hi=1.0, what="a fraction of time in [0, 1]")
    for i in range(1, len(h)):
        if not h[i] > h[i - 1]:
            raise InputError(
                f"stage {h[i]:g} is not above the previous row's {h[i - 1]:g}; stages must increase",
                t.path,
                row=t.rows[i],
                column=sc,
            )
        if not f[i] < f[i - 1]:
            raise InputError(
                f"fraction {f[i]:g} is not below the previous row's {f[i - 1]:g}; the fraction of time a level is "
                "exceeded must fall as the level rises",
                t.path,
                row=t.rows[i],
                column="fraction_exceeded",
            )
    if f[0] != 1.0:
        raise InputError(
            f"the first row's fraction is {f[0]:g}; expected 1 (the lowest level is always exceeded)",
            t.path,
            row=t.rows[0],
            column="fraction_exceeded",
        )
    if f[-1] != 0.0:
        raise InputError(
            f"the last row's fraction is {f[-1]:g}; expected 0 (the highest level is never exceeded)",
            t.path,
            row=t.rows[-1],
            column="fraction_exceeded",
        )
    u = (np.arange(int(bins)) + 0.5) / int(bins)
    return PoolLevels(np.interp(u, 1.0 - f, h), np.full(int(bins), 1.0 / int(bins)))
