"""Frequency families against scipy.stats and published frequency factors."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from riskcalc.hazard import families as fam

P4 = np.array([0.5, 0.1, 0.01, 0.002])

# Bulletin 17B (1982), Appendix 3: Pearson Type III frequency factors K(skew, AEP).
# Values computed here with scipy.stats.pearson3.isf from the published definition (shared references
# section 3); the printed table agrees to the third decimal except two cells one unit lower [from memory],
# so the tolerance is atol 0.002.
B17B_APPENDIX3 = {
    -1.0: [0.164, 1.128, 1.588, 1.741],
    -0.5: [0.083, 1.216, 1.955, 2.283],
    0.0: [0.000, 1.282, 2.326, 2.878],
    0.5: [-0.083, 1.323, 2.686, 3.487],
    1.0: [-0.164, 1.340, 3.023, 4.088],
    2.0: [-0.307, 1.303, 3.605, 5.215],
}


@pytest.mark.parametrize("skew", sorted(B17B_APPENDIX3))
def test_lp3_frequency_factors_bulletin17b_appendix3(skew):
    # log10 Q = mean + K sd with mean 0, sd 1 gives K directly
    k = np.log10(fam.lp3_quantile(P4, [[0.0]], [[1.0]], [[skew]]))[0]
    np.testing.assert_allclose(k, B17B_APPENDIX3[skew], atol=0.002)


def test_lp3_small_skew_branch_joins_the_gamma_branch():
    # The two evaluations of the Pearson III sf (Temme's expansion below SMALL_SKEW, the incomplete gamma
    # above) must agree at the join; tolerance 1e-8 relative, the expansion's truncation error there.
    z = np.linspace(-6, 8, 57)
    g = fam.SMALL_SKEW
    for sign in (1, -1):
        inside = fam._pearson3_sf_std(z, sign * g * (1 - 1e-9))
        outside = fam._pearson3_sf_std(z, sign * g * (1 + 1e-9))
        np.testing.assert_allclose(inside, outside, rtol=1e-8, atol=0)
    # skew 0 is the normal exactly, and a tiny skew is within O(skew) of it
    np.testing.assert_allclose(fam._pearson3_sf_std(z, 0.0), stats.norm.sf(z), rtol=1e-12, atol=0)
    np.testing.assert_allclose(fam._pearson3_sf_std(z, 1e-9), stats.norm.sf(z), rtol=1e-6, atol=0)


def test_lp3_small_negative_skew_far_tail_against_edgeworth():
    # For |skew| = 3e-4 the second-order Edgeworth expansion of the Pearson III about the normal
    # (Kendall & Stuart, Advanced Theory of Statistics, vol. 1, ch. 6; cumulants of the gamma distribution)
    # has an O(skew^3 z^9) error below 1e-6 relative at z <= 7. scipy.special.gammainc is 15 % off here.
    g, z = -3e-4, np.array([3.0, 4.5, 6.0, 7.0])
    phi = np.exp(-z * z / 2) / np.sqrt(2 * np.pi)
    he2, he3, he5 = z * z - 1, z**3 - 3 * z, z**5 - 10 * z**3 + 15 * z
    edgeworth = stats.norm.sf(z) + phi * (g / 6 * he2 + 1.5 * g * g / 24 * he3 + g * g / 72 * he5)
    np.testing.assert_allclose(fam._pearson3_sf_std(z, g), edgeworth, rtol=1e-6)


def test_lp3_small_skew_quantile_inverts_sf():
    p = np.array([0.999, 0.5, 0.01, 1e-4, 1e-8])
    for g in (1e-7, -1e-4, 4e-3, -4.9e-3):
        k = fam._pearson3_isf_std(p, g)
        np.testing.assert_allclose(fam._pearson3_sf_std(k, g), p, rtol=1e-10)


def test_lp3_bounds_are_exact():
    # skew > 0: lower bound at log10 Q = mean - 2 sd / skew; below it AEP is exactly 1
    m, s, g = 3.0, 0.3, 0.8
    bound = 10 ** (m - 2 * s / g)
    p = fam.lp3_aep(np.array([bound * 0.999, bound * 0.5]), [[m]], [[s]], [[g]])
    assert np.all(p == 1.0)
    # skew < 0: upper bound at mean + 2 sd / |skew|; above it AEP is exactly 0
    ub = 10 ** (m + 2 * s / 0.8)
    p = fam.lp3_aep(np.array([ub * 1.001, ub * 3]), [[m]], [[s]], [[-g]])
    assert np.all(p == 0.0)


def test_gev_bound_and_sign_convention():
    # Hosking & Wallis (1997), Appendix A.8 [from memory]: shape kappa > 0 is bounded above at xi + alpha / kappa
    xi, a, k = 100.0, 20.0, 0.25
    ub = xi + a / k
    assert fam.gev_aep(np.array([ub + 1e-9, ub + 50]), [[xi]], [[a]], [[k]]).max() == 0.0
    assert fam.gev_aep(np.array([ub - 1.0]), [[xi]], [[a]], [[k]])[0, 0] > 0
    # kappa < 0 is bounded below at the same formula: AEP exactly 1 below it
    lb = xi + a / -k
    assert fam.gev_aep(np.array([lb - 1.0]), [[xi]], [[a]], [[-k]])[0, 0] == 1.0
    # Hosking & Wallis A.8 quantile [from memory] x(F) = xi + alpha/kappa (1 - (-ln F)^kappa), worked by hand at F = 0.99
    expected = xi + a / k * (1 - (-np.log(0.99)) ** k)
    assert fam.gev_quantile(np.array([0.01]), [[xi]], [[a]], [[k]])[0, 0] == pytest.approx(expected, rel=1e-12)


def test_shapes_broadcast_params_against_grid():
    x = np.geomspace(10, 1e4, 7)
    params = {"mean": np.array([2.5, 2.7, 3.0]), "sd": np.array([0.2, 0.3, 0.25]), "skew": np.array([-0.4, 0.0, 0.6])}
    p = fam.aep("lp3", params, x)
    assert p.shape == (3, 7)
    assert np.all(np.diff(p, axis=1) <= 0)
    assert fam.quantile("lp3", params, P4).shape == (3, 4)


def _rel_close(a, b, rtol, atol=1e-300):
    a, b = np.asarray(a), np.asarray(b)
    return np.all(np.abs(a - b) <= rtol * np.abs(b) + atol)


finite = dict(allow_nan=False, allow_infinity=False)


@settings(max_examples=60, deadline=None)
@given(
    mean=st.floats(1.0, 4.0, **finite),
    sd=st.floats(0.05, 0.6, **finite),
    skew=st.one_of(st.floats(-2.0, -1e-2, **finite), st.floats(1e-2, 2.5, **finite)),
    p=st.floats(1e-8, 0.999, **finite),
)
def test_lp3_matches_scipy_pearson3(mean, sd, skew, p):
    # scipy.stats.pearson3 of log10 Q with loc = mean, scale = sd (shared references section 3).
    # Skews are kept at |skew| >= 0.01, where scipy's incomplete gamma is accurate (see the tests above),
    # and above -2, where an AEP of 1e-8 is not yet pinned against the upper bound by floating point.
    x = 10 ** stats.pearson3.isf(p, skew, loc=mean, scale=sd)
    q = fam.lp3_quantile(np.array([p]), [[mean]], [[sd]], [[skew]])[0, 0]
    assert q == pytest.approx(x, rel=1e-8)
    got = fam.lp3_aep(np.array([x]), [[mean]], [[sd]], [[skew]])[0, 0]
    assert _rel_close(got, stats.pearson3.sf(np.log10(x), skew, loc=mean, scale=sd), 1e-7)
    # sf o isf identity, tails included
    assert got == pytest.approx(p, rel=1e-6)


@settings(max_examples=60, deadline=None)
@given(
    loc=st.floats(-50, 500, **finite),
    scale=st.floats(1, 200, **finite),
    shape=st.one_of(st.floats(-0.45, -1e-6, **finite), st.floats(1e-6, 0.45, **finite), st.just(0.0)),
    p=st.floats(1e-9, 0.999, **finite),
)
def test_gev_matches_scipy_genextreme(loc, scale, shape, p):
    # shapes of magnitude below 1e-6 (but not 0) are left out: scipy's genextreme is wrong at subnormal
    # shapes (isf(0.5, 5e-324) = 0, where the Gumbel limit gives -ln ln 2)
    x = stats.genextreme.isf(p, shape, loc=loc, scale=scale)
    assert fam.gev_quantile(np.array([p]), [[loc]], [[scale]], [[shape]])[0, 0] == pytest.approx(
        x, rel=1e-9, abs=1e-9 * scale
    )
    got = fam.gev_aep(np.array([x]), [[loc]], [[scale]], [[shape]])[0, 0]
    assert got == pytest.approx(stats.genextreme.sf(x, shape, loc=loc, scale=scale), rel=1e-7)
    assert got == pytest.approx(p, rel=1e-6)


@settings(max_examples=40, deadline=None)
@given(loc=st.floats(-50, 500, **finite), scale=st.floats(0.5, 200, **finite), p=st.floats(1e-9, 0.999, **finite))
def test_gumbel_normal_lognormal_match_scipy(loc, scale, p):
    x = stats.gumbel_r.isf(p, loc=loc, scale=scale)
    assert fam.gumbel_quantile(np.array([p]), [[loc]], [[scale]])[0, 0] == pytest.approx(x, rel=1e-9, abs=1e-9)
    assert fam.gumbel_aep(np.array([x]), [[loc]], [[scale]])[0, 0] == pytest.approx(
        stats.gumbel_r.sf(x, loc=loc, scale=scale), rel=1e-8
    )
    x = stats.norm.isf(p, loc=loc, scale=scale)
    assert fam.normal_quantile(np.array([p]), [[loc]], [[scale]])[0, 0] == pytest.approx(x, rel=1e-9, abs=1e-9)
    assert fam.normal_aep(np.array([x]), [[loc]], [[scale]])[0, 0] == pytest.approx(p, rel=1e-8)
    m, s = loc / 200.0 + 1.0, scale / 400.0
    x = 10 ** stats.norm.isf(p, loc=m, scale=s)
    assert fam.lognormal_quantile(np.array([p]), [[m]], [[s]])[0, 0] == pytest.approx(x, rel=1e-9)
    assert fam.lognormal_aep(np.array([x]), [[m]], [[s]])[0, 0] == pytest.approx(p, rel=1e-7)


def test_gumbel_is_gev_with_zero_shape():
    x = np.linspace(0, 400, 11)
    np.testing.assert_allclose(
        fam.gev_aep(x, [[100.0]], [[30.0]], [[0.0]]), fam.gumbel_aep(x, [[100.0]], [[30.0]]), rtol=1e-14
    )
    np.testing.assert_allclose(
        fam.gev_aep(x, [[100.0]], [[30.0]], [[1e-7]]), fam.gumbel_aep(x, [[100.0]], [[30.0]]), rtol=1e-5
    )


def test_unknown_family():
    with pytest.raises(ValueError, match="unknown family 'weibull'"):
        fam.get_family("weibull")
