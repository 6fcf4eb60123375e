"""The risk chain against closed forms and identities."""

import numpy as np
import pytest
from scipy import special as sc
from scipy import stats

from riskcalc.risk.assess import assess
from riskcalc.response.consequences import ConsequenceCurves
from riskcalc.risk.integrate import cell_masses, chance_in_years, evaluation_points
from riskcalc.response.chain import ResponseChain
from riskcalc.response import FailureMode, FragilityCurve, StageSpread, combine_independent
from riskcalc.config.scenario import load_scenario


def zero_consequences(stage=(0.0, 1.0)):
    z = np.zeros(len(stage))
    return ConsequenceCurves(np.asarray(stage, float), z, z, z, z)


def test_cornell_closed_form_power_law_hazard_lognormal_fragility():
    # Cornell, Jalayer, Hamburger & Foutch (2002), J. Struct. Eng. 128(4), 526-533 [from memory]:
    # H(x) = k0 x^-k with a lognormal fragility (median theta, log-sd beta) gives
    # annual failure frequency H(theta) exp(k^2 beta^2 / 2); k0 = 1e-4, k = 3, theta = 1, beta = 0.4
    # -> 2.0544332e-4 (shared references section 5, computed). Tolerance 0.1 %: integration error on
    # 4,000 log-spaced cells.
    k0, k, theta, beta = 1e-4, 3.0, 1.0, 0.4
    grid = np.geomspace(1e-3, 1e3, 4000)
    p = np.minimum(1.0, k0 * grid**-k)
    model = ResponseChain(
        failure_modes=(FailureMode("m", (FragilityCurve("lognormal", median=theta, spread=beta),)),),
        consequences=zero_consequences(),
    )
    G = model.integrands(evaluation_points(grid, True))
    afp = cell_masses(p) @ G[:, 0]
    assert afp == pytest.approx(k0 * theta**-k * np.exp(k * k * beta * beta / 2), rel=1e-3)
    assert afp == pytest.approx(2.0544332e-4, rel=1e-3)


def test_gauss_hermite_natural_variability_normal_fragility():
    # closed form: a normal fragility (mean mu, sd s_f) seen through stage scatter N(0, s_h) is a normal
    # fragility with sd sqrt(s_f^2 + s_h^2) (convolution of normals, common practice)
    frag = FragilityCurve("normal", median=5.0, spread=0.4)
    model = ResponseChain(
        failure_modes=(FailureMode("m", (frag,)),),
        consequences=zero_consequences(),
        natural=StageSpread(0.3),
        hermite_nodes=24,
    )
    h = np.linspace(3, 7, 41)
    got = model.integrands(h)[:, 0]
    np.testing.assert_allclose(got, sc.ndtr((h - 5.0) / np.hypot(0.4, 0.3)), atol=1e-10)


def test_independent_failure_modes_and_the_dependent_lower_bound():
    # Ang & Tang (1984) vol. II, section 6.2: max_i P_i <= P_series <= 1 - prod(1 - P_i); two table failure
    # modes with P = 0.1 / 0.2, 0.5 / 0.5 and 1e-12 / 3e-12 at three stages, through the chain's outputs
    p = np.array([[0.1, 0.5, 1e-12], [0.2, 0.5, 3e-12]])
    np.testing.assert_allclose(combine_independent(p), [1 - 0.9 * 0.8, 0.75, 4e-12], rtol=1e-9)
    # monotone tables need increasing probabilities: order the stages by probability
    order = np.array([2, 0, 1])  # 1e-12 < 0.1 < 0.5 (and 3e-12 < 0.2 < 0.5)
    stages = np.array([1.0, 2.0, 3.0])
    fms = tuple(
        FailureMode(f"m{i}", (FragilityCurve("table", stage=stages, probability=p[i][order]),)) for i in range(2)
    )
    chain = ResponseChain(failure_modes=fms, consequences=zero_consequences((0.0, 4.0)))
    G = chain.integrands(stages)
    names = chain.output_names()
    np.testing.assert_allclose(G[:, names.index("afp")], (p[0] + p[1] - p[0] * p[1])[order], rtol=1e-12)  # incl.-excl.
    np.testing.assert_allclose(G[:, names.index("afp_lower_bound")], np.maximum(p[0], p[1])[order], rtol=1e-12)
    np.testing.assert_allclose(G[:, names.index("afp_fm:m1")], p[1][order], rtol=1e-12)


def test_node_chain_multiplies():
    a = FragilityCurve("normal", median=4.0, spread=1.0)
    b = FragilityCurve("table", stage=np.array([0.0, 10.0]), probability=np.array([0.2, 0.6]))
    mode = FailureMode("chain", (a, b))
    h = np.array([3.0, 4.0, 6.5])
    np.testing.assert_allclose(mode.prob(h), a.prob(h) * b.prob(h), rtol=1e-14)


def test_linearity_identity_deterministic_and_aleatory(scenario_factory):
    # the weighted mean of per-realization risks equals the risk on the predictive masses (design identity)
    for extra in ("", "[rating]\ntable = 'rating.csv'\nnatural_sd = 0.3\n"):
        path = scenario_factory(
            folder=f"lin{len(extra)}",
            rating=None if extra else "discharge_m3s,stage_m\n10,1.0\n100,2.0\n1000,4.0\n10000,7.0\n100000,11.0\n",
            toml_extra="",
        )
        if extra:
            (path.parent / "rating.csv").write_text(
                "discharge_m3s,stage_m\n10,1.0\n100,2.0\n1000,4.0\n10000,7.0\n100000,11.0\n"
            )
            path.write_text(path.read_text() + extra)
        res = assess(load_scenario(path))
        prop = res.propagation
        for i, name in enumerate(prop.names):
            mean = prop.weights @ prop.values[:, i]
            pred = prop.point_masses_predictive @ prop.integrands[:, i]
            assert mean == pytest.approx(pred, rel=1e-10, abs=1e-300), name
        assert (
            res.headline["annual_failure_probability"]["predictive"]
            > res.headline["annual_failure_probability"]["mode"]
        )


def test_step_fragility_gives_predictive_aep_of_the_step(scenario_factory):
    # a step fragility at stage h* gives AFP = predictive AEP of h* (design identity); the step is a
    # table rising from 0 to 1 over 1e-6 m, placed on the grid as breakpoints
    h_star = 5.5
    tmp = scenario_factory(folder="step0")
    (tmp.parent / "step.csv").write_text(f"stage_m,probability\n{h_star - 1e-6},0\n{h_star},1\n")
    modes = """
    [[failure_modes]]
    name = "step"
      [[failure_modes.nodes]]
      kind = "table"
      table = "step.csv"
    """
    path = scenario_factory(folder="step0", modes=modes)
    sc_ = load_scenario(path)
    res = assess(sc_)
    q_star = sc_.model.rating.discharge_at(np.array([h_star]))[0]
    p_star = sc_.ensemble.weights @ sc_.ensemble.aep(np.array([q_star]))[:, 0]
    assert res.headline["annual_failure_probability"]["predictive"] == pytest.approx(p_star, rel=1e-4)


def test_ead_against_closed_form_normal_stage_hazard(scenario_factory):
    # A stage-frequency ensemble of one normal curve (mean 3, sd 1) and damage c (h - h0)+ with certain
    # breach: EAD = c E[(H - h0)+] = c [sd phi(z0) - (h0 - mu) Phi(-z0)] (normal partial expectation,
    # closed form). Midpoint and trapezoid rules on the probability axis (common practice) within 0.1 %.
    mu, sd, h0, c = 3.0, 1.0, 2.5, 1.0e6
    conseq = f"stage_m,damage_breach_usd\n{h0},0\n20,{c * (20 - h0)}\n"
    modes = """
    [[failure_modes]]
    name = "always"
      [[failure_modes.nodes]]
      kind = "table"
      table = "one.csv"
    """
    z0 = (h0 - mu) / sd
    exact = c * (sd * stats.norm.pdf(z0) - (h0 - mu) * stats.norm.sf(z0))
    for rule in ("midpoint", "trapezoid"):
        path = scenario_factory(
            folder=f"ead-{rule}",
            ensemble=f"mean,sd\n{mu},{sd}\n",
            family="normal",
            rating=None,
            variable="stage",
            conseq=conseq,
            modes=modes,
            toml_extra=f"[grid]\nrule = '{rule}'\naep_max = 0.9999999\n",
        )
        (path.parent / "one.csv").write_text("stage_m,probability\n-100,1\n100,1\n")
        res = assess(load_scenario(path))
        assert res.headline["expected_annual_damage"]["predictive"] == pytest.approx(exact, rel=1e-3), rule


def test_crest_at_mode_design_stage_is_exceeded_more_often_student_t(scenario_factory):
    # With the exact posterior of a normal log10 sample (n = 10) and the mode curve at (ybar, s), the
    # mode's 1 % flood has predictive AEP Pr[T_9 > 2.326 sqrt(10/11)] = 0.026866 (Bulletin 17B App. 11;
    # Gelman et al. 2013 section 3.2; both results from memory, the value computed from the formula). Tolerance: 4 Monte Carlo standard errors.
    n, ybar, s, R = 10, 2.5, 0.2, 20000
    rng = np.random.default_rng(9)
    sigma = np.sqrt((n - 1) * s * s / rng.chisquare(n - 1, R))
    mu = rng.normal(ybar, sigma / np.sqrt(n))
    ens = "mean,sd,skew\n" + "\n".join(f"{a:.10g},{b:.10g},0" for a, b in zip(mu, sigma)) + "\n"
    path = scenario_factory(
        folder="crest", ensemble=ens, toml_extra=f"[hazard.mode]\nmean = {ybar}\nsd = {s}\nskew = 0.0\n"
    )
    res = assess(load_scenario(path), grid_points=400)
    crest = res.crest["mode"]
    exact = stats.t.sf(-sc.ndtri(0.01) * np.sqrt(n / (n + 1)), n - 1)
    x = 10 ** (ybar - sc.ndtri(0.01) * s)
    members = load_scenario(path).ensemble.aep(np.array([x]))[:, 0]
    se = members.std() / np.sqrt(R)
    assert crest.quantity == pytest.approx(x, rel=1e-9)
    assert abs(crest["aep_on_predictive"] - exact) < 4 * se
    assert crest["aep_on_predictive"] > 0.01
    assert crest["chance_in_years_predictive_independent_years"] == pytest.approx(
        1 - (1 - crest["aep_on_predictive"]) ** 50, rel=1e-12
    )
    # Jensen: 1 - (1 - p)^n is concave in p, so the mean over curves is below the chance at the mean AEP
    assert crest["chance_in_years_predictive"] < crest["chance_in_years_predictive_independent_years"]
    # the median curve's design flood is exceeded more often than 1 % too (common practice)
    assert res.crest["median_curve"]["aep_on_predictive"] > 0.01


def test_grid_convergence_doubling(scenario_factory):
    # doubling the grid changes AFP and EAD by less than 0.1 % (issue acceptance)
    path = scenario_factory(folder="conv")
    sc_ = load_scenario(path)
    a = assess(sc_, grid_points=2000).headline
    b = assess(sc_, grid_points=4000).headline
    for key in ("annual_failure_probability", "expected_annual_damage", "annualized_life_loss"):
        assert b[key]["predictive"] == pytest.approx(a[key]["predictive"], rel=1e-3), key


def test_same_seed_same_numbers_and_workers_do_not_matter(scenario_factory):
    path = scenario_factory(folder="seed", toml_extra=("[uncertainty]\ndraws_per_realization = 3\n"))
    path.write_text(
        path.read_text().replace(
            '[rating]\ntable = "rating.csv"\n', '[rating]\ntable = "rating.csv"\nknowledge_sd = 0.2\n'
        )
    )
    sc_ = load_scenario(path)
    assert sc_.model.has_knowledge_uncertainty
    a = assess(sc_, workers=1)
    b = assess(sc_, workers=2)
    np.testing.assert_array_equal(a.propagation.values, b.propagation.values)
    assert a.summary()["annual_failure_probability"] == b.summary()["annual_failure_probability"]


def test_fn_curve_definition():
    # F(N) = sum_j P_f,j m_j 1[L_j >= N] (design), checked by hand on three cells: P_f = 0, 0.5, 1 and
    # life loss 0, 5, 50 at stages 1, 2, 3 (tables through those points, held constant beyond)
    m = np.array([0.1, 0.01, 0.001])
    stages = np.array([1.0, 2.0, 3.0])
    frag = FragilityCurve("table", stage=stages, probability=np.array([0.0, 0.5, 1.0]))
    z = np.zeros(3)
    cons = ConsequenceCurves(stages, z, z, np.array([0.0, 5.0, 50.0]), z)
    on = ResponseChain(failure_modes=(FailureMode("m", (frag,)),), consequences=cons).on(stages)
    np.testing.assert_allclose(
        m @ on.fn_integrand(np.array([1.0, 5.0, 10.0, 100.0]))[0], [0.005 + 0.001, 0.006, 0.001, 0.0]
    )


def test_chance_in_years():
    # 1 - (1 - p)^n, e.g. the 1 % flood in 100 years: 63.4 % (common practice)
    assert chance_in_years(0.01, 100) == pytest.approx(1 - 0.99**100, rel=1e-14)
    assert chance_in_years(1e-12, 50) == pytest.approx(5e-11, rel=1e-9)


def test_stage_hazard_without_rating(scenario_factory):
    ens = "location,scale\n3.0,0.6\n3.2,0.5\n"
    path = scenario_factory(folder="stage", ensemble=ens, family="gumbel", rating=None, variable="stage")
    res = assess(load_scenario(path))
    s = res.summary()
    assert 0 < s["annual_failure_probability"]["predictive"] < 1
    assert "bottom_of_grid_stage" in s["truncation"]


def test_fn_uses_incremental_life_loss_and_natural_variability():
    # F(N) = sum_j m_j E_eps[P_f 1[L_breach - L_no_breach >= N]] (design; incremental life loss as the
    # societal-risk lines use it). Without natural variability, a certain failure at stage 5 with 10 lives
    # given breach and 4 without gives F(N) = p for N <= 6 and 0 above.
    stage = np.array([0.0, 10.0])
    cons = ConsequenceCurves(stage, np.zeros(2), np.zeros(2), np.array([10.0, 10.0]), np.array([4.0, 4.0]))
    always = FragilityCurve("table", stage=np.array([0.0, 10.0]), probability=np.array([1.0, 1.0]))
    model = ResponseChain(failure_modes=(FailureMode("m", (always,)),), consequences=cons)
    F = model.on(np.array([5.0])).fn_integrand(np.array([1.0, 6.0, 6.5]))[0]
    np.testing.assert_allclose(F, [[1.0, 1.0, 0.0]])
    # with stage scatter and a normal fragility, P_f is averaged over the same nodes as the indicator
    frag = FragilityCurve("normal", median=5.0, spread=0.4)
    m2 = ResponseChain(
        failure_modes=(FailureMode("m", (frag,)),), consequences=cons, natural=StageSpread(0.3), hermite_nodes=24
    )
    np.testing.assert_allclose(m2.on(np.array([5.0])).fn_integrand(np.array([1.0]))[0, 0, 0], 0.5, atol=1e-12)


def test_linearity_note_with_knowledge_uncertainty(scenario_factory):
    path = scenario_factory(folder="lin-k", toml_extra="[uncertainty]\ndraws_per_realization = 2\n")
    path.write_text(
        path.read_text().replace(
            '[rating]\ntable = "rating.csv"\n', '[rating]\ntable = "rating.csv"\nknowledge_sd = 0.2\n'
        )
    )
    res = assess(load_scenario(path))
    prop = res.propagation
    nominal = res.scenario.ensemble.weights @ prop.nominal_values
    np.testing.assert_allclose(nominal, prop.point_masses_predictive @ prop.integrands, rtol=1e-10)
    note = next(n for n in res.notes if n.startswith("linearity"))
    assert float(note.rsplit(" ", 1)[1].rstrip(")")) < 1e-10


def test_warns_when_risk_is_already_present_at_the_bottom_of_the_grid(scenario_factory):
    # a discharge ensemble read as stage: every stage lies far above the response tables, so the structure
    # fails for every flood on the grid; the run must say so rather than report AFP ~ 1 quietly
    path = scenario_factory(folder="mix", rating=None, variable="stage")
    res = assess(load_scenario(path))
    assert any("bottom of the grid" in w for w in res.warnings)
    assert any("whole grid" in w for w in res.warnings)
    # the well-posed version of the same scenario warns about neither
    res = assess(load_scenario(scenario_factory(folder="nomix")))
    assert not any("bottom of the grid" in w or "whole grid" in w for w in res.warnings)


def test_design_aep_outside_grid_is_refused(scenario_factory):
    from riskcalc.errors import InputError

    path = scenario_factory(folder="dz", toml_extra="[checks]\ndesign_aep = 1e-9\n")
    with pytest.raises(InputError, match=r"key 'checks.design_aep': 1e-09 is outside the grid's AEP range"):
        load_scenario(path)


def test_n_year_chance_against_simulated_sequences_per_realization():
    # direct Monte Carlo (independent of riskcalc's formula): pick a realization with its weight, then draw n
    # years of annual peaks from that one curve and record whether any exceeds x. The share of such sequences
    # estimates the chance; tolerance 4 binomial standard errors.
    from riskcalc.hazard import HazardEnsemble
    from riskcalc.risk.assess import n_year_chance
    from scipy import stats as st

    rng = np.random.default_rng(2024)
    R, n, x = 400, 50, 10**3.2
    mean, sd = rng.normal(2.7, 0.12, R), rng.uniform(0.2, 0.35, R)
    w = rng.uniform(0.5, 1.5, R)
    w /= w.sum()
    ens = HazardEnsemble(family="lp3", weights=w, params={"mean": mean, "sd": sd, "skew": np.zeros(R)})
    p_r = ens.aep(np.array([x]))[:, 0]
    np.testing.assert_allclose(p_r, st.norm.sf((np.log10(x) - mean) / sd), rtol=1e-9)  # zero skew = lognormal
    got = n_year_chance(ens.weights, p_r, n)
    S = 200_000
    r = rng.choice(R, size=S, p=w)
    peaks = rng.normal(mean[r][:, None], sd[r][:, None], (S, n))  # log10 annual peaks, one curve per sequence
    sim = np.mean(np.any(peaks > np.log10(x), axis=1))
    assert got == pytest.approx(sim, abs=4 * np.sqrt(sim * (1 - sim) / S))
    # and the independent-years figure under the mean AEP is measurably larger here
    assert 1 - (1 - w @ p_r) ** n - got > 10 * np.sqrt(sim * (1 - sim) / S)
