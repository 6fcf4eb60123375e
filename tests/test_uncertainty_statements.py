"""The uncertainty statements of a run, each against an independent computation: the clustered Monte Carlo
standard error against independent reruns, the F-N area against the incremental ALL, the failure-mode
bounds and common-cause adjustment by hand, the MCMC autocorrelation time against an AR(1) closed form."""

from __future__ import annotations

import numpy as np
import pytest

from riskcalc.config.scenario import load_scenario
from riskcalc.hazard import HazardEnsemble, quantity_grid
from riskcalc.response import FailureMode, FragilityCurve, RatingCurve
from riskcalc.response import uncertain as unc
from riskcalc.response.chain import ResponseChain
from riskcalc.response.consequences import ConsequenceCurves
from riskcalc.risk.assess import assess
from riskcalc.risk.integrate import fn_levels
from riskcalc.risk.propagate import propagate
from riskcalc.risk.standard_errors import clustered_standard_error, integrated_autocorrelation_time

RATING = RatingCurve(np.array([10.0, 100.0, 1000.0, 10000.0, 1e5]), np.array([1.0, 2.0, 4.0, 7.0, 11.0]))


def _chain(life_factor=None):
    st = np.array([2.0, 4.0, 6.0, 9.0])
    cons = ConsequenceCurves(
        st, np.array([0, 1e6, 5e6, 2e7]), np.zeros(4), np.array([0.0, 2.0, 12.0, 60.0]), np.array([0.0, 0.5, 1.0, 2.0])
    )
    params = [unc.rating_offset(0.4), unc.fragility_shift(0, "breach", 0.3)]
    if life_factor is not None:
        params.append(life_factor)
    return ResponseChain(
        failure_modes=(FailureMode("breach", (FragilityCurve("normal", median=5.0, spread=0.6),)),),
        consequences=cons,
        rating=RATING,
        uncertain=unc.UncertainInputs(tuple(params), 1),
    )


def _ensemble(rng, R):
    # a posterior-like sample of zero-skew LP3 (log-normal) curves
    return HazardEnsemble(
        family="lp3",
        weights=np.full(R, 1.0 / R),
        params={"mean": rng.normal(2.6, 0.15, R), "sd": rng.uniform(0.2, 0.4, R), "skew": np.zeros(R)},
    )


def test_clustered_standard_error_matches_the_spread_of_independent_reruns():
    # 30 reruns, each with a new ensemble drawn from the same parameter distribution and a new seed, with 4
    # response draws per realization. The spread of the 30 predictive AFPs is the real Monte Carlo error; the
    # reported (clustered) standard error must match it within a factor 1.6 either way (the sd of 30 values
    # has a relative standard error of about 13 %, so this is a > 3-sigma band). Treating the 4 x R draws as
    # independent must understate it (here the hazard realization carries most of the variance).
    chain = _chain()
    grid = quantity_grid(_ensemble(np.random.default_rng(0), 400), 0.999, 1e-6, 250)
    preds, clustered, naive = [], [], []
    for i in range(30):
        rng = np.random.default_rng(100 + i)
        ens = _ensemble(rng, 150)
        prop = propagate(ens, chain, grid, seed=1000 + i, draws_per_realization=4, workers=1)
        v = prop.column("afp")
        preds.append(prop.weights @ v)
        clustered.append(clustered_standard_error(v, prop.weights, prop.realization))
        naive.append(np.sqrt(np.sum((prop.weights * (v - prop.weights @ v)) ** 2)))
    observed = np.std(preds, ddof=1)
    reported = np.sqrt(np.mean(np.square(clustered)))
    assert 1 / 1.6 < reported / observed < 1.6
    assert np.sqrt(np.mean(np.square(naive))) < 0.75 * reported


def test_clustered_standard_error_by_hand():
    # two realizations of weight 1/2, two draws each of weight 1/4: values (1, 3) and (5, 7)
    # realization means 2 and 6, overall mean 4: SE^2 = (1/2)^2 (2-4)^2 + (1/2)^2 (6-4)^2 = 2
    v, w, r = np.array([1.0, 3.0, 5.0, 7.0]), np.full(4, 0.25), np.array([0, 0, 1, 1])
    assert clustered_standard_error(v, w, r) == pytest.approx(np.sqrt(2.0), rel=1e-14)
    # one draw per realization: the usual sqrt(sum w^2 (v - mean)^2)
    assert clustered_standard_error(v, w, np.arange(4)) == pytest.approx(np.sqrt(np.sum((0.25 * (v - 4)) ** 2)))


def test_area_under_the_predictive_fn_curve_is_the_incremental_all():
    # Identity: for each draw, the integral over N of F(N) = P(N_inc >= N) is the expected incremental life
    # loss, so the area under the predictive F-N (mean over draws) equals the predictive incremental ALL of
    # the same draws. F is decreasing: on fine levels the lower and upper step sums bracket the area. The
    # life-loss factor is triangular (bounded), so the levels can cover every value that occurs.
    chain = _chain(unc.consequence_factor("life_loss", "triangular", low=0.5, mode=1.0, high=2.0))
    ens = _ensemble(np.random.default_rng(7), 300)
    grid = quantity_grid(ens, 0.999, 1e-6, 300)
    levels = fn_levels(1e-4, 60.0 * 2.0 * 1.01, per_decade=400)
    prop = propagate(ens, chain, grid, seed=5, draws_per_realization=3, fn_levels=levels, workers=1)
    F = prop.weights @ prop.fn_per_draw
    all_inc = prop.weights @ prop.column("all_incremental")
    widths = np.diff(np.r_[0.0, levels])
    lower = np.sum(F * widths)
    upper = np.sum(np.r_[prop.weights @ prop.column("afp"), F[:-1]] * widths)
    assert lower <= all_inc <= upper
    assert (upper - lower) / all_inc < 0.02


def test_run_fn_carries_the_response_uncertainty(scenario_factory):
    # with knowledge uncertainty in the response the predictive F-N is the mean of the per-draw curves, not the
    # nominal-response curve; its first level is the smallest incremental life loss that occurs (below 1 here)
    path = scenario_factory(
        folder="fnunc", toml_extra="[uncertainty]\ndraws_per_realization = 2\n[grid]\npoints = 200\n"
    )
    path.write_text(
        path.read_text().replace(
            '[rating]\ntable = "rating.csv"\n', '[rating]\ntable = "rating.csv"\nknowledge_sd = 0.3\n'
        )
    )
    res = assess(load_scenario(path))
    prop = res.propagation
    np.testing.assert_allclose(res.fn.predictive, prop.weights @ prop.fn_per_draw, rtol=1e-12)
    assert res.fn.levels[0] < 1.0
    nominal = prop.point_masses_predictive @ res.scenario.model.on(prop.points).fn_integrand(res.fn.levels)[0]
    assert not np.allclose(res.fn.predictive, nominal, rtol=1e-3)


def test_series_bounds_and_common_cause_adjustment_by_hand():
    # two failure modes with P1 = 0.2 and P2 = 0.3 at a stage (table fragilities, flat there):
    # independent P_f = 1 - 0.8 x 0.7 = 0.44; series bounds max = 0.3 and min(1, 0.5) = 0.5 (Ang & Tang 1984,
    # section 6.2); proportional adjustment P_i P_f / (P1 + P2): 0.176 and 0.264, which add up to 0.44
    st = np.array([0.0, 10.0])
    fms = (
        FailureMode("a", (FragilityCurve("table", stage=st, probability=np.array([0.2, 0.2])),)),
        FailureMode("b", (FragilityCurve("table", stage=st, probability=np.array([0.3, 0.3])),)),
    )
    z = np.zeros(2)
    chain = ResponseChain(failure_modes=fms, consequences=ConsequenceCurves(st, z, z, z, z))
    G = chain.integrands(np.array([5.0]))[0]
    v = dict(zip(chain.output_names(), G))
    assert v["afp"] == pytest.approx(0.44, rel=1e-14)
    assert v["afp_lower_bound"] == pytest.approx(0.3) and v["afp_upper_bound"] == pytest.approx(0.5)
    assert v["afp_fm_adjusted:a"] == pytest.approx(0.176, rel=1e-12)
    assert v["afp_fm_adjusted:b"] == pytest.approx(0.264, rel=1e-12)


def test_autocorrelation_time_of_an_ar1_chain():
    # AR(1) x_t = phi x_{t-1} + e_t has rho(t) = phi^t, so tau = (1 + phi) / (1 - phi) (closed form; Sokal 1997)
    rng = np.random.default_rng(3)
    phi, n = 0.8, 100_000
    e = rng.standard_normal((4, n))
    x = np.empty((4, n))
    x[:, 0] = e[:, 0] / np.sqrt(1 - phi**2)
    for t in range(1, n):
        x[:, t] = phi * x[:, t - 1] + e[:, t]
    assert integrated_autocorrelation_time(list(x)) == pytest.approx((1 + phi) / (1 - phi), rel=0.1)
    assert integrated_autocorrelation_time([rng.standard_normal(20_000)]) == pytest.approx(1.0, abs=0.1)


def test_mcmc_ordered_ensemble_reports_its_autocorrelation(scenario_factory):
    rng = np.random.default_rng(9)
    rows = ["mean,sd,skew,chain,iteration"]
    for c in range(2):
        m = 2.6
        for it in range(150):
            m = 2.6 + 0.9 * (m - 2.6) + 0.05 * rng.standard_normal()  # a sticky chain
            rows.append(f"{m:.6f},{0.3:.3f},0,{c + 1},{it}")
    path = scenario_factory(folder="mcmc", ensemble="\n".join(rows) + "\n", toml_extra="[grid]\npoints = 200\n")
    s = assess(load_scenario(path)).summary()["ensemble_size"]
    assert s["assumes_independent_members"] is False
    assert s["autocorrelation_time"]["annual_failure_probability"] > 3
    plain = scenario_factory(folder="plain", toml_extra="[grid]\npoints = 200\n")
    assert assess(load_scenario(plain)).summary()["ensemble_size"]["assumes_independent_members"] is True


def test_crest_stage_check_reads_the_real_crest(scenario_factory):
    # [checks] crest_stage: the AEP of reaching it on the predictive curve is the mean over realizations of
    # their own AEPs (linearity), larger than on the mode curve here; without natural variability it is the
    # predictive AEP of the rating's discharge at the crest (direct evaluation of the ensemble)
    from riskcalc.risk.integrate import chance_in_years

    path = scenario_factory(folder="crest", toml_extra="[grid]\npoints = 400\n[checks]\ncrest_stage = 6.5\n")
    sc = load_scenario(path)
    res = assess(sc)
    c = res.crest_stage
    q = sc.model.rating.discharge_at(np.array([6.5]))[0]
    assert c.quantity_at_crest == pytest.approx(q, rel=1e-9)
    p_direct = sc.ensemble.weights @ sc.ensemble.aep(np.array([q]))[:, 0]
    assert c.aep_predictive == pytest.approx(p_direct, rel=1e-9)
    members = sc.ensemble.aep(np.array([q]))[:, 0]
    assert c.chance_in_years_predictive == pytest.approx(sc.ensemble.weights @ chance_in_years(members, 50), rel=1e-9)
    assert c.ratio_predictive_to_mode == pytest.approx(c.aep_predictive / c.aep_mode)
    s = res.summary()["mode_understatement"]
    assert s["crest_stage_check"]["crest_stage"] == 6.5 and "crest_check" in s
    # with natural variability of stage the crest is reached more often than the bare rating says
    path2 = scenario_factory(folder="crest2", toml_extra="[grid]\npoints = 400\n[checks]\ncrest_stage = 6.5\n")
    path2.write_text(
        path2.read_text().replace(
            '[rating]\ntable = "rating.csv"\n', '[rating]\ntable = "rating.csv"\nnatural_sd = 0.4\n'
        )
    )
    res2 = assess(load_scenario(path2))
    assert res2.crest_stage.aep_predictive > c.aep_predictive
    # the per-realization AEPs (used for the n-year chance) average to the predictive AEP
    assert res2.crest_stage.chance_in_years_predictive <= chance_in_years(res2.crest_stage.aep_predictive, 50)
