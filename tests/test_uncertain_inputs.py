"""The registry of uncertain inputs: one declaration feeds the Monte Carlo, the Sobol' factors, the nominal
response and the pairing signature of alternatives."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from riskcalc.config.scenario import load_scenario
from riskcalc.response import uncertain as unc
from riskcalc.response.uncertain import UncertainInputs, UncertainParameter
from riskcalc.risk.assess import assess
from riskcalc.risk.integrate import cell_masses, evaluation_points, point_masses
from riskcalc.risk.propagate import propagate
from riskcalc.sensitivity.evaluator import build_driver
from riskcalc.sensitivity.factors import scenario_factors

SHIFTED = """
[[failure_modes]]
name = "breach"
shift_sd = 0.3
  [[failure_modes.nodes]]
  kind = "normal"
  median = 5.0
  spread = 0.5
"""


def test_sampling_is_rvs_in_declaration_order_and_quantiles_are_ppf():
    # reference library: scipy.stats frozen distributions; the registry draws each parameter in turn from
    # one generator (the order that makes common random numbers possible) and maps probabilities by ppf
    reg = UncertainInputs(
        (
            unc.rating_offset(0.2),
            unc.fragility_spread(0, "m", 0.8, 1.2),
            unc.consequence_factor("damage", "triangular", low=0.5, mode=1.0, high=2.0),
        ),
        1,
    )
    got = reg.sample(np.random.default_rng(5), 7)
    rng = np.random.default_rng(5)
    off = stats.norm(0, 0.2).rvs(size=7, random_state=rng)
    spr = stats.uniform(0.8, 0.4).rvs(size=7, random_state=rng)
    dmg = stats.triang(0.5 / 1.5, loc=0.5, scale=1.5).rvs(size=7, random_state=rng)
    np.testing.assert_array_equal(got.stage_offset, off)
    np.testing.assert_allclose(got.fm_spread[0], spr, rtol=1e-15)  # scale 1.2 - 0.8 vs 0.4: one ulp
    np.testing.assert_allclose(got.damage_factor, dmg, rtol=1e-15)
    u = np.array([[0.025, 0.5, 0.0], [0.975, 1.0, 1.0]])
    p = reg.from_unit(reg.names, u)
    # standard normal table: z(0.975) = 1.959964
    np.testing.assert_allclose(p.stage_offset, [-0.2 * 1.959964, 0.2 * 1.959964], atol=1e-7)
    np.testing.assert_allclose(p.fm_spread[0], [1.0, 1.2])
    np.testing.assert_allclose(p.damage_factor, [0.5, 2.0])
    nom = reg.nominal(3)
    np.testing.assert_array_equal(nom.stage_offset, 0.0)
    np.testing.assert_array_equal(nom.damage_factor, 1.0)  # the triangular mode
    assert reg.signature == (
        ("rating_offset", "norm"),
        ("fragility_spread:m", "uniform"),
        ("damage_multiplier", "triang"),
    )


def test_parameters_on_one_target_combine():
    a = UncertainParameter("a", "rating", "stage_offset", stats.norm(0.0, 1.0), 0.25)
    b = UncertainParameter("b", "rating", "stage_offset", stats.norm(0.0, 1.0), 0.5)
    c = UncertainParameter("c", "consequences", "damage_factor", stats.uniform(1, 1), 2.0)
    d = UncertainParameter("d", "consequences", "damage_factor", stats.uniform(1, 1), 1.5)
    p = UncertainInputs((a, b, c, d), 1).nominal(2)
    np.testing.assert_array_equal(p.stage_offset, 0.75)  # offsets add
    np.testing.assert_array_equal(p.damage_factor, 3.0)  # factors multiply
    with pytest.raises(ValueError, match="unique"):
        UncertainInputs((a, a), 1)
    with pytest.raises(ValueError, match="failure mode"):
        UncertainInputs((unc.fragility_shift(3, "x", 0.1),), 1)


def test_a_new_parameter_in_the_registry_reaches_monte_carlo_sobol_and_the_nominal_response(scenario_factory):
    # one entry added to the registry (a second stage offset, e.g. a survey datum error with a non-zero mean)
    # must appear in every derived use without touching any other code
    sc = load_scenario(scenario_factory(folder="newparam", modes=SHIFTED, toml_extra="[grid]\npoints = 200\n"))
    res = assess(sc)
    chain = sc.model
    extra = UncertainParameter(
        "datum_error",
        "rating",
        "stage_offset",
        stats.norm(0.4, 0.25),
        0.4,
        description="survey datum error, normal(0.4, 0.25) [m]",
        units="m",
    )
    chain2 = type(chain)(
        failure_modes=chain.failure_modes,
        consequences=chain.consequences,
        rating=chain.rating,
        natural=chain.natural,
        uncertain=chain.uncertain.with_parameter(extra),
        hermite_nodes=chain.hermite_nodes,
    )
    # Sobol' factors
    assert [f.name for f in scenario_factors(chain2)] == ["hazard_realization", "fragility_shift:breach", "datum_error"]
    # nominal response: the 0.4 m offset moves stage up, so the nominal AFP of every realization rises, and
    # equals the original chain evaluated 0.4 m higher (a shift of the fragility by -0.4 m)
    pts = evaluation_points(res.grid, True, "midpoint")
    g1 = chain.on(pts).nominal_integrands(("afp",))[:, 0]
    g2 = chain2.on(pts).nominal_integrands(("afp",))[:, 0]
    lowered = chain.uncertain.resolve({"fragility_shift:breach": np.array([-0.4])}, 1)
    g_ref, inv = chain.on(pts).integrands(lowered, ("afp",))
    np.testing.assert_allclose(g2, g_ref["afp"][0], rtol=1e-12)
    assert np.all(g2 >= g1) and g2.sum() > g1.sum()
    # Monte Carlo: the draws of the new parameter enter (the per-draw AFP changes, and with its positive mean
    # the predictive AFP rises by more than 10 standard errors)
    p1 = propagate(sc.ensemble, chain, res.grid, seed=3, draws_per_realization=2)
    p2 = propagate(sc.ensemble, chain2, res.grid, seed=3, draws_per_realization=2)
    a1, a2 = p1.weights @ p1.column("afp"), p2.weights @ p2.column("afp")
    se = np.sqrt(np.sum((p2.weights * (p2.column("afp") - a2)) ** 2))
    assert a2 - a1 > 10 * se
    # Sobol' evaluator: at the factor's quantile the evaluator uses its ppf
    drv = build_driver(sc.ensemble, chain2, res.grid, workers=1)
    r, params = drv.params_from_unit(scenario_factors(chain2), np.array([[0.5, 0.5, 0.975]]))
    assert params.stage_offset[0] == pytest.approx(0.4 + 0.25 * 1.959964, abs=1e-6)
    w = point_masses(cell_masses(sc.ensemble.aep(res.grid, r)), "midpoint")
    direct = chain2.on(pts).risk(w, params, ("afp",))[0, 0]
    assert drv.evaluate(r, params)["annual_failure_probability"][0] == pytest.approx(direct, rel=1e-12)
    # the pairing signature of alternatives grows by the new entry
    assert chain2.uncertain.signature[-1] == ("datum_error", "norm")


def test_inputs_without_spread_are_not_uncertain_but_keep_their_value(scenario_factory):
    # a range of one value and a lognormal multiplier with beta 0 are constants: no factor, no draw, but the
    # constant still scales (spread x 1.2; damage x 2)
    modes = SHIFTED.replace("shift_sd = 0.3\n", "spread_range = [1.2, 1.2]\n")
    extra = (
        '[consequences]\ntable = "consequences.csv"\n'
        'damage_multiplier = { distribution = "lognormal", median = 2.0, beta = 0.0 }\n'
    )
    path = scenario_factory(folder="const", modes=modes)
    text = path.read_text().replace('[consequences]\ntable = "consequences.csv"\n', extra)
    path.write_text(text)
    sc = load_scenario(path)
    assert not sc.model.has_knowledge_uncertainty
    assert sc.model.failure_modes[0].nodes[0].spread == pytest.approx(0.6)
    base = load_scenario(scenario_factory(folder="const0", modes=SHIFTED.replace("shift_sd = 0.3\n", "")))
    np.testing.assert_allclose(sc.model.consequences.damage_breach, 2 * base.model.consequences.damage_breach)
