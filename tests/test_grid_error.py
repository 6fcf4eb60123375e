"""The grid error: Richardson estimate on every second node, the adaptive default grid, and its report."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from riskcalc.config.scenario import load_scenario
from riskcalc.errors import InputError
from riskcalc.hazard.curves import mode_curve
from riskcalc.risk import grid_error as ge
from riskcalc.risk.assess import assess, build_grid
from riskcalc.risk.integrate import cell_masses, evaluation_points, point_masses

ROOT = Path(__file__).resolve().parents[1]
BUNDLED = ("amberlow_levee", "tarnhollow_dam")
KEYS = ("annual_failure_probability", "expected_annual_damage", "annualized_life_loss")


def test_coarse_nodes_keep_both_ends():
    assert ge.coarse_nodes(5).tolist() == [0, 2, 4]
    assert ge.coarse_nodes(6).tolist() == [0, 2, 4, 5]
    with pytest.raises(ValueError):
        ge.coarse_nodes(2)


def test_richardson_on_a_known_integral():
    # Richardson extrapolation, common practice: for the midpoint rule (order 2) on a smooth integrand,
    # (I_2h - I_h) / 3 is the error of I_h to leading order. Integral of exp(x) on [0, 1] = e - 1.
    def midpoint(n):
        x = (np.arange(n) + 0.5) / n
        return np.exp(x).sum() / n

    fine, coarse = midpoint(200), midpoint(100)
    est = (coarse - fine) / (2.0**ge.ORDER - 1)
    assert est == pytest.approx(fine - (np.e - 1), rel=1e-3)


def _nominal_values(sc, points):
    """AFP, EAD, ALL on the predictive and mode curves with the nominal response, on a grid of ``points``."""
    ens, chain = sc.ensemble, sc.model
    grid = build_grid(ens, (chain,), sc.grid, sc.mode_params, points=points)
    on = chain.on(evaluation_points(grid, ens.log_scale, sc.grid["rule"]))
    G = on.nominal_integrands(("afp", "ead", "all"))
    mode_one, _ = mode_curve(ens, sc.mode_params or None)
    out = {}
    for name, p in (("predictive", ge.predictive_aep(ens, grid)), ("mode", mode_one.aep(grid)[0])):
        out[name] = point_masses(cell_masses(p), sc.grid["rule"]) @ G
    return grid, out


@pytest.mark.parametrize("name", BUNDLED)
def test_default_grid_of_the_bundled_scenarios_is_within_the_target(name):
    sc = load_scenario(ROOT / "scenarios" / name / "scenario.toml")
    assert not ge.points_given(sc)  # the bundled scenarios use the adaptive default
    points, tried = ge.choose_points(sc)
    assert [q for q, _ in tried][-1] >= points and tried[-1][1] <= ge.TARGET
    grid, vals = _nominal_values(sc, points)
    # reference: the same integrals on a grid 32 times finer (midpoint error ~ h^2: 1000 times smaller)
    _, ref = _nominal_values(sc, 32 * points)
    aeps = {"predictive": ge.predictive_aep(sc.ensemble, grid)}
    aeps["mode"] = mode_curve(sc.ensemble, sc.mode_params or None)[0].aep(grid)[0]
    est = ge.estimate(sc.model, grid, aeps, rule=sc.grid["rule"], log_spacing=sc.ensemble.log_scale, draws=0)
    for curve in ("predictive", "mode"):
        for i, key in enumerate(KEYS):
            true_rel = abs(vals[curve][i] - ref[curve][i]) / abs(ref[curve][i])
            assert true_rel < ge.TARGET, (name, curve, key, true_rel)  # the 0.1 % of each headline
            e_rel = est.figures[key][curve] / abs(vals[curve][i])
            assert e_rel >= 0.8 * true_rel, (name, curve, key, e_rel, true_rel)  # the estimate is not optimistic


def test_a_coarser_grid_than_chosen_misses_the_target():
    # the choice is the smallest size tried: the one before it has an estimated error above the target
    sc = load_scenario(ROOT / "scenarios" / "amberlow_levee" / "scenario.toml")
    points, tried = ge.choose_points(sc)
    assert len(tried) >= 2 and tried[-2][1] > ge.TARGET and tried[-1][1] <= ge.TARGET
    assert points == round(ge.MIN_POINTS * ge.GROWTH ** (len(tried) - 1))


def test_given_points_are_kept_and_reported(scenario_factory):
    sc = load_scenario(scenario_factory(toml_extra="[grid]\npoints = 300\n"))
    r = assess(sc)
    g = r.summary()["grid_error"]
    assert g["choice"] == "given" and g["tried"] == [] and g["grid_points"] == r.grid.size
    assert g["coarse_points"] == ge.coarse_nodes(r.grid.size).size


def test_summary_reports_grid_error_beside_the_monte_carlo_error(scenario_factory):
    modes = """
    [[failure_modes]]
    name = "breach"
    shift_sd = 0.3
      [[failure_modes.nodes]]
      kind = "normal"
      median = 5.0
      spread = 0.5
    """
    sc = load_scenario(scenario_factory(modes=modes))
    assert sc.model.has_knowledge_uncertainty
    r = assess(sc)
    s = r.summary()
    g = s["grid_error"]
    assert g["choice"] == "adaptive" and g["within_target"] is True and g["sample_draws"] == ge.SAMPLE_DRAWS
    for key in KEYS:
        d = g[key]
        assert d["monte_carlo_standard_error"] == pytest.approx(s[key]["mc_standard_error"])
        assert d["relative_predictive"] == pytest.approx(d["predictive"] / abs(s[key]["predictive"]), rel=0.05)
        # the coarse-grid value differs from the run's by the Richardson difference, (2^p - 1) / F_s times e
        diff = abs(d["predictive_coarse_grid"] - s[key]["predictive"])
        assert diff > 0 and d["relative_largest"] <= g["target_relative"]
    # existing keys are still there
    for key in KEYS:
        assert {"predictive", "mode", "median_curve", "ensemble", "mc_standard_error"} <= set(s[key])
    json.dumps(s)  # plain JSON


def test_min_points_above_max_points_is_refused(scenario_factory):
    path = scenario_factory(toml_extra="[grid]\nmin_points = 4000\nmax_points = 1000\n")
    with pytest.raises(InputError, match="grid.max_points"):
        load_scenario(path)


def test_warning_when_the_cap_stops_the_growth(scenario_factory):
    # a cap of 60 points cannot reach 0.1 %: the run says so in one warning
    sc = load_scenario(scenario_factory(toml_extra="[grid]\nmin_points = 60\nmax_points = 60\n"))
    r = assess(sc)
    g = r.summary()["grid_error"]
    assert g["within_target"] is False
    assert any("grid error" in w and "max_points" in w for w in r.warnings)
