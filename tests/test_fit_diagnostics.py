"""Split R-hat and effective sample size on chains whose answer is known."""

from __future__ import annotations

import numpy as np
import pytest

from riskcalc.hazard.fit import diagnostics as D


def ar1(rng, rho, chains, n):
    """Stationary AR(1) chains with unit variance: the integrated autocorrelation time is (1 + rho) / (1 - rho)."""
    e = rng.standard_normal((chains, n))
    x = np.empty((chains, n))
    x[:, 0] = e[:, 0]
    for t in range(1, n):
        x[:, t] = rho * x[:, t - 1] + np.sqrt(1 - rho**2) * e[:, t]
    return x


def test_independent_chains_give_rhat_one_and_ess_close_to_the_draw_count():
    # Gelman et al. (2013) BDA3 section 11.4-11.5: well-mixed chains give R-hat near 1 and ESS near M N
    x = np.random.default_rng(0).standard_normal((8, 1000))
    assert D.split_rhat(x) == pytest.approx(1.0, abs=0.005)
    assert D.rank_normalized_rhat(x) == pytest.approx(1.0, abs=0.005)
    assert D.ess(x) == pytest.approx(8000, rel=0.1)
    assert D.bulk_ess(x) == pytest.approx(8000, rel=0.1)


def test_ess_of_ar1_chains_matches_the_autocorrelation_time():
    # AR(1) with coefficient rho: tau = (1 + rho) / (1 - rho), ESS = M N (1 - rho) / (1 + rho)
    rng = np.random.default_rng(1)
    for rho in (0.5, 0.9):
        x = ar1(rng, rho, 10, 4000)
        exact = x.size * (1 - rho) / (1 + rho)
        assert D.ess(x) == pytest.approx(exact, rel=0.15)


def test_chains_that_disagree_give_a_large_rhat():
    # chains around different means have not mixed: R-hat well above the 1.01 of Vehtari et al. (2021)
    rng = np.random.default_rng(2)
    x = rng.standard_normal((4, 500)) + np.array([[0.0], [0.0], [1.0], [1.0]])
    assert D.split_rhat(x) > 1.1
    assert D.rank_normalized_rhat(x) > 1.1


def test_split_rhat_sees_a_trend_within_each_chain():
    # a drift inside every chain is invisible to the unsplit R-hat (chains agree) but the split halves differ
    rng = np.random.default_rng(3)
    n = 1000
    x = rng.standard_normal((4, n)) * 0.3 + np.linspace(-1, 1, n)
    assert D._rhat(x) < 1.01
    assert D.split_rhat(x) > 1.2


def test_folded_rhat_sees_chains_with_different_spreads():
    # Vehtari et al. (2021) section 4.2: equal means, different variances: the bulk R-hat is near 1, the
    # folded (tail) R-hat is not
    rng = np.random.default_rng(4)
    x = rng.standard_normal((4, 1000)) * np.array([[1.0], [1.0], [3.0], [3.0]])
    assert D.split_rhat(x) < 1.02
    assert D.rank_normalized_rhat(x) > 1.05


def test_rank_normalization_is_invariant_to_a_monotone_transform():
    x = np.random.default_rng(5).standard_normal((4, 300))
    assert D.rank_normalized_rhat(np.exp(x)) == pytest.approx(D.rank_normalized_rhat(x), abs=1e-12)
    assert D.bulk_ess(np.exp(x)) == pytest.approx(D.bulk_ess(x), rel=1e-12)


def test_too_short_chains_are_refused():
    with pytest.raises(ValueError):
        D.ess(np.zeros((2, 3)))
