"""The fit's densities and censored likelihood against direct evaluation with scipy.stats.

Conventions checked (riskcalc/hazard/families.py): lognormal and lp3 describe log10 of the
quantity, so the density of the quantity is the density of y = log10 x times 1 / (x ln 10);
scipy's pearson3(skew, loc=mean, scale=sd) is the lp3 of log10 x; scipy's genextreme shape c
has the sign of the hydrology kappa (c > 0 bounded above), Hosking & Wallis (1997) A.8.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from riskcalc.hazard.families import FAMILIES
from riskcalc.hazard.fit import likelihood as L
from riskcalc.hazard.fit.peaks import PeakRecord

X = np.array([35.0, 120.0, 300.0, 640.0, 1500.0, 4200.0])
LN10 = np.log(10.0)


def scipy_dist(family, params):
    """The scipy.stats distribution of x (or of log10 x for the log families) with riskcalc's parameters."""
    if family == "normal":
        return stats.norm(loc=params[0], scale=params[1])
    if family == "lognormal":
        return stats.norm(loc=params[0], scale=params[1])
    if family == "lp3":
        return stats.pearson3(params[2], loc=params[0], scale=params[1])
    if family == "gumbel":
        return stats.gumbel_r(loc=params[0], scale=params[1])
    return stats.genextreme(params[2], loc=params[0], scale=params[1])


def scipy_logs(family, params, x):
    """(logpdf, logcdf, logsf) of x from scipy, the Jacobian of log10 included for the log families."""
    d = scipy_dist(family, params)
    if family in ("lognormal", "lp3"):
        y = np.log10(x)
        return d.logpdf(y) - np.log(x * LN10), d.logcdf(y), d.logsf(y)
    return d.logpdf(x), d.logcdf(x), d.logsf(x)


CASES = [
    ("normal", (600.0, 450.0)),
    ("lognormal", (2.5, 0.35)),
    ("lp3", (2.5, 0.35, 0.6)),
    ("lp3", (2.5, 0.35, -0.4)),
    ("lp3", (2.5, 0.30, 1.8)),
    ("gumbel", (400.0, 250.0)),
    ("gev", (400.0, 250.0, -0.2)),
    ("gev", (400.0, 250.0, 0.15)),
]


def cols(params):
    return tuple(np.array([[v]]) for v in params)


@pytest.mark.parametrize("family,params", CASES)
def test_logpdf_logcdf_logsf_match_scipy(family, params):
    # reference: direct evaluation with scipy.stats (the families' conventions in the module docstring)
    ref_pdf, ref_cdf, ref_sf = scipy_logs(family, params, X)
    got_pdf = L.logpdf(family, X, cols(params))[0]
    got_cdf = L.logcdf(family, X, cols(params))[0]
    got_sf = L.logsf(family, X, cols(params))[0]
    finite = np.isfinite(ref_pdf)
    assert np.array_equal(finite, np.isfinite(got_pdf))  # the same support
    np.testing.assert_allclose(got_pdf[finite], ref_pdf[finite], rtol=1e-10, atol=1e-10)
    both = np.isfinite(ref_cdf)
    np.testing.assert_allclose(got_cdf[both], ref_cdf[both], rtol=1e-9, atol=1e-12)
    both = np.isfinite(ref_sf)
    np.testing.assert_allclose(got_sf[both], ref_sf[both], rtol=1e-9, atol=1e-12)


def test_gev_outside_its_support():
    # kappa = 0.5, bounded above at location + scale / kappa = 400 + 500 = 900 (Hosking & Wallis 1997, A.8)
    p = cols((400.0, 250.0, 0.5))
    x = np.array([950.0])
    assert L.logpdf("gev", x, p)[0, 0] == -np.inf
    assert L.logcdf("gev", x, p)[0, 0] == 0.0
    assert L.logsf("gev", x, p)[0, 0] == -np.inf
    # kappa = -0.5, bounded below at 400 - 500 = -100
    p = cols((400.0, 250.0, -0.5))
    x = np.array([-150.0])
    assert L.logpdf("gev", x, p)[0, 0] == -np.inf
    assert L.logcdf("gev", x, p)[0, 0] == -np.inf
    assert L.logsf("gev", x, p)[0, 0] == 0.0


def test_pearson3_density_tends_to_the_normal_at_small_skew():
    # skew -> 0: the Pearson III is the normal; the density error is about skew * z^3 / 6 (Edgeworth term)
    z = np.linspace(-3, 3, 13)
    for g in (1e-3, 1e-5, 1e-8, 0.0):
        got = L._pearson3_logpdf_std(z, np.full_like(z, g))
        ref = stats.norm.logpdf(z)
        assert np.max(np.abs(got - ref)) <= abs(g) * 27 / 6 * 1.5 + 1e-12


def test_lp3_gamma_branch_against_scipy_gamma():
    # independent check of the Pearson III density through the gamma distribution (Hosking & Wallis A.9):
    # skew g > 0: (y - tau) / beta ~ Gamma(alpha), alpha = 4 / g^2, beta = sd g / 2, tau = mean - 2 sd / g
    m, s, g = 2.5, 0.35, 0.9
    alpha, beta, tau = 4 / g**2, s * g / 2, m - 2 * s / g
    y = np.log10(X)
    ref = stats.gamma.logpdf((y - tau) / beta, alpha) - np.log(beta) - np.log(X * LN10)
    np.testing.assert_allclose(L.logpdf("lp3", X, cols((m, s, g)))[0], ref, rtol=1e-10)


def record():
    """Exact peaks, interval years (closed, one-sided above, one-sided below) and two threshold periods."""
    return PeakRecord(
        years=np.arange(1990, 1996),
        peaks=X,
        interval_years=np.array([1980, 1981, 1982]),
        lower=np.array([200.0, 900.0, 0.0]),
        upper=np.array([400.0, np.inf, 150.0]),
        thresholds=np.array([1000.0, 2500.0]),
        periods=np.array([[1900, 1949], [1950, 1979]]),
        below=np.array([47, 30]),
    )


@pytest.mark.parametrize("family,params", CASES)
def test_censored_likelihood_matches_direct_scipy_evaluation(family, params):
    # Stedinger & Cohn (1986) eq. (4): sum log f(x) + sum log[F(b) - F(a)] + sum n log F(T), evaluated here
    # term by term with scipy.stats cdf and logpdf
    rec = record()
    d = scipy_dist(family, params)

    def cdf(v):
        v = np.asarray(v, float)
        if family in ("lognormal", "lp3"):
            with np.errstate(divide="ignore"):
                return np.where(v > 0, d.cdf(np.log10(np.where(v > 0, v, 1.0))), 0.0)
        return d.cdf(v)

    ref = scipy_logs(family, params, rec.peaks)[0].sum()
    ref += np.log(cdf(rec.upper) - cdf(rec.lower)).sum()  # a lower bound of 0 is F(0) (0 for the log families)
    ref += (rec.below * np.log(cdf(rec.thresholds))).sum()
    got = L.log_likelihood(rec, family, cols(params))[0]
    if not np.isfinite(ref):
        assert got == -np.inf
    else:
        assert got == pytest.approx(ref, rel=1e-9, abs=1e-9)


def test_interval_far_in_the_upper_tail_keeps_precision():
    # an interval whose probability is ~1e-30: F(b) - F(a) cancels in double precision, sf(a) - sf(b) does not
    p = cols((0.0, 1.0))
    got = L.log_interval("normal", np.array([11.0]), np.array([12.0]), p)[0, 0]
    ref = np.log(stats.norm.sf(11.0) - stats.norm.sf(12.0))
    assert got == pytest.approx(ref, rel=1e-12)


def test_every_family_of_the_table_has_a_likelihood():
    for name, fam in FAMILIES.items():
        params = cols(dict(CASES)[name] if name in dict(CASES) else (1.0,) * len(fam.parameters))
        assert np.all(np.isfinite(L.logpdf(name, np.array([500.0]), params)))
