"""Tests of riskcalc.sensitivity against closed-form sensitivity indices.

Tolerance policy for the Sobol' estimates: SALib reports the half-width of a 95 %
bootstrap interval (``*_conf``). The bootstrap treats the scrambled Sobol'
points as independent draws, so it overstates the error of the quasi-random
estimate; the checks below require the exact value to lie inside the reported
interval, and also that the interval itself is narrow, so that the check can fail.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from riskcalc.sensitivity.salib import (
    Factor,
    ModelOutputError,
    SobolResult,
    max_conf_width,
    morris_screening,
    problem,
    realization_factor_map,
    sobol_frame,
    sobol_indices,
    sobol_until_converged,
)

PI = np.pi

# Ishigami & Homma (1990), Proc. ISUMA '90, 398-403; Saltelli et al. (2008) Global
# Sensitivity Analysis: The Primer, ch. 4 (V13 = 8 b^2 pi^8 / 225); a = 7, b = 0.1
ISHIGAMI_S1 = np.array([0.313905, 0.442411, 0.0])
ISHIGAMI_ST = np.array([0.557589, 0.442411, 0.243684])
ISHIGAMI_S13 = 0.243684  # = ST1 - S1_1 = V13 / V; all other S2 are 0


def ishigami(X, a=7.0, b=0.1):
    x1, x2, x3 = X[:, 0], X[:, 1], X[:, 2]
    return np.sin(x1) + a * np.sin(x2) ** 2 + b * x3**4 * np.sin(x1)


ISHIGAMI_FACTORS = [Factor(f"x{i}", "uniform", -PI, PI) for i in (1, 2, 3)]


# Linear additive model Y = sum a_i X_i with independent X_i: V_i = a_i^2 var(X_i),
# no interactions, so S1_i = ST_i = a_i^2 var_i / sum_j a_j^2 var_j
# (Saltelli et al. 2008, The Primer, ch. 1.2.3). The fourth factor does not enter.
LIN_A = np.array([1.0, 2.0, -3.0])
LIN_FACTORS = [
    Factor("x1", "uniform", 0.0, 1.0),  # var 1/12
    Factor("x2", "uniform", 0.0, 2.0),  # var 4/12
    Factor("x3", "uniform", -1.0, 1.0),  # var 4/12
    Factor("inert", "uniform", 0.0, 1.0),
]
LIN_S = np.array([1.0, 16.0, 36.0, 0.0]) / 53.0


def linear(X):
    return X[:, :3] @ LIN_A


# --------------------------------------------------------------------------
# factors and the problem dict
# --------------------------------------------------------------------------
def test_problem_dict_maps_kinds_to_salib():
    fs = [
        Factor("u", "uniform", 1.0, 3.0),
        Factor("t", "triangular", low=0.0, mode=1.0, high=4.0),
        Factor("n", "normal", mean=10.0, sd=2.0, group="g"),
        Factor("l", "lognormal", mean=0.0, sd=0.3, group="g"),
        Factor("lu", "loguniform", 0.1, 10.0),
    ]
    p = problem(fs)
    assert p["num_vars"] == 5
    assert p["names"] == ["u", "t", "n", "l", "lu"]
    assert p["dists"] == ["unif", "triang", "norm", "lognorm", "logunif"]
    # SALib 1.6 triangular bounds: [start, end, peak as a fraction of the width]
    assert p["bounds"] == [[1.0, 3.0], [0.0, 4.0, 0.25], [10.0, 2.0], [0.0, 0.3], [0.1, 10.0]]
    assert p["groups"] == ["u", "t", "g", "g", "lu"]
    assert "groups" not in problem(ISHIGAMI_FACTORS)


@pytest.mark.parametrize(
    "kwargs",
    [
        dict(name="a", kind="uniform", low=2.0, high=1.0),
        dict(name="a", kind="normal", low=0.0, high=1.0),
        dict(name="a", kind="normal", mean=0.0, sd=0.0),
        dict(name="a", kind="triangular", low=0.0, mode=1.0, high=1.0),
        dict(name="a", kind="loguniform", low=0.0, high=1.0),
        dict(name="a", kind="beta", low=0.0, high=1.0),
        dict(name="", kind="uniform", low=0.0, high=1.0),
    ],
)
def test_bad_factor_refused(kwargs):
    with pytest.raises(ValueError):
        Factor(**kwargs)


def test_duplicate_factor_names_refused():
    with pytest.raises(ValueError, match="unique"):
        problem([Factor("a", "uniform", 0, 1), Factor("a", "uniform", 0, 1)])


# --------------------------------------------------------------------------
# Sobol' indices against closed forms
# --------------------------------------------------------------------------
def test_ishigami_first_and_total_order():
    r = sobol_indices(ishigami, ISHIGAMI_FACTORS, n=2**13, seed=20240611)
    assert isinstance(r, SobolResult)
    assert r.factors == ("x1", "x2", "x3")
    assert r.n == 2**13 and r.n_evaluations == 2**13 * 5
    # the intervals must be narrow for the check to mean anything (about 0.02 at N = 2^13)
    assert np.all(r.S1_conf < 0.035) and np.all(r.ST_conf < 0.035)
    # exact values inside the reported 95 % bootstrap intervals (see module docstring)
    np.testing.assert_array_less(np.abs(r.S1 - ISHIGAMI_S1), r.S1_conf)
    np.testing.assert_array_less(np.abs(r.ST - ISHIGAMI_ST), r.ST_conf)


def test_ishigami_second_order():
    r = sobol_indices(ishigami, ISHIGAMI_FACTORS, n=2**12, seed=7, second_order=True)
    assert r.n_evaluations == 2**12 * 8
    exact = np.array([[np.nan, 0.0, ISHIGAMI_S13], [np.nan, np.nan, 0.0]])
    for i, j in [(0, 1), (0, 2), (1, 2)]:
        assert r.S2_conf[i, j] < 0.07  # about 0.05 at N = 2^12
        assert abs(r.S2[i, j] - exact[i, j]) < r.S2_conf[i, j]
    s2 = r.s2_frame()
    assert list(s2.columns) == ["output", "factor_i", "factor_j", "S2", "S2_conf"]
    assert len(s2) == 3


def test_linear_additive_closed_form_and_inert_factor():
    r = sobol_indices(linear, LIN_FACTORS, n=2**12, seed=11)
    assert np.all(r.S1_conf < 0.05) and np.all(r.ST_conf < 0.05)
    np.testing.assert_array_less(np.abs(r.S1 - LIN_S), r.S1_conf + 1e-12)
    np.testing.assert_array_less(np.abs(r.ST - LIN_S), r.ST_conf + 1e-12)
    # the inert factor: rows of A and A_B^inert give identical outputs, so both
    # estimators are exactly 0 (rounding slack 1e-12), and within their interval of 0
    assert abs(r.ST[3]) <= r.ST_conf[3] + 1e-12
    assert abs(r.ST[3]) < 1e-12 and abs(r.S1[3]) < 1e-12


def test_inert_factor_in_nonadditive_model_within_interval():
    # Ishigami plus a fourth factor that does not enter: its ST is 0
    # (Saltelli et al. 2008, ch. 4); the estimate must sit within its own interval of 0.
    fs = ISHIGAMI_FACTORS + [Factor("dummy", "uniform", 0.0, 1.0)]
    r = sobol_indices(ishigami, fs, n=2**10, seed=3)
    assert abs(r.ST[3]) <= r.ST_conf[3] + 1e-12
    assert abs(r.S1[3]) <= r.S1_conf[3] + 1e-12
    # and the true total of x3 (0.24) is clearly resolved from 0 at this N
    assert r.ST[2] - r.ST_conf[2] > 0.1


def test_linear_additive_nonuniform_factors():
    # Y = X1 + X2 + X3: S1_i = ST_i = var_i / sum var. Variances (closed form):
    # normal sd 1 -> 1; triangular(0, 1, 3) -> (a^2+b^2+c^2-ab-ac-bc)/18 = 7/18;
    # lognormal ln-sd 0.25 -> (exp(s^2) - 1) exp(2 mu + s^2)
    s = 0.25
    var = np.array([1.0, 7.0 / 18.0, (np.exp(s**2) - 1.0) * np.exp(s**2)])
    exact = var / var.sum()
    fs = [
        Factor("n", "normal", mean=5.0, sd=1.0),
        Factor("t", "triangular", low=0.0, mode=1.0, high=3.0),
        Factor("l", "lognormal", mean=0.0, sd=s),
    ]
    r = sobol_indices(lambda X: X.sum(axis=1), fs, n=2**12, seed=5)
    assert np.all(r.ST_conf < 0.05)
    np.testing.assert_array_less(np.abs(r.S1 - exact), r.S1_conf)
    np.testing.assert_array_less(np.abs(r.ST - exact), r.ST_conf)


def test_groups_add_up_for_additive_model():
    # for an additive model the index of a group is the sum of its members' indices
    fs = [
        Factor("x1", "uniform", 0.0, 1.0, group="g12"),
        Factor("x2", "uniform", 0.0, 2.0, group="g12"),
        Factor("x3", "uniform", -1.0, 1.0),
        Factor("inert", "uniform", 0.0, 1.0),
    ]
    r = sobol_indices(linear, fs, n=2**12, seed=13)
    assert r.factors == ("g12", "x3", "inert")
    assert r.n_evaluations == 2**12 * (3 + 2)
    exact = np.array([17.0, 36.0, 0.0]) / 53.0
    np.testing.assert_array_less(np.abs(r.ST - exact), r.ST_conf + 1e-12)
    np.testing.assert_array_less(np.abs(r.S1 - exact), r.S1_conf + 1e-12)
    assert np.all(r.ST_conf < 0.1) and np.all(r.S1_conf < 0.1)  # narrow enough that the check can fail


# --------------------------------------------------------------------------
# the model contract: several outputs, one call, checks
# --------------------------------------------------------------------------
def test_dict_outputs_one_call_and_tidy_frames():
    calls = []

    def model(X):
        calls.append(X.shape)
        assert not X.flags.writeable
        return {"AFP": ishigami(X), "EAD": linear(np.c_[X, X[:, :1]])}

    res = sobol_indices(model, ISHIGAMI_FACTORS, n=256, seed=1)
    assert calls == [(256 * 5, 3)]
    assert list(res) == ["AFP", "EAD"]
    df = res["AFP"].to_frame()
    assert list(df.columns) == ["output", "factor", "S1", "S1_conf", "ST", "ST_conf"]
    assert df["output"].tolist() == ["AFP"] * 3
    both = sobol_frame(res)
    assert len(both) == 6 and set(both["output"]) == {"AFP", "EAD"}
    d = res["EAD"].as_dict()
    assert set(d) == {"x1", "x2", "x3"}
    assert all(type(v) is float for f in d.values() for v in f.values())
    assert d["x2"]["ST"] == pytest.approx(float(res["EAD"].ST[1]), abs=0)
    only = sobol_indices(model, ISHIGAMI_FACTORS, n=256, seed=1, outputs=["EAD"])
    assert list(only) == ["EAD"]
    np.testing.assert_array_equal(only["EAD"].ST, res["EAD"].ST)


def test_same_seed_identical_different_seed_differs():
    a = sobol_indices(ishigami, ISHIGAMI_FACTORS, n=512, seed=99)
    b = sobol_indices(ishigami, ISHIGAMI_FACTORS, n=512, seed=99)
    c = sobol_indices(ishigami, ISHIGAMI_FACTORS, n=512, seed=100)
    for k in ("S1", "S1_conf", "ST", "ST_conf"):
        np.testing.assert_array_equal(getattr(a, k), getattr(b, k))
    assert not np.array_equal(a.S1, c.S1)
    assert not np.array_equal(a.ST_conf, c.ST_conf)


@pytest.mark.parametrize("bad", [0, -5, None, 1.5, True])
def test_seed_must_be_positive_int(bad):
    with pytest.raises(ValueError, match="seed"):
        sobol_indices(ishigami, ISHIGAMI_FACTORS, n=64, seed=bad)


@pytest.mark.parametrize("n", [1000, 0, 1, -64, 100.0])
def test_n_not_power_of_two_raises(n):
    with pytest.raises(ValueError, match="power of two"):
        sobol_indices(ishigami, ISHIGAMI_FACTORS, n=n, seed=1)


def test_non_finite_output_raises_naming_output_and_count():
    def model(X):
        ead = linear(np.c_[X, X[:, :1]])
        ead[[0, 5, 9]] = [np.nan, np.inf, -np.inf]
        return {"AFP": ishigami(X), "EAD": ead}

    with pytest.raises(ModelOutputError, match=r"output 'EAD': 3 of 320 .*not finite"):
        sobol_indices(model, ISHIGAMI_FACTORS, n=64, seed=1)


def test_wrong_output_shape_and_missing_output_raise():
    with pytest.raises(ModelOutputError, match="expected shape"):
        sobol_indices(lambda X: X, ISHIGAMI_FACTORS, n=64, seed=1)
    with pytest.raises(ModelOutputError, match="'ALL' not returned"):
        sobol_indices(lambda X: {"AFP": X[:, 0]}, ISHIGAMI_FACTORS, n=64, seed=1, outputs="ALL")


def test_constant_output_gives_nan_with_note():
    res = sobol_indices(lambda X: {"AFP": np.zeros(len(X)), "EAD": ishigami(X)}, ISHIGAMI_FACTORS, n=64, seed=1)
    afp = res["AFP"]
    assert np.all(np.isnan(afp.S1)) and np.all(np.isnan(afp.ST_conf))
    assert "constant" in afp.note
    assert res["EAD"].note == "" and np.all(np.isfinite(res["EAD"].ST))
    assert max_conf_width(res) == max_conf_width(res["EAD"])
    assert np.isnan(max_conf_width(afp))


# --------------------------------------------------------------------------
# convergence
# --------------------------------------------------------------------------
def test_until_converged_reaches_target_and_matches_direct_run():
    calls = []

    def model(X):
        calls.append(len(X))
        return linear(X)

    out = sobol_until_converged(model, LIN_FACTORS, n_start=64, target_width=0.05, n_max=8192, seed=21)
    assert out.converged and out.warnings == ()
    assert max_conf_width(out.result) < 0.05
    ns = [h[0] for h in out.history]
    assert ns == [64 * 2**k for k in range(len(ns))] and ns[-1] == out.n
    assert len(ns) > 1 and out.history[-2][1]["y"] >= 0.05
    # only the new rows are evaluated at each doubling ...
    assert calls == [64 * 6] + [n // 2 * 6 for n in ns[1:]]
    # ... and the result equals a direct run at the final N
    direct = sobol_indices(linear, LIN_FACTORS, n=out.n, seed=21)
    for k in ("S1", "S1_conf", "ST", "ST_conf"):
        np.testing.assert_array_equal(getattr(out.result, k), getattr(direct, k))


def test_until_converged_reports_wide_intervals_when_not_converged():
    out = sobol_until_converged(ishigami, ISHIGAMI_FACTORS, n_start=16, target_width=0.01, n_max=32, seed=4)
    assert not out.converged and out.n == 32
    assert any("not converged" in w for w in out.warnings)
    assert max_conf_width(out.result) > 0.1  # at N = 32 the half-widths are about 0.3
    assert any("half-width above 0.1" in w for w in out.warnings)


# --------------------------------------------------------------------------
# Morris screening
# --------------------------------------------------------------------------
def test_morris_linear_model_closed_form_and_inert_factor():
    # Morris (1991): for y = sum a_i x_i every elementary effect of x_i is the same,
    # here a_i (high_i - low_i) per full-range step on the unit scale, so
    # mu_star = |a_i| (high_i - low_i), sigma = 0, and an inert factor has mu_star = 0.
    r = morris_screening(linear, LIN_FACTORS, trajectories=20, levels=4, seed=8)
    exact = np.abs(LIN_A * np.array([1.0, 2.0, 2.0]))
    np.testing.assert_allclose(r.mu_star[:3], exact, rtol=1e-9)
    np.testing.assert_allclose(r.mu[:3], LIN_A * [1.0, 2.0, 2.0], rtol=1e-9)
    np.testing.assert_allclose(r.sigma, 0.0, atol=1e-9)
    assert r.mu_star[3] == pytest.approx(0.0, abs=1e-12)
    assert r.mu_star_conf[3] == pytest.approx(0.0, abs=1e-12)
    df = r.to_frame()
    assert list(df.columns) == ["output", "factor", "mu", "mu_star", "mu_star_conf", "sigma"]
    assert r.n_evaluations == 20 * 5


def test_morris_inert_factor_nonlinear_model():
    # Ishigami with a fourth factor that does not enter: its elementary effects are all 0
    fs = ISHIGAMI_FACTORS + [Factor("dummy", "uniform", 0.0, 1.0)]
    r = morris_screening(ishigami, fs, trajectories=30, seed=2)
    assert r.mu_star[3] == pytest.approx(0.0, abs=1e-12)
    assert np.all(r.mu_star[:3] > 1.0)  # the active factors are clearly separated from it


def test_morris_refuses_unbounded_factor():
    with pytest.raises(ValueError, match="bounded"):
        morris_screening(linear, [Factor("n", "normal", mean=0.0, sd=1.0)], seed=1)


# --------------------------------------------------------------------------
# realization factor
# --------------------------------------------------------------------------
def test_realization_factor_map_hand_worked():
    # weights 1/8, 1/4, 1/8, 1/2 -> cumulative 0.125, 0.375, 0.5, 1.0 (exact in binary);
    # u maps to k when c[k-1] <= u < c[k]; u = 1 -> last index
    w = [0.125, 0.25, 0.125, 0.5]
    u = [0.0, 0.1, 0.125, 0.374, 0.375, 0.49, 0.5, 0.99, 1.0]
    assert realization_factor_map(u, w).tolist() == [0, 0, 1, 1, 2, 2, 3, 3, 3]
    # unnormalized weights give the same map
    assert realization_factor_map(u, np.array(w) * 8).tolist() == [0, 0, 1, 1, 2, 2, 3, 3, 3]
    # shape kept
    assert realization_factor_map(np.array([[0.0, 1.0]]), w).shape == (1, 2)


def test_realization_factor_map_with_severity_order():
    # severities 3, 1, 4, 2 -> order = argsort = [1, 3, 0, 2]; weights in that order
    # 0.25, 0.5, 0.125, 0.125 -> cumulative 0.25, 0.75, 0.875, 1.0
    w = np.array([0.125, 0.25, 0.125, 0.5])
    order = np.argsort([3.0, 1.0, 4.0, 2.0])
    got = realization_factor_map([0.1, 0.25, 0.74, 0.75, 0.8, 0.875, 1.0], w, order=order)
    assert got.tolist() == [1, 3, 3, 0, 0, 2, 2]


def test_realization_factor_map_frequencies_and_zero_weight():
    # a midpoint grid of M values draws realization r exactly M w_r times
    w = np.array([0.5, 0.0, 0.25, 0.25, 0.0])
    m = 1024
    idx = realization_factor_map((np.arange(m) + 0.5) / m, w)
    np.testing.assert_array_equal(np.bincount(idx, minlength=5), m * w)
    assert realization_factor_map(1.0, w) == 3  # last index of positive weight


@pytest.mark.parametrize(
    "u, w, order",
    [
        ([1.2], [0.5, 0.5], None),
        ([np.nan], [0.5, 0.5], None),
        ([0.5], [0.5, -0.1], None),
        ([0.5], [0.0, 0.0], None),
        ([0.5], [0.5, 0.5], [0, 0]),
    ],
)
def test_realization_factor_map_bad_input(u, w, order):
    with pytest.raises(ValueError):
        realization_factor_map(u, w, order=order)


def test_realization_factor_in_sobol():
    # Y = value of the drawn realization; realizations equally likely with values
    # 0, 1, 2, 3 -> the only factor explains all variance: S1 = ST = 1
    vals = np.array([0.0, 1.0, 2.0, 3.0])
    fs = [Factor("hazard", "uniform", 0.0, 1.0), Factor("inert", "uniform", 0.0, 1.0)]
    r = sobol_indices(lambda X: vals[realization_factor_map(X[:, 0], np.full(4, 0.25))], fs, n=1024, seed=6)
    np.testing.assert_array_less(np.abs(r.ST - [1.0, 0.0]), r.ST_conf + 1e-12)
    np.testing.assert_array_less(np.abs(r.S1 - [1.0, 0.0]), r.S1_conf + 1e-12)
    assert np.all(r.ST_conf < 0.1) and np.all(r.S1_conf < 0.1)  # narrow enough that the check can fail
    assert isinstance(r.to_frame(), pd.DataFrame)
