"""Flood-frequency families, vectorized over parameter sets.

Each family is a pair of sibling functions, ``<name>_aep`` and
``<name>_quantile``, written on arrays: parameters of shape ``(R, 1)`` against
a quantity grid of shape ``(Q,)`` give an exceedance-probability array
``(R, Q)``; against AEPs ``(P,)`` the quantile functions give ``(R, P)``.
The table :data:`FAMILIES` lists each family's required parameters; the
reader, the validator and the docs all use it.

Annual exceedance probability (AEP) is always computed as a survival function,
and quantiles through inverse survival functions, so that the upper tail keeps
full relative precision (``sf``/``isf``, never ``1 - cdf``).

Families
--------
``lp3``
    log-Pearson Type III of log10 of the quantity: ``mean``, ``sd``, ``skew``.
``gev``
    generalized extreme value, hydrology sign convention: ``location``,
    ``scale``, ``shape``; ``shape > 0`` is bounded above.
``gumbel``
    ``location``, ``scale``.
``lognormal``
    ``mean`` and ``sd`` of log10 of the quantity.
``normal``
    ``mean``, ``sd``.

References
----------
.. [1] Interagency Advisory Committee on Water Data (1982). Guidelines for
   Determining Flood Flow Frequency, Bulletin 17B. US Geological Survey.
.. [2] England, J.F., et al. (2019). Guidelines for Determining Flood Flow
   Frequency, Bulletin 17C. USGS Techniques and Methods 4-B5, v1.1.
.. [3] Hosking, J.R.M. and Wallis, J.R. (1997). Regional Frequency Analysis.
   Cambridge University Press, Appendix A.8.
"""

from __future__ import annotations

from typing import Any

from dataclasses import dataclass

import numpy as np
from scipy import special as sc

__all__ = [
    "FAMILIES",
    "Family",
    "aep",
    "quantile",
    "lp3_aep",
    "lp3_quantile",
    "gev_aep",
    "gev_quantile",
    "gumbel_aep",
    "gumbel_quantile",
    "lognormal_aep",
    "lognormal_quantile",
    "normal_aep",
    "normal_quantile",
]

#: Below this absolute skew (alpha = 4 / skew**2 > 1.6e5) the log-Pearson III is
#: evaluated by Temme's uniform asymptotic expansion of the incomplete gamma
#: ratios, because scipy's lower incomplete gamma loses accuracy for very large
#: alpha in its far lower tail (seen at skew -3e-4: 15 % off at z = 6). Both
#: sides agree to about 1e-9 relative at the join (checked in the tests), and
#: the expansion tends to the normal as skew -> 0.
SMALL_SKEW = 5e-3

#: Below this absolute skew the Pearson III is the normal distribution to rounding: the skew
#: correction, about (skew / 6)(z^2 - 1) phi(z), is under 4e-11 relative there, while 4 / skew**2
#: in the expansion overflows for |skew| < 1e-154 (found by the property tests: skew 4e-225 gave NaN).
TINY_SKEW = 1e-12

#: Below this absolute GEV shape the Gumbel limit is used.
SMALL_SHAPE = 1e-9


def _col(a):
    return np.asarray(a, dtype=float)


# --------------------------------------------------------------------------
# log-Pearson Type III
# --------------------------------------------------------------------------
def _temme_sf(z, g):
    """Pearson III sf for small non-zero skew by Temme's uniform expansion.

    With alpha = 4/g^2 and lambda = t/alpha = 1 + mu, mu = z g / 2,
    eta = sign(mu) sqrt(2 (mu - log1p(mu))),
    Q(alpha, t) = erfc(eta sqrt(alpha/2)) / 2 + R and P = erfc(-eta sqrt(alpha/2)) / 2 - R,
    R = exp(-alpha eta^2 / 2) / sqrt(2 pi alpha) C0(eta), C0 by its Taylor series.

    References
    ----------
    Temme, N.M. (1979). The asymptotic expansion of the incomplete gamma
    functions. SIAM J. Math. Anal. 10(4), 757-766. DiDonato, A.R. and Morris,
    A.H. (1986). ACM Trans. Math. Software 12(4), 377-393, eq. (26)-(28).
    """
    z, g = np.broadcast_arrays(_col(z), _col(g))
    mu = z * g / 2.0
    with np.errstate(invalid="ignore", divide="ignore"):
        small = np.abs(mu) < 1e-3
        series = mu * mu * (0.5 - mu / 3 + mu * mu / 4 - mu**3 / 5 + mu**4 / 6)
        d = np.where(small, series, mu - np.log1p(np.where(mu > -1, mu, 0.0)))
        eta = np.sign(mu) * np.sqrt(2.0 * np.maximum(d, 0.0))
        a = 4.0 / (g * g)
        s = eta * np.sqrt(a / 2.0)
        c0 = -1.0 / 3 + eta / 12 - 2 * eta**2 / 135 + eta**3 / 864 + 8 * eta**4 / 2835 - 139 * eta**5 / 777600
        r = np.exp(-0.5 * a * eta * eta) / np.sqrt(2 * np.pi * a) * c0
        out = np.where(g > 0, 0.5 * sc.erfc(s) + r, 0.5 * sc.erfc(-s) - r)
        # beyond the bound (1 + mu <= 0): exactly 1 below a lower bound, 0 above an upper bound
        out = np.where(mu <= -1, np.where(g > 0, 1.0, 0.0), out)
    return np.clip(out, 0.0, 1.0)


def _pearson3_sf_std(z, g):
    """Survival function of a standardized Pearson III variate.

    ``z`` is the standardized variate, ``g`` the skew; both broadcast. With
    ``alpha = 4 / g**2`` the gamma variate is ``t = alpha + 2 z / g`` for either
    sign of ``g`` (Bulletin 17B, Appendix 3, in standardized form). For
    ``g > 0`` the sf is the regularized upper incomplete gamma ``Q(alpha, t)``
    and the lower bound is ``t = 0``; for ``g < 0`` it is ``P(alpha, t)`` and
    ``t = 0`` is the upper bound, above which the AEP is exactly 0.
    """
    z, g = np.broadcast_arrays(_col(z), _col(g))
    out = np.empty(z.shape)
    small = np.abs(g) < SMALL_SKEW
    pos = (g > 0) & ~small
    neg = (g < 0) & ~small
    if small.any():
        zs, gs = z[small], g[small]
        tiny = np.abs(gs) < TINY_SKEW
        out[small] = np.where(tiny, sc.ndtr(-zs), _temme_sf(zs, np.where(tiny, 1.0, gs)))
    for mask, upper in ((pos, True), (neg, False)):
        if not mask.any():
            continue
        gm = g[mask]
        alpha = 4.0 / (gm * gm)
        t = alpha + 2.0 * z[mask] / gm
        t = np.maximum(t, 0.0)
        out[mask] = sc.gammaincc(alpha, t) if upper else sc.gammainc(alpha, t)
    return np.clip(out, 0.0, 1.0)


def _small_skew_isf(p, g):
    """Frequency factor for small skew: Cornish-Fisher start, then Newton steps on log sf (Temme)."""
    zn = -sc.ndtri(p)
    he2 = zn * zn - 1
    k = zn + he2 * g / 6 + g * g * ((zn**3 - 3 * zn) / 24 * 1.5 - (2 * zn**3 - 5 * zn) / 36)
    target = np.log(p)
    nz = np.abs(g) >= TINY_SKEW
    h = 1e-5
    for _ in range(4):
        if not nz.any():
            break
        f0 = np.log(_pearson3_sf_std(k, g))
        fp = np.log(_pearson3_sf_std(k + h, g))
        fm = np.log(_pearson3_sf_std(k - h, g))
        slope = (fp - fm) / (2 * h)
        step = np.where(nz & (slope < 0), (f0 - target) / slope, 0.0)
        k = k - step
    return np.where(nz, k, zn)


def _pearson3_isf_std(p, g):
    """Frequency factor K(g, p): the standardized Pearson III quantile of AEP p."""
    p, g = np.broadcast_arrays(_col(p), _col(g))
    out = np.empty(p.shape)
    small = np.abs(g) < SMALL_SKEW
    pos = (g > 0) & ~small
    neg = (g < 0) & ~small
    if small.any():
        out[small] = _small_skew_isf(p[small], g[small])
    if pos.any():
        gm = g[pos]
        alpha = 4.0 / (gm * gm)
        t = sc.gammainccinv(alpha, p[pos])
        out[pos] = (t - alpha) * gm / 2.0
    if neg.any():
        gm = g[neg]
        alpha = 4.0 / (gm * gm)
        t = sc.gammaincinv(alpha, p[neg])
        out[neg] = (t - alpha) * gm / 2.0
    return out


def lp3_aep(x, mean, sd, skew):
    """AEP of the log-Pearson Type III distribution.

    Parameters
    ----------
    x : array_like, shape (Q,) or broadcastable
        Quantity (discharge [any unit, > 0]).
    mean, sd, skew : array_like, shape (R, 1)
        Mean, standard deviation and skew of log10 of the quantity.

    Returns
    -------
    ndarray, shape (R, Q)
        Annual exceedance probability. Beyond the bound of a skewed member it is
        exactly 0 (above an upper bound, skew < 0) or 1 (below a lower bound,
        skew > 0). Non-positive ``x`` has AEP 1.

    Notes
    -----
    ``log10 Q_p = mean + K(skew, p) sd``, Bulletin 17B [1]_ eq. (4-1), with K
    the Pearson III frequency factor. scipy's ``pearson3(skew, loc=mean,
    scale=sd)`` is the same distribution of log10 Q.
    """
    x = _col(x)
    with np.errstate(divide="ignore", invalid="ignore"):
        y = np.where(x > 0, np.log10(np.where(x > 0, x, 1.0)), -np.inf)
    mean, sd, skew = _col(mean), _col(sd), _col(skew)
    if y.ndim == 1 and mean.ndim == sd.ndim == skew.ndim == 2 and mean.shape[1] == sd.shape[1] == skew.shape[1] == 1:
        return _lp3_sf_grid(y, mean[:, 0], sd[:, 0], skew[:, 0])
    z = (y - mean) / sd
    return _pearson3_sf_std(z, skew)


def _lp3_sf_grid(y, mean, sd, skew):
    """Fast path: log10 grid y (Q,) against R parameter sets -> (R, Q).

    The gamma variate is formed as t = alpha + b (y - mean) with b = 2 / (g sd) in place (the
    difference y - mean is taken first, which keeps precision near a bound), and the rows are split
    by the sign of the skew so that each incomplete-gamma call runs on one contiguous block.
    """
    R = mean.size
    out = np.empty((R, y.size))
    small = np.abs(skew) < SMALL_SKEW
    finite = np.isfinite(y)
    yf = np.where(finite, y, 0.0)
    for rows, fn in (
        (np.flatnonzero((skew > 0) & ~small), sc.gammaincc),
        (np.flatnonzero((skew < 0) & ~small), sc.gammainc),
    ):
        if rows.size == 0:
            continue
        g, m, s = skew[rows], mean[rows], sd[rows]
        alpha = 4.0 / (g * g)
        b = 2.0 / (g * s)
        t = np.subtract(yf[None, :], m[:, None])
        t *= b[:, None]
        t += alpha[:, None]
        np.maximum(t, 0.0, out=t)
        out[rows] = fn(alpha[:, None], t)
    rows = np.flatnonzero(small)
    if rows.size:
        z = (yf[None, :] - mean[rows, None]) / sd[rows, None]
        out[rows] = _pearson3_sf_std(z, skew[rows, None])
    if not finite.all():
        out[:, ~finite] = 1.0  # x <= 0: log10 is -inf, AEP 1
    return out


def lp3_quantile(p, mean, sd, skew):
    """Quantity with AEP ``p`` under the log-Pearson Type III distribution.

    ``p`` (P,) against parameters (R, 1) gives (R, P).
    """
    k = _pearson3_isf_std(p, skew)
    return np.power(10.0, _col(mean) + k * _col(sd))


# --------------------------------------------------------------------------
# GEV and Gumbel
# --------------------------------------------------------------------------
def gev_aep(x, location, scale, shape):
    """AEP of the generalized extreme value distribution (hydrology sign).

    Parameters
    ----------
    x : array_like (Q,)
    location, scale, shape : array_like (R, 1)
        xi, alpha > 0 and kappa of Hosking & Wallis [3]_. ``shape > 0`` is
        bounded above at ``location + scale / shape`` (AEP exactly 0 beyond);
        ``shape < 0`` is bounded below at the same point (AEP exactly 1 below).
        scipy's ``genextreme`` shape ``c`` has the same sign as kappa.

    Notes
    -----
    F(x) = exp(-y), y = (1 - kappa (x - xi) / alpha)^(1/kappa); kappa = 0 is
    the Gumbel, y = exp(-(x - xi) / alpha). AEP = 1 - F = -expm1(-y).
    """
    x, xi, a, k = (_col(v) for v in (x, location, scale, shape))
    s = (x - xi) / a
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        arg = 1.0 - k * s
        ky = np.where(np.abs(k) < SMALL_SHAPE, 1.0, k)
        logy = np.where(np.abs(k) < SMALL_SHAPE, -s, np.log(np.where(arg > 0, arg, 1.0)) / ky)
        y = np.exp(logy)
        p = -np.expm1(-y)
        # outside the support: above an upper bound (k > 0) AEP = 0; below a lower bound (k < 0) AEP = 1
        p = np.where(arg > 0, p, np.where(k > 0, 0.0, 1.0))
        p = np.where(np.abs(k) < SMALL_SHAPE, -np.expm1(-np.exp(-s)), p)
    return p


def gev_quantile(p, location, scale, shape):
    """Quantity with AEP ``p``: x = xi + alpha (1 - y^kappa) / kappa, y = -ln(1 - p)."""
    p, xi, a, k = (_col(v) for v in (p, location, scale, shape))
    ln_y = np.log(-np.log1p(-p))
    with np.errstate(divide="ignore", invalid="ignore"):
        ksafe = np.where(np.abs(k) < SMALL_SHAPE, 1.0, k)
        frac = np.where(np.abs(k) < SMALL_SHAPE, -ln_y, -np.expm1(k * ln_y) / ksafe)
    return xi + a * frac


def gumbel_aep(x, location, scale):
    """AEP of the Gumbel (EV1) distribution: -expm1(-exp(-(x - location) / scale))."""
    s = (_col(x) - _col(location)) / _col(scale)
    with np.errstate(over="ignore"):
        return -np.expm1(-np.exp(-s))


def gumbel_quantile(p, location, scale):
    """Quantity with AEP ``p`` under the Gumbel distribution."""
    return _col(location) - _col(scale) * np.log(-np.log1p(-_col(p)))


# --------------------------------------------------------------------------
# Normal and lognormal
# --------------------------------------------------------------------------
def normal_aep(x, mean, sd):
    """AEP of the normal distribution, ``ndtr(-(x - mean) / sd)``."""
    return sc.ndtr(-(_col(x) - _col(mean)) / _col(sd))


def normal_quantile(p, mean, sd):
    """Quantity with AEP ``p`` under the normal distribution, ``mean - sd ndtri(p)``."""
    return _col(mean) - _col(sd) * sc.ndtri(_col(p))


def lognormal_aep(x, mean, sd):
    """AEP when log10 of the quantity is normal with ``mean`` and ``sd``."""
    x = _col(x)
    with np.errstate(divide="ignore", invalid="ignore"):
        y = np.where(x > 0, np.log10(np.where(x > 0, x, 1.0)), -np.inf)
    return sc.ndtr(-(y - _col(mean)) / _col(sd))


def lognormal_quantile(p, mean, sd):
    """Quantity with AEP ``p`` when log10 of it is normal."""
    return np.power(10.0, normal_quantile(p, mean, sd))


# --------------------------------------------------------------------------
# The table of families
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class Family:
    """A frequency family: its parameters and its two functions."""

    name: str
    parameters: tuple[str, ...]
    positive: tuple[str, ...]  # parameters that must be > 0
    aep: Any
    quantile: Any
    log_quantity: bool  # parameters describe log10 of the quantity
    description: str


FAMILIES: dict[str, Family] = {
    "lp3": Family(
        "lp3", ("mean", "sd", "skew"), ("sd",), lp3_aep, lp3_quantile, True, "log-Pearson Type III of log10 quantity"
    ),
    "gev": Family(
        "gev",
        ("location", "scale", "shape"),
        ("scale",),
        gev_aep,
        gev_quantile,
        False,
        "generalized extreme value, shape > 0 bounded above",
    ),
    "gumbel": Family(
        "gumbel", ("location", "scale"), ("scale",), gumbel_aep, gumbel_quantile, False, "Gumbel (extreme value type I)"
    ),
    "lognormal": Family(
        "lognormal", ("mean", "sd"), ("sd",), lognormal_aep, lognormal_quantile, True, "normal of log10 quantity"
    ),
    "normal": Family("normal", ("mean", "sd"), ("sd",), normal_aep, normal_quantile, False, "normal"),
}


def get_family(name: str) -> Family:
    """Look a family up by name (case-insensitive); ``ValueError`` if unknown."""
    key = str(name).strip().lower()
    if key not in FAMILIES:
        raise ValueError(f"unknown family '{name}'; expected one of {', '.join(FAMILIES)}")
    return FAMILIES[key]


def _param_columns(family: Family, params):
    return [np.asarray(params[k], dtype=float).reshape(-1, 1) for k in family.parameters]


def aep(family: str, params, x):
    """AEP ``(R, Q)`` of quantities ``x`` (Q,) under parameter sets ``params``.

    ``params`` maps each of the family's parameter names to an array (R,).
    """
    fam = get_family(family)
    return fam.aep(np.asarray(x, dtype=float), *_param_columns(fam, params))


def quantile(family: str, params, p):
    """Quantities ``(R, P)`` with AEPs ``p`` (P,) under parameter sets ``params``."""
    fam = get_family(family)
    return fam.quantile(np.asarray(p, dtype=float), *_param_columns(fam, params))
