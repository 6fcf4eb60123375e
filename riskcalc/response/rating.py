"""Rating curve: peak discharge to peak stage, with its uncertainty.

The same object carries a levee reach's rating curve and a dam's peak-stage
relation from reservoir routing (inflow peak to peak reservoir stage): both are
monotone discharge-stage tables.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import InputError
from ..io import read_table, split_unit

__all__ = ["RatingCurve", "StageSpread", "read_rating_table", "gauss_hermite_normal", "EXTRAPOLATION_RULES"]

#: ``refuse``: a grid point outside the table is an error; ``extend``: the end segments are
#: extended linearly in log10 discharge, and the outputs flag the AEP mass that lies there.
EXTRAPOLATION_RULES = ("refuse", "extend")


def gauss_hermite_normal(n: int):
    """Nodes and weights for E[f(Z)], Z ~ N(0, 1): Σ_k w_k f(z_k).

    Gauss-Hermite (physicists') nodes x_k scaled to z_k = √2 x_k, weights w_k / √π
    (Abramowitz & Stegun 1964, 25.4.46).
    """
    x, w = np.polynomial.hermite.hermgauss(int(n))
    return np.sqrt(2.0) * x, w / np.sqrt(np.pi)


def pchip_derivatives(x, y) -> np.ndarray:
    """Node derivatives of the monotone piecewise cubic Hermite interpolant (Fritsch & Carlson 1980).

    Interior nodes: 0 where the neighbouring secant slopes differ in sign or one is 0, else their weighted
    harmonic mean with weights 2h_k + h_{k-1} and h_k + 2h_{k-1} (Fritsch & Butland 1984); end nodes: the
    one-sided three-point estimate, set to 0 when its sign differs from the end secant's and limited to
    three times that secant when the secants change sign (the rule of ``scipy.interpolate.PchipInterpolator``,
    which the tests compare with).

    References
    ----------
    .. [1] Fritsch, F.N. and Carlson, R.E. (1980). Monotone piecewise cubic interpolation. SIAM J. Numer.
       Anal. 17(2), 238-246.
    .. [2] Fritsch, F.N. and Butland, J. (1984). A method for constructing local monotone piecewise cubic
       interpolants. SIAM J. Sci. Stat. Comput. 5(2), 300-304.
    """
    x, y = np.asarray(x, float), np.asarray(y, float)
    h = np.diff(x)
    m = np.diff(y) / h
    n = x.size
    if n == 2:
        return np.full(2, m[0])
    d = np.zeros(n)
    w1 = 2 * h[1:] + h[:-1]
    w2 = h[1:] + 2 * h[:-1]
    same = (np.sign(m[:-1]) == np.sign(m[1:])) & (m[:-1] != 0) & (m[1:] != 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        hm = (w1 + w2) / (w1 / m[:-1] + w2 / m[1:])
    d[1:-1] = np.where(same, hm, 0.0)

    def edge(h0, h1, m0, m1):
        e = ((2 * h0 + h1) * m0 - h0 * m1) / (h0 + h1)
        if np.sign(e) != np.sign(m0):
            return 0.0
        if np.sign(m0) != np.sign(m1) and abs(e) > abs(3 * m0):
            return 3 * m0
        return e

    d[0] = edge(h[0], h[1], m[0], m[1])
    d[-1] = edge(h[-1], h[-2], m[-1], m[-2])
    return d


def hermite_cubic(x, y, d, xq) -> np.ndarray:
    """The cubic Hermite interpolant with node values ``y`` and derivatives ``d`` at ``xq`` (inside [x0, xK])."""
    xq = np.asarray(xq, float)
    j = np.clip(np.searchsorted(x, xq, side="right") - 1, 0, x.size - 2)
    h = x[j + 1] - x[j]
    t = (xq - x[j]) / h
    t2, t3 = t * t, t * t * t
    return (
        (2 * t3 - 3 * t2 + 1) * y[j]
        + (t3 - 2 * t2 + t) * h * d[j]
        + (-2 * t3 + 3 * t2) * y[j + 1]
        + (t3 - t2) * h * d[j + 1]
    )


@dataclass(frozen=True, eq=False)
class StageSpread:
    """Standard deviation of stage about the rating curve [stage units], constant or tabulated on discharge."""

    sd: float = 0.0
    discharge: np.ndarray | None = None
    sd_table: np.ndarray | None = None

    def at(self, q) -> np.ndarray:
        q = np.asarray(q, float)
        if self.discharge is None:
            return np.full(q.shape, float(self.sd))
        return np.interp(np.log10(q), np.log10(self.discharge), self.sd_table)

    @property
    def active(self) -> bool:
        return self.discharge is not None or self.sd > 0


@dataclass(frozen=True, eq=False)
class RatingCurve:
    """A monotone discharge-stage relation.

    Parameters
    ----------
    discharge : ndarray (K,)
        Strictly increasing, > 0 [discharge units].
    stage : ndarray (K,)
        Strictly increasing [stage units].
    extrapolation : {"refuse", "extend"}
    source : str, optional

    Notes
    -----
    Stage is interpolated by a shape-preserving (monotone) piecewise cubic in
    log10 discharge (Fritsch & Carlson 1980), so a monotone table gives a
    monotone curve with no overshoot. With ``extrapolation="extend"`` the end
    segments of the table continue linearly in log10 discharge.

    References
    ----------
    .. [1] Fritsch, F.N. and Carlson, R.E. (1980). Monotone piecewise cubic
       interpolation. SIAM J. Numer. Anal. 17(2), 238-246.
    """

    discharge: np.ndarray
    stage: np.ndarray
    extrapolation: str = "extend"
    source: str | None = None
    _lq: np.ndarray = field(init=False, repr=False, compare=False)
    _pchip: Any = field(init=False, repr=False, compare=False)

    def __post_init__(self):
        q, h = np.asarray(self.discharge, float), np.asarray(self.stage, float)
        if q.ndim != 1 or q.size < 2 or q.shape != h.shape:
            raise ValueError("a rating curve needs at least two (discharge, stage) pairs")
        if np.any(q <= 0) or np.any(np.diff(q) <= 0):
            raise ValueError("rating discharges must be positive and strictly increasing")
        if np.any(np.diff(h) <= 0):
            raise ValueError("rating stages must strictly increase with discharge")
        if self.extrapolation not in EXTRAPOLATION_RULES:
            raise ValueError(f"extrapolation '{self.extrapolation}' is not one of {EXTRAPOLATION_RULES}")
        object.__setattr__(self, "_lq", np.log10(q))  # derived, set once
        object.__setattr__(self, "_pchip", None)  # built on first use: scipy.interpolate costs ~0.3 s to import

    def _interpolant(self):
        if self._pchip is None:
            x, y = self._lq, np.asarray(self.stage, float)
            d = pchip_derivatives(x, y)
            object.__setattr__(self, "_pchip", lambda xq: hermite_cubic(x, y, d, xq))
        return self._pchip

    def stage_at(self, q) -> np.ndarray:
        """Stage at discharges ``q`` (any shape). Outside the table: the end segments, linear in log10 q."""
        q = np.asarray(q, float)
        lq = np.log10(q)
        h = self._interpolant()(np.clip(lq, self._lq[0], self._lq[-1]))
        lo, hi = lq < self._lq[0], lq > self._lq[-1]
        if lo.any() or hi.any():
            s0 = (self.stage[1] - self.stage[0]) / (self._lq[1] - self._lq[0])
            s1 = (self.stage[-1] - self.stage[-2]) / (self._lq[-1] - self._lq[-2])
            h = np.where(lo, self.stage[0] + s0 * (lq - self._lq[0]), h)
            h = np.where(hi, self.stage[-1] + s1 * (lq - self._lq[-1]), h)
        return h

    def discharge_at(self, h) -> np.ndarray:
        """Inverse of :meth:`stage_at`: discharge at stages ``h``, by bisection in log10 q (to rounding)."""
        h = np.asarray(h, float)
        s0 = (self.stage[1] - self.stage[0]) / (self._lq[1] - self._lq[0])
        s1 = (self.stage[-1] - self.stage[-2]) / (self._lq[-1] - self._lq[-2])
        # bracket: the table range widened by the end segments' reach
        lo = np.full(h.shape, self._lq[0] - max(0.0, (self.stage[0] - np.min(h, initial=self.stage[0])) / s0) - 1.0)
        hi = np.full(h.shape, self._lq[-1] + max(0.0, (np.max(h, initial=self.stage[-1]) - self.stage[-1]) / s1) + 1.0)
        for _ in range(64):
            mid = 0.5 * (lo + hi)
            below = self.stage_at(10.0**mid) < h
            lo = np.where(below, mid, lo)
            hi = np.where(below, hi, mid)
        return 10.0 ** (0.5 * (lo + hi))

    def check_covers(self, q_lo, q_hi, where=None):
        """Raise :class:`InputError` when ``refuse`` and the grid leaves the table."""
        if self.extrapolation == "refuse" and (
            q_lo < self.discharge[0] * (1 - 1e-12) or q_hi > self.discharge[-1] * (1 + 1e-12)
        ):
            raise InputError(
                f"the rating table covers {self.discharge[0]:g} to {self.discharge[-1]:g} but the hazard grid "
                f'runs from {q_lo:.4g} to {q_hi:.4g}; extend the table or set extrapolation = "extend"',
                self.source,
                key=where,
            )


def read_rating_table(path, *, discharge_unit=None, stage_unit=None, extrapolation="extend", what="rating table"):
    """Read a discharge-stage table: columns ``discharge[_unit]``, ``stage[_unit]``, optional ``stage_sd[_unit]``.

    Returns
    -------
    rating : RatingCurve
    spread : StageSpread or None
        Tabulated natural variability when a ``stage_sd`` column is present.
    """
    table = read_table(path, what=what)
    cols = {}
    for c in table.columns:
        s = split_unit(c, ("stage_sd", "discharge", "stage"))
        if s is None:
            raise InputError(
                f"unknown column '{c}' in the {what}; expected discharge, stage (and optional stage_sd), "
                "each optionally with a unit such as discharge_m3s",
                table.path,
                row=table.header_row,
                column=c,
            )
        name, unit = s
        expected = discharge_unit if name == "discharge" else stage_unit
        if unit is not None and expected is not None and unit != expected:
            raise InputError(
                f"unit '{unit}' does not match the scenario's {name.split('_')[0]} unit '{expected}'",
                table.path,
                row=table.header_row,
                column=c,
            )
        if name in cols:
            raise InputError(f"two {name} columns", table.path, row=table.header_row, column=c)
        cols[name] = c
    for need in ("discharge", "stage"):
        if need not in cols:
            raise InputError(f"missing column '{need}' in the {what}", table.path, row=table.header_row)
    q = table.numbers(cols["discharge"], positive=True, what="a discharge > 0")
    h = table.numbers(cols["stage"])
    if len(q) < 2:
        raise InputError(f"the {what} has one row; expected at least two", table.path, row=table.rows[0])
    for i in range(1, len(q)):
        if not q[i] > q[i - 1]:
            raise InputError(
                f"discharge {q[i]:g} is not above the previous row's {q[i - 1]:g}; the {what} must increase",
                table.path,
                row=table.rows[i],
                column=cols["discharge"],
            )
        if not h[i] > h[i - 1]:
            raise InputError(
                f"stage {h[i]:g} is not above the previous row's {h[i - 1]:g}; the {what} must increase",
                table.path,
                row=table.rows[i],
                column=cols["stage"],
            )
    spread = None
    if "stage_sd" in cols:
        sd = table.numbers(cols["stage_sd"], nonnegative=True, what="a standard deviation >= 0")
        spread = StageSpread(discharge=q, sd_table=sd)
    return RatingCurve(q, h, extrapolation, str(path)), spread
