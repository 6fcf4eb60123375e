"""Log-likelihood of an annual-peak record with historical information, per family.

Three kinds of year enter the likelihood (Stedinger & Cohn 1986 [1]_; Bulletin 17C [3]_):

* an exact peak x: ``log f(x)``;
* an interval year, the peak known to lie in (a, b]: ``log[F(b) - F(a)]``;
* the ``n`` years of a threshold period with no recorded flood, each below the
  threshold T: ``n log F(T)``.

The log-likelihood of parameters θ is the sum over all years,
``l(θ) = Σ_exact log f(x_i; θ) + Σ_interval log[F(b_j; θ) - F(a_j; θ)] + Σ_k n_k log F(T_k; θ)``,
eq. (4) of Stedinger & Cohn [1]_ written for several thresholds and intervals.

The densities are those of :mod:`riskcalc.hazard.families`, with the same parameters and
sign conventions: ``lognormal`` and ``lp3`` describe log10 of the quantity (the density of
the quantity itself carries the Jacobian ``1 / (x ln 10)``), and the GEV ``shape`` is the
kappa of Hosking & Wallis [2]_ (``shape > 0`` bounded above; scipy's ``genextreme`` shape
``c`` has the same sign). Every function takes parameters of shape ``(W, 1)`` (one row a
parameter set, e.g. a walker of the sampler) and quantities ``(N,)`` and returns ``(W, N)``;
:func:`log_likelihood` sums over the record and returns ``(W,)``. Outside a distribution's
support the log density is ``-inf``.

References
----------
.. [1] Stedinger, J.R. and Cohn, T.A. (1986). Flood frequency analysis with historical and
   paleoflood information. Water Resources Research 22(5), 785-793.
.. [2] Hosking, J.R.M. and Wallis, J.R. (1997). Regional Frequency Analysis. Cambridge
   University Press, Appendix A.8 (GEV) and A.9 (Pearson type III).
.. [3] England, J.F., et al. (2019). Guidelines for Determining Flood Flow Frequency,
   Bulletin 17C. USGS Techniques and Methods 4-B5, v1.1.
"""

from __future__ import annotations

import numpy as np
from scipy import special as sc

from ..families import SMALL_SHAPE, _pearson3_sf_std
from .peaks import PeakRecord

__all__ = ["logpdf", "logsf", "logcdf", "log_cdf_sf", "log_interval", "log_likelihood", "LOG_FAMILIES"]

#: Families whose parameters describe log10 of the quantity.
LOG_FAMILIES = ("lp3", "lognormal")

_LN10 = np.log(10.0)
_HALF_LOG_2PI = 0.5 * np.log(2 * np.pi)

#: Below this absolute skew the Pearson III density is the normal density (the skew term,
#: about skew z^3 / 6, is under 1e-9 there).
TINY_SKEW = 1e-9


def _a(v):
    return np.asarray(v, dtype=float)


def _log10(x):
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(x > 0, np.log10(np.where(x > 0, x, 1.0)), -np.inf)


def _log1p_minus(u):
    """log1p(u) - u, accurate for small u (series) and for u > -1."""
    small = np.abs(u) < 1e-3
    series = -(u**2) * (0.5 - u / 3 + u**2 / 4 - u**3 / 5 + u**4 / 6)
    with np.errstate(invalid="ignore", divide="ignore"):
        direct = np.log1p(np.where(u > -1, u, 0.0)) - u
    return np.where(small, series, direct)


def _stirling_remainder(a):
    """gammaln(a) - [(a - 1/2) log a - a + log(2 pi) / 2], by its asymptotic series for large a."""
    a = _a(a)
    big = a > 1e3
    safe = np.where(big, a, 1e3)
    series = 1 / (12 * safe) - 1 / (360 * safe**3) + 1 / (1260 * safe**5)
    small = np.where(big, 1.0, a)
    direct = sc.gammaln(small) - ((small - 0.5) * np.log(small) - small + _HALF_LOG_2PI)
    return np.where(big, series, direct)


def _pearson3_logpdf_std(z, g):
    """Log density of a standardized Pearson III variate (mean 0, sd 1, skew g).

    With alpha = 4/g^2 and u = z g / 2, the gamma variate is t = alpha (1 + u) and
    log f = alpha (log1p(u) - u) - log1p(u) - R(alpha), R the Stirling remainder of
    gammaln(alpha) (Hosking & Wallis [2]_ A.9 rearranged so that it tends to the normal
    density as g -> 0 without cancellation).
    """
    z, g = np.broadcast_arrays(_a(z), _a(g))
    tiny = np.abs(g) < TINY_SKEW
    gs = np.where(tiny, 1.0, g)
    u = z * gs / 2
    alpha = 4.0 / (gs * gs)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        lp = alpha * _log1p_minus(u) - np.log1p(np.where(u > -1, u, 0.0)) - _stirling_remainder(alpha) - _HALF_LOG_2PI
        lp = np.where(u > -1, lp, -np.inf)
    return np.where(tiny, -0.5 * z * z - _HALF_LOG_2PI, lp)


# ----------------------------------------------------------------------
# Per-family log density, log survival and log distribution functions
# ----------------------------------------------------------------------
def _gev_y(x, loc, scale, shape):
    """Reduced variate y with F = exp(-exp(-y)); and the in-support mask."""
    s = (x - loc) / scale
    small = np.abs(shape) < SMALL_SHAPE
    if not small.any():
        arg = 1.0 - shape * s
        inside = arg > 0
        with np.errstate(invalid="ignore", divide="ignore"):
            return -np.log(np.where(inside, arg, 1.0)) / shape, inside
    ks = np.where(small, 1.0, shape)
    arg = 1.0 - ks * s
    inside = small | (arg > 0)
    with np.errstate(invalid="ignore", divide="ignore"):
        y = np.where(small, s, -np.log(np.where(arg > 0, arg, 1.0)) / ks)
    return y, inside


def logpdf(family: str, x, params) -> np.ndarray:
    """Log density of the quantity ``x`` (N,) under parameter sets ``params`` (tuple of (W, 1)) -> (W, N)."""
    x = _a(x)
    if family == "normal":
        m, s = (_a(p) for p in params)
        z = (x - m) / s
        return -0.5 * z * z - np.log(s) - _HALF_LOG_2PI
    if family == "lognormal":
        m, s = (_a(p) for p in params)
        y = _log10(x)
        z = (y - m) / s
        with np.errstate(invalid="ignore", divide="ignore"):
            out = -0.5 * z * z - np.log(s) - _HALF_LOG_2PI - np.log(np.where(x > 0, x, 1.0) * _LN10)
        return np.where(x > 0, out, -np.inf)
    if family == "lp3":
        m, s, g = (_a(p) for p in params)
        y = _log10(x)
        z = (y - m) / s
        with np.errstate(invalid="ignore", divide="ignore"):
            out = _pearson3_logpdf_std(np.where(x > 0, z, 0.0), g) - np.log(s) - np.log(np.where(x > 0, x, 1.0) * _LN10)
        return np.where(x > 0, out, -np.inf)
    if family == "gumbel":
        m, b = (_a(p) for p in params)
        s = (x - m) / b
        with np.errstate(over="ignore"):
            return -np.log(b) - s - np.exp(-s)
    if family == "gev":
        m, a, k = (_a(p) for p in params)
        y, inside = _gev_y(x, m, a, k)
        with np.errstate(over="ignore", invalid="ignore"):
            out = -np.log(a) - (1.0 - k) * y - np.exp(-y)
        return np.where(inside, out, -np.inf)
    raise ValueError(f"unknown family '{family}'")


def logsf(family: str, x, params) -> np.ndarray:
    """Log survival function, log AEP, ``(W, N)``."""
    x = _a(x)
    if family == "normal":
        m, s = (_a(p) for p in params)
        return sc.log_ndtr(-(x - m) / s)
    if family == "lognormal":
        m, s = (_a(p) for p in params)
        return sc.log_ndtr(-(_log10(x) - m) / s)
    if family == "lp3":
        m, s, g = (_a(p) for p in params)
        z = (_log10(x) - m) / s
        with np.errstate(divide="ignore"):
            return np.log(_pearson3_sf_std(z, g))
    if family == "gumbel":
        m, b = (_a(p) for p in params)
        s = (x - m) / b
        with np.errstate(over="ignore", divide="ignore"):
            return np.log(-np.expm1(-np.exp(-s)))
    if family == "gev":
        m, a, k = (_a(p) for p in params)
        y, inside = _gev_y(x, m, a, k)
        with np.errstate(over="ignore", divide="ignore"):
            out = np.log(-np.expm1(-np.exp(-y)))
        # outside the support: above an upper bound (k > 0) the AEP is 0; below a lower bound (k < 0) it is 1
        return np.where(inside, out, np.where(k > 0, -np.inf, 0.0))
    raise ValueError(f"unknown family '{family}'")


def logcdf(family: str, x, params) -> np.ndarray:
    """Log distribution function, log of the non-exceedance probability, ``(W, N)``."""
    x = _a(x)
    if family == "normal":
        m, s = (_a(p) for p in params)
        return sc.log_ndtr((x - m) / s)
    if family == "lognormal":
        m, s = (_a(p) for p in params)
        return sc.log_ndtr((_log10(x) - m) / s)
    if family == "lp3":
        m, s, g = (_a(p) for p in params)
        z = (_log10(x) - m) / s
        # F(z; g) = sf(-z; -g): the reflected variate is Pearson III with the opposite skew
        with np.errstate(divide="ignore"):
            return np.log(_pearson3_sf_std(-z, -g))
    if family == "gumbel":
        m, b = (_a(p) for p in params)
        with np.errstate(over="ignore"):
            return -np.exp(-(x - m) / b)
    if family == "gev":
        m, a, k = (_a(p) for p in params)
        y, inside = _gev_y(x, m, a, k)
        with np.errstate(over="ignore"):
            out = -np.exp(-y)
        return np.where(inside, out, np.where(k > 0, 0.0, -np.inf))
    raise ValueError(f"unknown family '{family}'")


def _log_diff(la, lb):
    """log(exp(la) - exp(lb)) for la >= lb, ``-inf`` when equal."""
    with np.errstate(invalid="ignore", divide="ignore"):
        d = lb - la
        out = la + np.log(-np.expm1(np.where(np.isfinite(d), d, -np.inf)))
    return np.where(np.isneginf(la), -np.inf, out)


def log_cdf_sf(family: str, x, params) -> tuple[np.ndarray, np.ndarray]:
    """``(logcdf, logsf)`` together, each ``(W, N)`` (the GEV and Gumbel share their reduced variate)."""
    x = _a(x)
    if family == "gev":
        m, a, k = (_a(p) for p in params)
        y, inside = _gev_y(x, m, a, k)
        with np.errstate(over="ignore", divide="ignore"):
            e = np.exp(-y)
            lc = np.where(inside, -e, np.where(k > 0, 0.0, -np.inf))
            ls = np.where(inside, np.log(-np.expm1(-e)), np.where(k > 0, -np.inf, 0.0))
        return lc, ls
    if family == "gumbel":
        m, b = (_a(p) for p in params)
        with np.errstate(over="ignore", divide="ignore"):
            e = np.exp(-(x - m) / b)
            return -e, np.log(-np.expm1(-e))
    return logcdf(family, x, params), logsf(family, x, params)


def log_interval(family: str, lower, upper, params) -> np.ndarray:
    """``log[F(upper) - F(lower)]``, ``(W, M)``, from the survival functions in the upper tail and the
    distribution functions in the lower tail (whichever side keeps precision)."""
    lower, upper = _a(lower), _a(upper)
    ca, sa = log_cdf_sf(family, lower, params)
    cb, sb = log_cdf_sf(family, upper, params)
    upper_tail = sa < np.log(0.5)
    return np.where(upper_tail, _log_diff(sa, sb), _log_diff(cb, ca))


def log_likelihood(record: PeakRecord, family: str, params) -> np.ndarray:
    """Log-likelihood ``(W,)`` of the record under parameter sets ``params`` (tuple of (W, 1) arrays).

    Notes
    -----
    ``Σ log f(x_i) + Σ log[F(b_j) - F(a_j)] + Σ n_k log F(T_k)``, Stedinger & Cohn [1]_ eq. (4).
    NaN (from parameters outside every support) is returned as ``-inf``.
    """
    params = tuple(np.asarray(p, dtype=float).reshape(-1, 1) for p in params)
    total = np.zeros(params[0].shape[0])
    if record.n_exact:
        total = total + logpdf(family, record.peaks, params).sum(axis=1)
    if record.n_interval:
        total = total + log_interval(family, record.lower, record.upper, params).sum(axis=1)
    if record.thresholds.size:
        n = record.below.astype(float)
        keep = n > 0
        if keep.any():
            lc = logcdf(family, record.thresholds[keep], params)
            with np.errstate(invalid="ignore", over="ignore"):
                total = total + (lc * n[keep]).sum(axis=1)
    return np.where(np.isnan(total), -np.inf, total)
