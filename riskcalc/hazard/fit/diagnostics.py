"""Convergence diagnostics of Markov chains: split R-hat and effective sample size.

Each function takes the draws of one quantity as ``(C, N)``: C chains of N iterations each
(for the ensemble sampler, one chain a walker).

* :func:`split_rhat`: the potential scale reduction of Gelman et al. [1]_ section 11.4 on
  chains split in halves, ``sqrt(var+ / W)``, ``var+ = (n-1)/n W + B/n``.
* :func:`rank_normalized_rhat`: the same on rank-normalized draws and on the folded draws
  ``|x - median|``, the larger of the two (Vehtari et al. [2]_ section 4.2).
* :func:`ess`: the effective sample size ``C N / tau`` with ``tau = -1 + 2 Σ P_k``, the pair
  sums P_k of autocorrelations (combined over chains as in [1]_ eq. 11.7) truncated at the
  first negative pair and made monotone (Geyer's initial monotone sequence; [1]_ section
  11.5, [2]_ section 3.2). :func:`bulk_ess` applies it to the rank-normalized split chains.

References
----------
.. [1] Gelman, A., Carlin, J.B., Stern, H.S., Dunson, D.B., Vehtari, A. and Rubin, D.B.
   (2013). Bayesian Data Analysis, 3rd ed. CRC Press, chapter 11.
.. [2] Vehtari, A., Gelman, A., Simpson, D., Carpenter, B. and Bürkner, P.-C. (2021).
   Rank-normalization, folding, and localization: an improved R-hat for assessing
   convergence of MCMC. Bayesian Analysis 16(2), 667-718.
.. [3] Geyer, C.J. (1992). Practical Markov chain Monte Carlo. Statistical Science 7(4),
   473-483.
"""

from __future__ import annotations

import numpy as np
from scipy import special as sc
from scipy import stats

__all__ = ["split_chains", "split_rhat", "rank_normalize", "rank_normalized_rhat", "ess", "bulk_ess", "summarize"]


def _chains(x) -> np.ndarray:
    x = np.asarray(x, dtype=float)
    if x.ndim == 1:
        x = x[None, :]
    if x.ndim != 2 or x.shape[1] < 4:
        raise ValueError(f"expected draws of shape (chains, iterations >= 4), got {x.shape}")
    return x


def split_chains(x) -> np.ndarray:
    """``(C, N) -> (2C, N // 2)``: each chain cut in two halves (the middle draw of an odd N dropped)."""
    x = _chains(x)
    h = x.shape[1] // 2
    return np.concatenate([x[:, :h], x[:, x.shape[1] - h :]], axis=0)


def _rhat(x) -> float:
    """R-hat of chains (no splitting): BDA3 eq. (11.3)-(11.4)."""
    m, n = x.shape
    means = x.mean(axis=1)
    b = n * means.var(ddof=1)
    w = x.var(axis=1, ddof=1).mean()
    if not w > 0:
        return float("nan")
    var_plus = (n - 1) / n * w + b / n
    return float(np.sqrt(var_plus / w))


def split_rhat(x) -> float:
    """Split R-hat of Gelman et al. (2013) section 11.4."""
    return _rhat(split_chains(x))


def rank_normalize(x) -> np.ndarray:
    """Normal scores of the pooled ranks, ``Phi^-1((r - 3/8) / (S + 1/4))`` (Vehtari et al. 2021, eq. 14)."""
    x = np.asarray(x, dtype=float)
    r = stats.rankdata(x, method="average").reshape(x.shape)
    return sc.ndtri((r - 0.375) / (x.size + 0.25))


def rank_normalized_rhat(x) -> float:
    """max(bulk, tail) rank-normalized split R-hat (Vehtari et al. 2021, section 4.2)."""
    s = split_chains(x)
    bulk = _rhat(rank_normalize(s))
    folded = np.abs(s - np.median(s))
    tail = _rhat(rank_normalize(folded))
    return float(max(bulk, tail))


def _autocov(x) -> np.ndarray:
    """Autocovariance of each chain at lags 0..N-1 (biased, divided by N), by FFT: ``(C, N)``."""
    c, n = x.shape
    y = x - x.mean(axis=1, keepdims=True)
    size = 1 << (2 * n - 1).bit_length()
    f = np.fft.rfft(y, size, axis=1)
    acov = np.fft.irfft(f * np.conj(f), size, axis=1)[:, :n]
    return acov / n


def ess(x) -> float:
    """Effective sample size of ``(C, N)`` draws (BDA3 section 11.5; Geyer's initial monotone sequence)."""
    x = _chains(x)
    m, n = x.shape
    acov = _autocov(x)
    w = x.var(axis=1, ddof=1).mean()
    var_plus = w * (n - 1) / n
    if m > 1:
        var_plus += x.mean(axis=1).var(ddof=1)
    if not var_plus > 0:
        return float("nan")
    rho = 1.0 - (w - acov.mean(axis=0)) / var_plus  # BDA3 eq. (11.7)
    rho[0] = 1.0
    # pair sums P_k = rho_2k + rho_2k+1, positive and non-increasing (Geyer 1992)
    k_max = (n - 1) // 2
    pairs = rho[: 2 * k_max : 2] + rho[1 : 2 * k_max : 2]
    neg = np.flatnonzero(pairs <= 0)
    pairs = pairs[: neg[0]] if neg.size else pairs
    pairs = np.minimum.accumulate(pairs) if pairs.size else pairs
    tau = -1.0 + 2.0 * pairs.sum() if pairs.size else 1.0
    tau = max(tau, 1.0 / np.log10(m * n)) if m * n > 1 else tau  # guard as in Vehtari et al. (2021)
    return float(m * n / tau)


def bulk_ess(x) -> float:
    """Bulk effective sample size: :func:`ess` of the rank-normalized split chains (Vehtari et al. 2021)."""
    return ess(rank_normalize(split_chains(x)))


def summarize(draws, names) -> dict:
    """Diagnostics of every parameter of ``draws`` ``(C, N, p)``.

    Returns
    -------
    dict
        ``{name: {"split_rhat", "rank_normalized_split_rhat", "ess", "ess_bulk"}}``.
    """
    draws = np.asarray(draws, dtype=float)
    out = {}
    for j, name in enumerate(names):
        x = draws[:, :, j]
        out[name] = {
            "split_rhat": split_rhat(x),
            "rank_normalized_split_rhat": rank_normalized_rhat(x),
            "ess": ess(split_chains(x)),
            "ess_bulk": bulk_ess(x),
        }
    return out
