"""Risk integrals on the probability axis.

The quantity grid x_0 < ... < x_J splits the annual peak into cells. Under
realization r the probability that the annual peak falls in cell j is the
interval mass m[r, j] = p_r(x_j) − p_r(x_{j+1}) (j < J), and the tail cell
above the grid has m[r, J] = p_r(x_J). The mass below x_0 carries no risk.
With g_j an integrand evaluated for cell j (at its midpoint, geometric on a log
grid; at x_J for the tail cell), the annualized risk is

    R_r = Σ_j g_j m[r, j]

(AFP: g = P_f; EAD: g = P_f D_breach + (1 − P_f) D_no_breach; ALL likewise
with life loss). Because R_r is linear in the masses, the weighted mean of the
R_r equals the risk on the predictive masses m̄_j = Σ_r w_r m[r, j]: the
predictive (mean) hazard is the integrating measure.

Summing interval probabilities times the consequence at the interval's centre
(or the mean of its ends, ``rule="trapezoid"``) is common practice for EAD on
the probability axis.
"""

from __future__ import annotations

import numpy as np

__all__ = ["cell_masses", "cell_points", "risk_integrals", "fn_curve", "fn_levels", "chance_in_years",
           "aep_band_contributions"]


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


def cell_points(grid, log_spacing=True, rule="midpoint"):
    """Where each cell's integrand is evaluated.

    Returns
    -------
    points : ndarray (Q,) for ``midpoint`` (cell centres, then x_J for the tail cell), or
    (lower, upper) : two ndarrays (Q,) for ``trapezoid`` (cell ends; the tail cell uses x_J twice).
    """
    g = np.asarray(grid, float)
    if rule == "midpoint":
        mid = np.sqrt(g[:-1] * g[1:]) if log_spacing else 0.5 * (g[:-1] + g[1:])
        return np.concatenate([mid, g[-1:]])
    if rule == "trapezoid":
        return np.concatenate([g[:-1], g[-1:]]), np.concatenate([g[1:], g[-1:]])
    raise ValueError(f"integration rule '{rule}' is not midpoint or trapezoid")


def risk_integrals(masses, integrands) -> np.ndarray:
    """R = masses @ integrands: (R, Q) x (Q, K) -> (R, K), or (Q,) x (Q, K) -> (K,)."""
    return np.asarray(masses, float) @ np.asarray(integrands, float)


def fn_levels(max_n, per_decade=12):
    """Life-loss levels N for an F-N table: 1 and log-spaced up to ``max_n``."""
    if not max_n >= 1:
        return np.array([1.0])
    top = np.ceil(np.log10(max_n) * per_decade) / per_decade
    return np.unique(np.concatenate([10 ** np.arange(0, top + 1e-9, 1 / per_decade), [max_n]]))


def fn_curve(masses, pf, life_loss, levels) -> np.ndarray:
    """Annual probability of N or more fatalities, F(N) = Σ_j P_f,j m_j 1[L_j >= N].

    Parameters
    ----------
    masses : ndarray (Q,) or (R, Q)
    pf : ndarray (Q,)
        System failure probability of each cell.
    life_loss : ndarray (Q,)
        Life loss given failure of each cell.
    levels : ndarray (K,)

    Returns
    -------
    ndarray (K,) or (R, K)
    """
    ind = (np.asarray(life_loss)[:, None] >= np.asarray(levels)[None, :]).astype(float)
    return np.asarray(masses, float) @ (np.asarray(pf)[:, None] * ind)


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
