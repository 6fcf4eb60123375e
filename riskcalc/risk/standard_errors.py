"""Monte Carlo error of the predictive figures: draws clustered by realization, and MCMC autocorrelation.

A predictive figure is the weighted mean of the risks R_rd of every draw d of every realization r.
The draws of one realization share its frequency curve, so they are not independent: the standard
error comes from the realization means (a cluster, or ratio, estimator),

    SE² = Σ_r W_r² (R̄_r − R̄)²,   W_r = Σ_d w_rd,   R̄_r = Σ_d w_rd R_rd / W_r,

which reduces to the usual sqrt(Σ w_i² (v_i − v̄)²) with one draw per realization. It treats the
realizations as independent; when the ensemble is an MCMC sample with a known order (``chain`` and
``iteration`` columns), :func:`integrated_autocorrelation_time` estimates how many independent
members it is worth.

References
----------
.. [1] Cochran, W.G. (1977). Sampling Techniques, 3rd ed. Wiley, section 9.2 and 6.4 (cluster
   sampling, the ratio estimator and its variance).
.. [2] Sokal, A. (1997). Monte Carlo methods in statistical mechanics: foundations and new
   algorithms. In: Functional Integration, NATO ASI Series 361, 131-192 (integrated
   autocorrelation time, automatic windowing with c ≈ 5).
.. [3] Goodman, J. and Weare, J. (2010). Ensemble samplers with affine invariance. Communications
   in Applied Mathematics and Computational Science 5(1), 65-80 (the same estimator for several
   chains, averaging their autocorrelation functions).
"""

from __future__ import annotations

import numpy as np

__all__ = ["clustered_standard_error", "autocorrelation", "integrated_autocorrelation_time", "ensemble_autocorrelation"]


def clustered_standard_error(values, weights, clusters) -> float:
    """Standard error of the weighted mean of draws that come in clusters (draws of one realization).

    Parameters
    ----------
    values, weights : ndarray (D,)
        Draw values and weights (weights sum to 1).
    clusters : ndarray (D,) of int
        The cluster (realization) of each draw.

    Returns
    -------
    float
        sqrt(Σ_r W_r² (R̄_r − R̄)²).
    """
    v = np.asarray(values, float)
    w = np.asarray(weights, float)
    c = np.asarray(clusters)
    mean = float(w @ v)
    _, inv = np.unique(c, return_inverse=True)
    W = np.bincount(inv, weights=w)
    S = np.bincount(inv, weights=w * v)
    # W_r (R̄_r − R̄) = S_r − W_r R̄
    return float(np.sqrt(np.sum((S - W * mean) ** 2)))


def autocorrelation(x) -> np.ndarray:
    """Normalized autocorrelation function of a series (FFT, zero-padded), ρ(0) = 1."""
    x = np.asarray(x, float)
    n = x.size
    f = np.fft.rfft(x - x.mean(), n=2 * n)
    acf = np.fft.irfft(f * np.conjugate(f))[:n]
    return acf / acf[0] if acf[0] > 0 else np.r_[1.0, np.zeros(n - 1)]


def integrated_autocorrelation_time(chains, c: float = 5.0) -> float:
    """Integrated autocorrelation time τ = 1 + 2 Σ_{t≥1} ρ(t) of one or several chains.

    The autocorrelation function is averaged over the chains (Goodman & Weare 2010) and summed up to
    the smallest window M with M ≥ c τ(M) (Sokal 1997). τ = 1 for independent draws; the effective
    sample size is n / τ.

    Parameters
    ----------
    chains : sequence of 1-D arrays
        One array per chain, in iteration order (chains may differ in length; each is cut to the shortest).
    c : float
        Window constant.
    """
    xs = [np.asarray(x, float) for x in chains if np.size(x) > 1]
    if not xs:
        return 1.0
    n = min(x.size for x in xs)
    rho = np.mean([autocorrelation(x[:n]) for x in xs], axis=0)
    taus = 2.0 * np.cumsum(rho) - 1.0
    window = np.arange(taus.size) < c * taus
    m = int(np.argmin(window)) if not np.all(window) else taus.size - 1
    return float(max(taus[m], 1.0 / n))


def ensemble_autocorrelation(per_realization, chain, iteration) -> float:
    """τ of per-realization values of an MCMC ensemble ordered by ``chain`` then ``iteration``."""
    v = np.asarray(per_realization, float)
    ch, it = np.asarray(chain), np.asarray(iteration)
    series = []
    for k in np.unique(ch):
        sel = np.flatnonzero(ch == k)
        series.append(v[sel[np.argsort(it[sel], kind="stable")]])
    return integrated_autocorrelation_time(series)
