"""Summary curves of a hazard ensemble: predictive, credible band, median, mode; the quantity grid.

Notation: realizations r = 1..R with weights w_r summing to 1, p_r(x) the AEP
of quantity x under realization r.

* Predictive (expected-probability) curve, the horizontal slice at fixed x:
  p̄(x) = Σ_r w_r p_r(x)  (Stedinger 1983; Bulletin 17B Appendix 11 for the
  normal case).
* Credible band, the vertical slice at fixed AEP p: weighted quantiles over r
  of x_r(p). The median curve is the 50 % vertical quantile. For monotone
  curves the horizontal and vertical bands coincide.
* Mode curve: the realization with the largest log posterior, or explicit
  parameters.

References
----------
.. [1] Stedinger, J.R. (1983). Design events with specified flood risk. Water
   Resources Research 19(2), 511-522.
.. [2] Beard, L.R. (1960). Probability estimates based on small normal
   distribution samples. Journal of Geophysical Research 65(7), 2143-2148.
.. [3] Gelman, A., et al. (2013). Bayesian Data Analysis, 3rd ed., CRC Press.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special as sc

from ..parallel import map_in_threads
from .ensemble import HazardEnsemble
from .ensemble import _paper_z as _paper
from .families import get_family

__all__ = [
    "HazardCurves",
    "weighted_quantile",
    "predictive_aep",
    "invert_on_paper",
    "aep_on_paper",
    "band_aeps",
    "quantity_grid",
    "mode_curve",
    "median_curve",
    "hazard_curves",
    "row_chunks",
    "STANDARD_AEPS",
]

#: AEPs of the printed summary table.
STANDARD_AEPS = np.array([0.5, 0.2, 0.1, 0.04, 0.02, 0.01, 0.005, 0.002, 0.001, 0.0005, 0.0002, 0.0001])

#: Bytes of one float64 work array per chunk of realizations.
CHUNK_BYTES = 48 * 2**20


def row_chunks(n_rows: int, n_cols: int, chunk_bytes: int = CHUNK_BYTES):
    """Slices over ``n_rows`` so that a float64 block of ``n_cols`` columns stays under ``chunk_bytes``."""
    step = max(1, int(chunk_bytes // (8 * max(1, n_cols))))
    for a in range(0, n_rows, step):
        yield slice(a, min(n_rows, a + step))


def weighted_quantile(values, weights, levels):
    """Weighted quantiles along axis 0.

    Parameters
    ----------
    values : ndarray (R, P)
    weights : ndarray (R,), non-negative, summing to 1
    levels : array_like (L,) in [0, 1]

    Returns
    -------
    ndarray (L, P)

    Notes
    -----
    The empirical CDF is placed at the middle of each weight, c_i = Σ_{k<i} w_k
    + w_i / 2, and interpolated linearly; with equal weights this is the
    Hazen plotting position (i - 0.5) / R. Levels outside [c_1, c_R] take the
    extreme values.
    """
    v = np.asarray(values, dtype=float)
    if v.ndim == 1:
        v = v[:, None]
    w = np.asarray(weights, dtype=float)
    lv = np.atleast_1d(np.asarray(levels, dtype=float))
    out = np.empty((lv.size, v.shape[1]))
    keep_w = w > 0
    # one column at a time: memory O(R) whatever the number of columns
    for j in range(v.shape[1]):
        col = v[keep_w, j]
        ww = w[keep_w]
        order = np.argsort(col, kind="stable")
        ws = ww[order]
        cw = np.cumsum(ws) - 0.5 * ws
        out[:, j] = np.interp(lv, cw, col[order])
    return out


def invert_on_paper(x, aep, target_aep, log_scale=True):
    """Quantity at ``target_aep`` from a curve ``aep(x)``, interpolating on probability paper.

    Linear interpolation of log10 x (or x) against the standard normal deviate
    -ndtri(AEP). Targets outside the curve's range give NaN.
    """
    x = np.asarray(x, dtype=float)
    p = np.asarray(aep, dtype=float)
    keep = (p > 0) & (p < 1)
    z = _paper(p[keep])
    v = np.log10(x[keep]) if log_scale else x[keep]
    # keep strictly increasing z
    zu, iu = np.unique(z, return_index=True)
    vu = v[iu]
    zt = _paper(target_aep)
    out = np.interp(zt, zu, vu, left=np.nan, right=np.nan)
    return np.power(10.0, out) if log_scale else out


def aep_on_paper(x_curve, aep_curve, x, log_scale=True):
    """AEP at ``x`` from a curve given at points (x_curve, aep_curve), linear on probability paper.

    Beyond the curve's points the end segments are extended.
    """
    xc = np.asarray(x_curve, float)
    z = _paper(aep_curve)
    vc = np.log10(xc) if log_scale else xc
    order = np.argsort(vc, kind="stable")
    vc, z = vc[order], z[order]
    vc, iu = np.unique(vc, return_index=True)
    z = z[iu]
    xv = np.log10(np.asarray(x, float)) if log_scale else np.asarray(x, float)
    zi = np.interp(xv, vc, z)
    lo, hi = xv < vc[0], xv > vc[-1]
    if vc.size >= 2:
        s0 = (z[1] - z[0]) / (vc[1] - vc[0])
        s1 = (z[-1] - z[-2]) / (vc[-1] - vc[-2])
        zi = np.where(lo, z[0] + s0 * (xv - vc[0]), zi)
        zi = np.where(hi, z[-1] + s1 * (xv - vc[-1]), zi)
    return sc.ndtr(-zi)


def band_aeps(aep_max=0.999, aep_min=1e-7, n=49):
    """AEPs evenly spaced on probability paper from ``aep_max`` down to ``aep_min``, plus the standard AEPs."""
    z = np.linspace(_paper(aep_max), _paper(aep_min), n)
    p = sc.ndtr(-z)
    std = STANDARD_AEPS[(STANDARD_AEPS <= aep_max) & (STANDARD_AEPS >= aep_min)]
    p = np.unique(np.concatenate([p[1:-1], std, [aep_max, aep_min]]))[::-1]
    # drop points closer than 1e-6 on the probability-paper axis to their neighbour (keeps exact AEPs)
    z = _paper(p)
    keep = np.concatenate([[True], np.diff(z) > 1e-6])
    return p[keep]


def predictive_aep(ens: HazardEnsemble, x, chunk_bytes=CHUNK_BYTES) -> np.ndarray:
    """Predictive AEP p̄(x) = Σ_r w_r p_r(x), evaluated in chunks of realizations.

    ``x`` (Q,) -> (Q,).
    """
    x = np.asarray(x, dtype=float)
    acc = np.zeros(x.shape)
    for rows in row_chunks(ens.size, x.size, chunk_bytes):
        acc += ens.weights[rows] @ ens.aep(x, rows)
    return acc


def quantity_grid(
    ens: HazardEnsemble, aep_max=0.999, aep_min=1e-7, n=2000, spacing=None, breakpoints=(), extra_curves=()
):
    """A grid of quantities spanning every realization from AEP ``aep_max`` to ``aep_min``.

    Parameters
    ----------
    ens : HazardEnsemble
    aep_max, aep_min : float
        The grid runs from the smallest x_r(aep_max) over r to the largest x_r(aep_min).
    n : int
        Number of evenly spaced points (log-spaced for discharge, linear for stage
        unless ``spacing`` says otherwise).
    breakpoints : sequence of float
        Points added to the grid (table breakpoints of the response) when inside its span.
    extra_curves : sequence of HazardEnsemble
        Further curves the grid must cover (mode, median).

    Returns
    -------
    ndarray (Q,), strictly increasing.
    """
    lows, his = [], []
    for e in (ens, *extra_curves):
        lows.append(_chunked_quantile(e, aep_max))
        his.append(np.nanmax(_chunked_quantile(e, aep_min)))
    low = np.concatenate(lows)
    lo, hi = float(np.nanmin(low)), float(max(his))
    if spacing is None:
        spacing = "log" if ens.log_scale else "linear"
    if spacing == "log" and lo <= 0 < hi:
        # members reaching zero or negative discharge (an unbounded-below GEV, say): discharge <= 0 carries
        # no risk, so the grid starts at the smallest positive member value at aep_max (at most hi * 1e-6 below)
        pos = low[low > 0]
        lo = float(pos.min()) if pos.size else hi * 1e-6
        lo = max(lo, hi * 1e-9)
    if not (np.isfinite(lo) and np.isfinite(hi)):
        raise ValueError(
            f"the ensemble's quantities between AEP {aep_max} and {aep_min} are not finite numbers "
            f"(from {lo} to {hi}); check the parameters (lp3 and lognormal take the mean and sd "
            "of log10 of the quantity)"
        )
    if not hi > lo:
        raise ValueError(f"the ensemble spans no range between AEP {aep_max} and {aep_min} (from {lo} to {hi})")
    if spacing == "log":
        if lo <= 0:
            raise ValueError("a log-spaced grid needs positive quantities")
        g = np.geomspace(lo, hi, int(n))
    else:
        g = np.linspace(lo, hi, int(n))
    b = np.asarray([v for v in breakpoints if lo < v < hi], dtype=float)
    if b.size:
        g = np.unique(np.concatenate([g, b]))
        # a breakpoint that equals a grid point or another breakpoint up to rounding (a table stage
        # mapped back through the rating) would leave a cell of zero width: keep the first of the two
        keep = np.concatenate([[True], np.diff(g) > 1e-12 * np.abs(g[1:])])
        g = g[keep]
    return g


def _chunked_quantile(ens, p):
    out = np.empty(ens.size)
    # an overflow gives inf, which quantity_grid reports as an input error; no RuntimeWarning on stderr
    with np.errstate(over="ignore"):
        for rows in row_chunks(ens.size, 1, 8 * 2**20):
            out[rows] = ens.quantile(np.array([p]), rows)[:, 0]
    return out


def mode_curve(ens: HazardEnsemble, explicit: dict | None = None):
    """The mode curve as a one-member ensemble, and a note saying how it was chosen.

    Order of preference: explicit parameters; the member with the largest
    ``log_posterior``; for a parametric family with neither, the curve at the
    weighted mean of the parameter sets; for a curve table with neither, the
    member closest to the median curve (least squares on probability paper).
    """
    if explicit:
        fam = get_family(ens.family)
        params = {k: np.array([float(explicit[k])]) for k in fam.parameters}
        note = "mode curve: explicit parameters " + ", ".join(f"{k} = {explicit[k]:g}" for k in fam.parameters)
        return HazardEnsemble(
            family=ens.family,
            weights=np.ones(1),
            params=params,
            labels=("mode",),
            quantity=ens.quantity,
            unit=ens.unit,
            source=ens.source,
        ), note
    if ens.log_posterior is not None:
        i = int(np.argmax(ens.log_posterior))
        note = f"mode curve: realization '{ens.labels[i]}', the largest log_posterior ({ens.log_posterior[i]:g})"
    elif ens.family != "table":
        params = {k: np.array([float(ens.weights @ v)]) for k, v in ens.params.items()}
        note = (
            "mode curve: no log_posterior column and no explicit parameters, so the curve at the "
            "weighted mean parameters (" + ", ".join(f"{k} = {v[0]:.4g}" for k, v in params.items()) + "); "
            "it stands in for the mode and is not known to be the most likely curve"
        )
        return HazardEnsemble(
            family=ens.family,
            weights=np.ones(1),
            params=params,
            labels=("mean-parameter",),
            quantity=ens.quantity,
            unit=ens.unit,
            source=ens.source,
        ), note
    else:
        med = weighted_quantile(ens.table_values, ens.weights, [0.5])[0]
        f = np.log10 if ens.log_scale else (lambda a: a)
        i = int(np.argmin(((f(ens.table_values) - f(med)) ** 2).sum(axis=1)))
        note = (
            f"mode curve: no log_posterior column, so realization '{ens.labels[i]}', "
            "the member closest to the median curve; it stands in for the mode and is not known to be the "
            "most likely curve"
        )
    one = ens.subset([i])
    return HazardEnsemble(
        family=one.family,
        weights=np.ones(1),
        params=one.params,
        table_aep=one.table_aep,
        table_values=one.table_values,
        log_posterior=one.log_posterior,
        labels=one.labels,
        quantity=ens.quantity,
        unit=ens.unit,
        source=ens.source,
    ), note


def vertical_quantiles(ens: HazardEnsemble, aeps, levels, chunk_bytes=CHUNK_BYTES):
    """Weighted quantiles over realizations of x_r(p) at each AEP: (L, P)."""
    aeps = np.asarray(aeps, float)
    # blocks of AEP columns so that the (R, block) array stays within about two chunks of memory
    block = max(1, min(aeps.size, int(2 * chunk_bytes // (8 * max(1, ens.size)))))
    out = []
    for a in range(0, aeps.size, block):
        cols = aeps[a : a + block]
        q = np.empty((ens.size, cols.size))
        chunks = list(row_chunks(ens.size, cols.size, max(8 * cols.size, chunk_bytes // 4)))

        def fill(rows, cols=cols, q=q):
            q[rows] = ens.quantile(cols, rows)

        map_in_threads(fill, chunks)
        out.append(weighted_quantile(q, ens.weights, levels))
    return np.concatenate(out, axis=1)


def median_curve(aeps, median_values, ens: HazardEnsemble) -> HazardEnsemble:
    """The median (50 % vertical) curve as a one-member curve table."""
    aeps = np.asarray(aeps, float)
    vals = np.asarray(median_values, float)
    order = np.argsort(-aeps)
    aeps, vals = aeps[order], vals[order]
    # guard against flat stretches (a bounded member can pin the median)
    vals = np.maximum.accumulate(vals)
    bump = np.abs(vals) * 1e-12 + 1e-300
    for i in range(1, vals.size):
        if vals[i] <= vals[i - 1]:
            vals[i] = vals[i - 1] + bump[i]
    return HazardEnsemble(
        family="table",
        weights=np.ones(1),
        table_aep=aeps,
        table_values=vals[None, :],
        labels=("median",),
        quantity=ens.quantity,
        unit=ens.unit,
        source=ens.source,
    )


@dataclass(frozen=True, eq=False)
class HazardCurves:
    """Summary curves of an ensemble on a quantity grid and at a set of AEPs.

    Attributes
    ----------
    grid : ndarray (Q,)
        Quantities (discharge or stage).
    aep_predictive, aep_mode, aep_median : ndarray (Q,)
        AEP on the grid of the predictive, mode and median curves.
    aep_lower, aep_upper : ndarray (Q,)
        Horizontal band limits at the band level (from the vertical band, which
        coincides for monotone members).
    aeps : ndarray (P,)
        AEPs of the vertical slices, decreasing.
    quantity_predictive, quantity_mode, quantity_median, quantity_lower, quantity_upper : ndarray (P,)
    level : float
        Central credible level of the band, e.g. 0.9.
    mode_note : str
    mode, median : HazardEnsemble
        One-member curves.
    """

    grid: np.ndarray
    aep_predictive: np.ndarray
    aep_mode: np.ndarray
    aep_median: np.ndarray
    aep_lower: np.ndarray
    aep_upper: np.ndarray
    aeps: np.ndarray
    quantity_predictive: np.ndarray
    quantity_mode: np.ndarray
    quantity_median: np.ndarray
    quantity_lower: np.ndarray
    quantity_upper: np.ndarray
    level: float
    mode_note: str
    mode: HazardEnsemble
    median: HazardEnsemble
    log_scale: bool
    quantity: str
    unit: str | None

    @property
    def band_names(self):
        lo = (1 - self.level) / 2
        return f"p{round(100 * lo):02d}", f"p{round(100 * (1 - lo)):02d}"


def hazard_curves(
    ens: HazardEnsemble,
    grid=None,
    *,
    level=0.9,
    aep_max=0.999,
    aep_min=1e-7,
    n_grid=2000,
    mode_params=None,
    aeps=None,
    predictive=None,
) -> HazardCurves:
    """Predictive, mode and median curves and the credible band of an ensemble.

    Parameters
    ----------
    ens : HazardEnsemble
    grid : ndarray (Q,), optional
        Quantity grid; by default :func:`quantity_grid` with ``aep_max``, ``aep_min``, ``n_grid``.
    level : float
        Central credible level of the band (default 0.9: the 5 % and 95 % curves).
    mode_params : dict, optional
        Explicit mode-curve parameters.
    aeps : ndarray (P,), optional
        AEPs of the vertical slices; by default :func:`band_aeps`.
    predictive : ndarray (Q,), optional
        A predictive AEP already computed on ``grid`` (saves one pass over the ensemble).
    """
    if not 0 < level < 1:
        raise ValueError(f"credible level {level} must be strictly between 0 and 1")
    mode, note = mode_curve(ens, mode_params)
    aeps = band_aeps(aep_max, aep_min) if aeps is None else np.asarray(aeps, float)
    lo_lv = (1 - level) / 2
    vq = vertical_quantiles(ens, aeps, [lo_lv, 0.5, 1 - lo_lv])
    med = median_curve(aeps, vq[1], ens)
    if grid is None:
        grid = quantity_grid(ens, aep_max, aep_min, n_grid, extra_curves=(mode,))
    grid = np.asarray(grid, float)
    pbar = predictive_aep(ens, grid) if predictive is None else np.asarray(predictive, float)
    log_scale = ens.log_scale
    q_pred = invert_on_paper(grid, pbar, aeps, log_scale)
    p_mode = mode.aep(grid)[0]
    p_med = med.aep(grid)[0]
    # horizontal band from the vertical one (they coincide for monotone members): members with smaller
    # quantities have smaller AEPs at a fixed quantity, so the lower quantity curve gives the lower AEP limit
    p_lower = aep_on_paper(vq[0], aeps, grid, log_scale)
    p_upper = aep_on_paper(vq[2], aeps, grid, log_scale)
    return HazardCurves(
        grid=grid,
        aep_predictive=pbar,
        aep_mode=p_mode,
        aep_median=p_med,
        aep_lower=p_lower,
        aep_upper=p_upper,
        aeps=aeps,
        quantity_predictive=q_pred,
        quantity_mode=mode.quantile(aeps)[0],
        quantity_median=vq[1],
        quantity_lower=vq[0],
        quantity_upper=vq[2],
        level=level,
        mode_note=note,
        mode=mode,
        median=med,
        log_scale=log_scale,
        quantity=ens.quantity,
        unit=ens.unit,
    )
