"""Posterior draws, posterior mode and MLE of `riskcalc fit` against published and outside results.

Monte Carlo tolerances are stated multiples of the standard error, with the effective sample
size the fit reports (bulk ESS of the kept draws).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, optimize, stats

from riskcalc.hazard.curves import predictive_aep
from riskcalc.hazard.fit import fit_peaks
from riskcalc.hazard.fit.fit import log_posterior_fn, maximize
from riskcalc.hazard.fit.peaks import PeakRecord
from riskcalc.hazard.fit.priors import make_prior

N_SE = 4.5  # tolerance in standard errors for the Monte Carlo checks


def scipy_gev_mle(x):
    """scipy.stats.genextreme.fit from its default start and from a Gumbel-moment start; the better of the two
    (the default start can stop at a poor local optimum: c = 0.16 against -0.06 on the sample below)."""
    scale0 = np.std(x) * np.sqrt(6) / np.pi
    fits = [stats.genextreme.fit(x), stats.genextreme.fit(x, 0.0, loc=np.mean(x) - 0.5772 * scale0, scale=scale0)]
    return max(fits, key=lambda f: stats.genextreme.logpdf(x, f[0], loc=f[1], scale=f[2]).sum())


def exact_record(x):
    return PeakRecord(years=np.arange(1950, 1950 + len(x)), peaks=np.asarray(x, float))


@pytest.fixture(scope="module")
def normal_fit():
    rng = np.random.default_rng(314)
    x = rng.normal(800.0, 250.0, size=15)
    return x, fit_peaks(exact_record(x), "normal", draws=4000, seed=11)


def test_normal_posterior_of_mu_and_sigma2_is_the_closed_form(normal_fit):
    # Gelman et al. (2013) BDA3, section 3.2, prior p(mu, sigma^2) ∝ 1/sigma^2:
    # sigma^2 | y ~ Inv-chi^2(n - 1, s^2), mu | y ~ t_{n-1}(ybar, s^2 / n), so E[mu | y] = ybar
    x, fit = normal_fit
    n, ybar, s2 = x.size, x.mean(), x.var(ddof=1)
    mu, sd = fit.draws[:, 0], fit.draws[:, 1]
    diag = fit.diagnostics()["parameters"]
    se_mu = mu.std() / np.sqrt(diag["mean"]["ess_bulk"])
    assert abs(mu.mean() - ybar) < N_SE * se_mu
    # the exact posterior sd of mu: s / sqrt(n) * sqrt((n - 1) / (n - 3)) (Student t with n - 1 df)
    sd_mu = np.sqrt(s2 / n * (n - 1) / (n - 3))
    assert mu.std() == pytest.approx(sd_mu, rel=0.06)  # sd of an sd estimate with ESS ~ 2000: ~2 %, t tails
    # sigma^2: the share of draws below each exact quantile of the scaled inverse chi-square
    ess_sd = diag["sd"]["ess_bulk"]
    sigma2 = sd**2
    for p in (0.05, 0.25, 0.5, 0.75, 0.95):
        q = (n - 1) * s2 / stats.chi2.isf(p, n - 1)  # P(sigma^2 <= q) = p
        share = np.mean(sigma2 <= q)
        assert abs(share - p) < N_SE * np.sqrt(p * (1 - p) / ess_sd), (p, share)


def test_normal_posterior_mode_and_mle(normal_fit):
    # the prior is flat in (mu, log sigma), so the mode there is the MLE: ybar and sqrt(SS / n)
    x, fit = normal_fit
    assert fit.mle["mean"] == pytest.approx(x.mean(), rel=1e-8)
    assert fit.mle["sd"] == pytest.approx(x.std(ddof=0), rel=1e-6)
    assert fit.mode["sd"] == pytest.approx(x.std(ddof=0), rel=1e-6)


def test_normal_predictive_aep_is_the_student_t(normal_fit):
    # BDA3 section 3.2: a future observation is t_{n-1}(ybar, s^2 (1 + 1/n)); the predictive (expected)
    # AEP of x = ybar + K_p s is Pr[T_{n-1} > K_p sqrt(n / (n + 1))] (Beard 1960; Stedinger 1983)
    x, fit = normal_fit
    n, ybar, s = x.size, x.mean(), x.std(ddof=1)
    ens = fit.ensemble()
    ess = min(d["ess_bulk"] for d in fit.diagnostics()["parameters"].values())
    for p in (0.1, 0.01):
        q = ybar + stats.norm.isf(p) * s
        exact = stats.t.sf(stats.norm.isf(p) * np.sqrt(n / (n + 1)), n - 1)
        got = predictive_aep(ens, np.array([q]))[0]
        member = ens.aep(np.array([q]))[:, 0]
        se = member.std() / np.sqrt(ess)
        assert abs(got - exact) < N_SE * se, (p, got, exact, se)
        assert got > p  # the expected-probability effect (references.md section 1: N = 15 lies between 10 and 20)


def test_lognormal_posterior_is_the_normal_model_of_log10():
    # BDA3 section 3.2 on y = log10 x: E[mu | y] = mean of log10 x; sd of the posterior of mu is that of t_{n-1}
    rng = np.random.default_rng(2718)
    x = 10 ** rng.normal(2.7, 0.25, size=25)
    fit = fit_peaks(exact_record(x), "lognormal", draws=2000, seed=5)
    y = np.log10(x)
    mu = fit.draws[:, 0]
    ess = fit.diagnostics()["parameters"]["mean"]["ess_bulk"]
    assert abs(mu.mean() - y.mean()) < N_SE * mu.std() / np.sqrt(ess)
    n, s2 = y.size, y.var(ddof=1)
    sigma2 = fit.draws[:, 1] ** 2
    ess_sd = fit.diagnostics()["parameters"]["sd"]["ess_bulk"]
    q = (n - 1) * s2 / stats.chi2.isf(0.5, n - 1)  # posterior median of sigma^2
    assert abs(np.mean(sigma2 <= q) - 0.5) < N_SE * np.sqrt(0.25 / ess_sd)


def test_gev_and_gumbel_mode_with_flat_priors_is_scipys_mle():
    # with flat priors on location, log scale and shape the posterior mode (in those coordinates) is the MLE;
    # reference: scipy.stats.genextreme.fit and gumbel_r.fit (maximum likelihood, Nelder-Mead)
    x = stats.genextreme.rvs(-0.12, loc=420.0, scale=150.0, size=70, random_state=np.random.default_rng(99))
    rec = exact_record(x)
    prior = make_prior("gev", shape_prior="flat")
    post = log_posterior_fn(rec, "gev", prior)
    from riskcalc.hazard.fit.fit import _starts

    theta, _ = maximize(post, _starts(rec, "gev"))
    c, loc, scale = scipy_gev_mle(x)
    ours = stats.genextreme.logpdf(x, theta[2], loc=theta[0], scale=np.exp(theta[1])).sum()
    theirs = stats.genextreme.logpdf(x, c, loc=loc, scale=scale).sum()
    assert ours >= theirs - 1e-6  # at least as high a likelihood, evaluated by scipy
    np.testing.assert_allclose([theta[0], np.exp(theta[1]), theta[2]], [loc, scale, c], rtol=2e-4, atol=2e-4)
    fit = fit_peaks(rec, "gumbel", draws=400, seed=3)
    loc_g, scale_g = stats.gumbel_r.fit(x)
    np.testing.assert_allclose([fit.mode["location"], fit.mode["scale"]], [loc_g, scale_g], rtol=1e-5)
    np.testing.assert_allclose([fit.mle["location"], fit.mle["scale"]], [loc_g, scale_g], rtol=1e-5)


def test_nile_annual_flow_volumes_gev_and_lp3_mle_against_scipy():
    # a real open annual series: the annual flow volume of the Nile at Aswan, 1871-1970 (10^8 m^3),
    # as shipped by statsmodels (statsmodels.datasets.nile; Cobb 1978). Not peaks, but an annual series to
    # fit; reference: scipy.stats.genextreme.fit and pearson3.fit on log10 (maximum likelihood)
    sm = pytest.importorskip("statsmodels.api")
    data = sm.datasets.nile.load_pandas().data
    assert len(data) == 100 and data["year"].iloc[0] == 1871
    x = data["volume"].to_numpy(float)
    rec = exact_record(x)
    fit = fit_peaks(rec, "gev", draws=400, seed=8, shape_prior="flat", burn=300)  # the MLE needs no long chain
    c, loc, scale = scipy_gev_mle(x)
    ours = stats.genextreme.logpdf(x, fit.mle["shape"], loc=fit.mle["location"], scale=fit.mle["scale"]).sum()
    assert ours >= stats.genextreme.logpdf(x, c, loc=loc, scale=scale).sum() - 1e-6
    np.testing.assert_allclose([fit.mle["location"], fit.mle["scale"], fit.mle["shape"]], [loc, scale, c], rtol=1e-3)
    # flat prior: the mode is the MLE
    np.testing.assert_allclose(list(fit.mode.values()), list(fit.mle.values()), rtol=1e-5)
    y = np.log10(x)
    g, m, s = stats.pearson3.fit(y, stats.skew(y), loc=y.mean(), scale=y.std())
    lp3 = fit_peaks(rec, "lp3", draws=400, seed=8, burn=300)
    ours = stats.pearson3.logpdf(y, lp3.mle["skew"], loc=lp3.mle["mean"], scale=lp3.mle["sd"]).sum()
    assert ours >= stats.pearson3.logpdf(y, g, loc=m, scale=s).sum() - 1e-6
    np.testing.assert_allclose([lp3.mle["mean"], lp3.mle["sd"], lp3.mle["skew"]], [m, s, g], rtol=2e-3, atol=2e-3)


def test_geophysical_prior_is_the_beta_6_9_on_kappa_plus_half():
    # Martins & Stedinger (2000): pi(kappa) = Beta(p = 6, q = 9) on kappa + 0.5, support (-0.5, 0.5);
    # mean p / (p + q) - 0.5 = -0.1 and sd sqrt(pq / ((p + q)^2 (p + q + 1))) = 0.1225 [from memory: -0.10, 0.122]
    prior = make_prior("gev", shape_prior="geophysical")

    def dens(k):
        return float(np.exp(prior.log_density(np.array([[0.0, 0.0, k]]))[0]))

    total = integrate.quad(dens, -0.5, 0.5)[0]
    mean = integrate.quad(lambda k: k * dens(k), -0.5, 0.5)[0]
    var = integrate.quad(lambda k: (k - mean) ** 2 * dens(k), -0.5, 0.5)[0]
    assert total == pytest.approx(1.0, abs=1e-9)
    assert mean == pytest.approx(-0.1, abs=1e-9)
    assert np.sqrt(var) == pytest.approx(0.1225, abs=5e-4)
    assert dens(-0.5) == 0.0 and dens(0.6) == 0.0
    # the density is scipy's beta density
    for k in (-0.3, -0.1, 0.2):
        assert dens(k) == pytest.approx(stats.beta.pdf(k + 0.5, 6, 9), rel=1e-12)


def test_gev_mode_with_the_geophysical_prior_is_the_penalized_mle():
    # the generalized maximum-likelihood estimator of Martins & Stedinger (2000): maximize
    # sum log f(x; xi, alpha, kappa) + log pi(kappa), evaluated here entirely with scipy.stats
    x = stats.genextreme.rvs(-0.3, loc=300.0, scale=100.0, size=25, random_state=np.random.default_rng(5))
    fit = fit_peaks(exact_record(x), "gev", draws=400, seed=2)

    def neg(t):
        v = stats.genextreme.logpdf(x, t[2], loc=t[0], scale=np.exp(t[1])).sum() + stats.beta.logpdf(t[2] + 0.5, 6, 9)
        return -v if np.isfinite(v) else 1e300

    start = [fit.mode["location"] * 1.02, np.log(fit.mode["scale"] * 0.97), 0.0]
    ref = optimize.minimize(
        neg, start, method="Nelder-Mead", options={"xatol": 1e-10, "fatol": 1e-12, "maxiter": 20000}
    )
    ref = optimize.minimize(
        neg, ref.x, method="Nelder-Mead", options={"xatol": 1e-10, "fatol": 1e-12, "maxiter": 20000}
    )
    np.testing.assert_allclose(
        [fit.mode["location"], np.log(fit.mode["scale"]), fit.mode["shape"]], ref.x, rtol=1e-4, atol=1e-4
    )
    # the prior pulls the shape from the MLE towards its mode (-0.115)
    assert abs(fit.mode["shape"] - (-1.5 / 13)) < abs(fit.mle["shape"] - (-1.5 / 13))


def test_lp3_regional_skew_prior_dominates_when_its_mse_is_tiny():
    # a normal prior N(G, MSE) on the skew (Bulletin 17C's regional skew as a prior, Reis et al. 2005):
    # with MSE = 1e-4 the posterior of the skew is close to G whatever the station skew
    rng = np.random.default_rng(17)
    x = 10 ** stats.pearson3.rvs(0.8, loc=2.6, scale=0.3, size=40, random_state=rng)
    fit = fit_peaks(exact_record(x), "lp3", draws=600, seed=4, regional_skew=-0.2, regional_skew_mse=1e-4, burn=500)
    g = fit.draws[:, 2]
    # the posterior sd cannot exceed the prior sd 0.01 by much; its mean lies within a few prior sd of G
    assert abs(g.mean() + 0.2) < 0.03
    assert g.std() < 0.012
    flat = fit_peaks(exact_record(x), "lp3", draws=400, seed=4, burn=300)
    assert flat.mode["skew"] == pytest.approx(flat.mle["skew"], abs=1e-6)
    assert abs(flat.mode["skew"] + 0.2) > 0.3  # the station skew is far from the regional one


def test_censored_mle_against_a_direct_scipy_likelihood():
    # Stedinger & Cohn (1986): exact, interval and below-threshold years; the MLE of the fit against
    # scipy.optimize on the likelihood written with scipy.stats
    rng = np.random.default_rng(41)
    sysx = stats.gumbel_r.rvs(loc=500.0, scale=160.0, size=30, random_state=rng)
    hist = stats.gumbel_r.rvs(loc=500.0, scale=160.0, size=80, random_state=rng)
    t = 1000.0
    above = hist[hist >= t]
    rec = PeakRecord(
        years=np.arange(2000, 2000 + 30 + above.size),
        peaks=np.concatenate([sysx, above]),
        interval_years=np.array([1990]),
        lower=np.array([600.0]),
        upper=np.array([800.0]),
        thresholds=np.array([t]),
        periods=np.array([[1900, 1979]]),
        below=np.array([80 - above.size]),
    )
    fit = fit_peaks(rec, "gumbel", draws=400, seed=1)

    def neg(th):
        loc, scale = th[0], np.exp(th[1])
        d = stats.gumbel_r(loc=loc, scale=scale)
        v = d.logpdf(rec.peaks).sum() + np.log(d.cdf(800.0) - d.cdf(600.0)) + rec.below[0] * d.logcdf(t)
        return -v

    ref = optimize.minimize(
        neg, [rec.peaks.mean(), np.log(rec.peaks.std())], method="Nelder-Mead", options={"xatol": 1e-10, "fatol": 1e-12}
    )
    np.testing.assert_allclose([fit.mle["location"], np.log(fit.mle["scale"])], ref.x, rtol=1e-5, atol=1e-6)
    # the historical information narrows the posterior of the scale against the systematic record alone
    alone = fit_peaks(exact_record(sysx), "gumbel", draws=400, seed=1)
    assert fit.draws[:, 1].std() < alone.draws[:, 1].std()


def test_seeded_and_reproducible():
    x = stats.gumbel_r.rvs(loc=100.0, scale=30.0, size=20, random_state=np.random.default_rng(0))
    a = fit_peaks(exact_record(x), "gev", draws=400, seed=123, burn=300)
    b = fit_peaks(exact_record(x), "gev", draws=400, seed=123, burn=300)
    c = fit_peaks(exact_record(x), "gev", draws=400, seed=124, burn=300)
    assert np.array_equal(a.draws, b.draws) and np.array_equal(a.log_posterior, b.log_posterior)
    assert not np.array_equal(a.draws, c.draws)
    assert a.size == 400 and sorted(set(a.chain.tolist())) == list(range(a.walkers))


def test_requested_draw_count_is_kept_exactly_and_ordered_by_chain():
    x = stats.norm.rvs(50.0, 10.0, size=12, random_state=np.random.default_rng(3))
    fit = fit_peaks(exact_record(x), "normal", draws=333, seed=9)
    assert fit.size == 333
    key = fit.chain * 10**9 + fit.iteration
    assert np.all(np.diff(key) > 0)
    # the draws' log posterior is the posterior the fit maximized (up to the same constant)
    post = log_posterior_fn(fit.record, "normal", fit.prior)
    th = np.column_stack([fit.draws[:, 0], np.log(fit.draws[:, 1])])
    np.testing.assert_allclose(post(th), fit.log_posterior, rtol=1e-10)
    assert fit.log_posterior.max() <= fit.mode_log_posterior + 1e-9
