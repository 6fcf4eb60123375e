"""Risk integrals on the probability axis.

The quantity grid x_0 < ... < x_J splits the annual peak into cells. Under
realization r the probability that the annual peak falls in cell j is the
interval mass m[r, j] = p_r(x_j) − p_r(x_{j+1}) (j < J), and the tail cell
above the grid has m[r, J] = p_r(x_J). The mass below x_0 carries no risk.
With g_j an integrand evaluated for cell j (at its midpoint, geometric on a log
grid; at x_J for the tail cell), the annualized risk is

    R_r = Σ_j g_j m[r, j]

(AFP: g = P_f; EAD: g = P_f D_breach + (1 − P_f) D_no_breach; ALL likewise
with life loss). Both rules are written as one sum over evaluation points,
``R_r = Σ_p w[r, p] g(x_p)`` (:func:`evaluation_points`, :func:`point_masses`),
so every caller evaluates the chain once per point. Because R_r is linear in the masses, the weighted mean of the
R_r equals the risk on the predictive masses m̄_j = Σ_r w_r m[r, j]: the
predictive (mean) hazard is the integrating measure.

Summing interval probabilities times the consequence at the interval's centre
(or the mean of its ends, ``rule="trapezoid"``) is common practice for EAD on
the probability axis.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "cell_masses",
    "evaluation_points",
    "point_masses",
    "point_aep",
    "fn_levels",
    "chance_in_years",
    "aep_band_contributions",
]


def cell_masses(p) -> np.ndarray:
    """Interval masses from AEPs at the grid nodes: (..., Q) -> (..., Q), the last column the tail above the grid.

    Rounding can make a difference of a monotone curve slightly negative; masses are clipped at 0.
    """
    p = np.asarray(p, float)
    m = np.empty_like(p)
    np.subtract(p[..., :-1], p[..., 1:], out=m[..., :-1])
    m[..., -1] = p[..., -1]
    np.maximum(m, 0.0, out=m)
    return m


def evaluation_points(grid, log_spacing=True, rule="midpoint") -> np.ndarray:
    """Where the integrands are evaluated: (Q,) points for the Q cells' masses (:func:`point_masses`).

    ``midpoint``: the cell centres (geometric on a log grid), then x_J for the tail cell above the grid.
    ``trapezoid``: the grid nodes x_0..x_J; each cell's mass is split between its two ends.
    """
    g = np.asarray(grid, float)
    if rule == "midpoint":
        mid = np.sqrt(g[:-1] * g[1:]) if log_spacing else 0.5 * (g[:-1] + g[1:])
        return np.concatenate([mid, g[-1:]])
    if rule == "trapezoid":
        return g.copy()
    raise ValueError(f"integration rule '{rule}' is not midpoint or trapezoid")


def point_masses(m, rule="midpoint") -> np.ndarray:
    """Masses on the evaluation points from cell masses: (..., Q) -> (..., Q).

    For ``midpoint`` the masses are the cell masses unchanged. For ``trapezoid`` cell j < J gives half
    its mass to each of its ends x_j and x_{j+1}, and the tail cell J its whole mass to x_J, so that
    ``sum_i w_i g(x_i)`` equals ``sum_j m_j (g(lo_j) + g(hi_j)) / 2`` (the trapezoid rule on the
    probability axis, rearranged; the tail cell evaluated at x_J).
    """
    m = np.asarray(m, float)
    if rule == "midpoint":
        return m
    if rule != "trapezoid":
        raise ValueError(f"integration rule '{rule}' is not midpoint or trapezoid")
    w = np.zeros_like(m)
    w[..., :-1] += 0.5 * m[..., :-1]  # lower end of cell j < J
    w[..., 1:] += 0.5 * m[..., :-1]  # upper end of cell j < J
    w[..., -1] += m[..., -1]  # the tail cell, evaluated at x_J
    return w


def point_aep(aep_nodes, rule="midpoint") -> np.ndarray:
    """A representative AEP of each evaluation point from the AEPs at the grid nodes: (Q,) -> (Q,).

    ``midpoint``: the geometric mean of the cell's end AEPs (the tail cell: the AEP at x_J);
    ``trapezoid``: the AEP at the node.
    """
    p = np.asarray(aep_nodes, float)
    if rule == "trapezoid":
        return p.copy()
    return np.concatenate([np.sqrt(np.maximum(p[:-1] * p[1:], 0)), p[-1:]])


def fn_levels(min_n, max_n=None, per_decade=12):
    """Life-loss levels N of an F-N table: log-spaced from the smallest N that occurs to the largest.

    ``fn_levels(max_n)`` (one argument) starts at 1. The levels include 1 when it lies in the range,
    and both ends.
    """
    if max_n is None:
        min_n, max_n = 1.0, min_n
    if not (max_n > 0 and min_n > 0):
        return np.array([1.0])
    min_n = min(min_n, max_n)
    lo = np.floor(np.log10(min_n) * per_decade) / per_decade
    top = np.ceil(np.log10(max_n) * per_decade) / per_decade
    exps = np.arange(lo, top + 1e-9, 1 / per_decade)
    levels = 10**exps
    levels = levels[(levels >= min_n * (1 - 1e-12)) & (levels <= max_n * (1 + 1e-12))]
    extra = [min_n, max_n] + ([1.0] if min_n <= 1.0 <= max_n else [])
    return np.unique(np.concatenate([levels, extra]))


def chance_in_years(aep, years):
    """Chance of at least one exceedance in ``years`` years, 1 − (1 − p)^n, computed as −expm1(n log1p(−p))."""
    return -np.expm1(np.asarray(years, float) * np.log1p(-np.asarray(aep, float)))


def aep_band_contributions(masses, integrand, aep_at_cells, edges=(1.0, 0.1, 0.01, 1e-3, 1e-4, 1e-5, 1e-6, 0.0)):
    """Split Σ_j g_j m_j by the AEP of each cell: returns (labels, contributions)."""
    e = np.asarray(edges, float)
    contrib = np.asarray(masses) * np.asarray(integrand)
    labels, out = [], []
    for hi, lo in zip(e[:-1], e[1:]):
        sel = (aep_at_cells <= hi) & (aep_at_cells > lo) if lo > 0 else (aep_at_cells <= hi)
        labels.append((hi, lo))
        out.append(float(contrib[sel].sum()))
    return labels, np.array(out)
