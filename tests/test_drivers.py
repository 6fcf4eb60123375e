"""Tests of riskcalc.sensitivity.evaluator: the risk-model factors, the vectorized model, the gap by source, the CLI.

The vectorized model is checked against the run itself (riskcalc.risk.assess) and against the risk
integral written out independently with scipy.special for a one-failure-mode case; the indices against closed-form reasoning
(a single factor carries all the variance; a factor that does not enter has total index 0,
Saltelli et al. 2008, The Primer, ch. 4); the gap table against the run and against the means of
the multiplier distributions.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from conftest import CONSEQ, RATING

import riskcalc.cli.sensitivity  # noqa: F401  (registers the command on the app)
from riskcalc.risk.assess import assess
from riskcalc.cli import main
from riskcalc.config.settings import read_settings, sensitivity_enabled
from riskcalc.sensitivity.analysis import sensitivity_for_run
from riskcalc.sensitivity.evaluator import OUTPUT_KEYS, build_driver, driver_for_result
from riskcalc.sensitivity.factors import scenario_factors
from riskcalc.sensitivity.gap import gap_by_source
from riskcalc.errors import InputError
from riskcalc.risk.integrate import cell_masses, evaluation_points, point_masses
from scipy import special as sc_special
from riskcalc.config.scenario import load_scenario

AFP, EAD, ALL = OUTPUT_KEYS

TWO_MODES = """
[[failure_modes]]
name = "overtopping"
shift_sd = {shift}
spread_range = [0.8, 1.25]
  [[failure_modes.nodes]]
  kind = "normal"
  median = 6.0
  spread = 0.4
[[failure_modes]]
name = "seepage"
  [[failure_modes.nodes]]
  kind = "lognormal"
  datum = 1.0
  median = 4.0
  spread = 0.3
  [[failure_modes.nodes]]
  kind = "normal"
  median = 4.5
  spread = 1.0
"""

ONE_MODE_SHIFT = """
[[failure_modes]]
name = "breach"
shift_sd = {shift}
  [[failure_modes.nodes]]
  kind = "normal"
  median = 5.0
  spread = 0.5
"""

DAMAGE_TRI = 'damage_multiplier = { distribution = "triangular", low = 0.8, mode = 1.0, high = 1.3 }\n'
LIFE_LOGN = 'life_loss_multiplier = { distribution = "lognormal", median = 1.0, beta = 0.3 }\n'


def make(
    factory,
    folder,
    *,
    modes=None,
    conseq_extra="",
    rating_extra=None,
    sens="",
    points=200,
    conseq=CONSEQ,
    ensemble=None,
    grid_extra="",
):
    """A small scenario: the conftest one with optional knowledge uncertainty and a [sensitivity] table."""
    extra = conseq_extra + f"\n[grid]\npoints = {points}\n{grid_extra}\n" + sens
    path = factory(
        folder=folder,
        toml_extra=extra,
        modes=modes,
        rating=RATING if rating_extra is None else None,
        conseq=conseq,
        ensemble=ensemble,
    )
    if rating_extra is not None:
        (path.parent / "rating.csv").write_text(RATING)
        path.write_text(path.read_text() + "\n[rating]\ntable = 'rating.csv'\n" + rating_extra + "\n")
    return path


def run(path):
    sc = load_scenario(path)
    return sc, assess(sc)


# --------------------------------------------------------------------------
# the vectorized model
# --------------------------------------------------------------------------
@pytest.mark.parametrize("case", ["midpoint", "trapezoid", "natural"])
def test_nominal_samples_equal_the_runs_per_realization_values(scenario_factory, case):
    # identity: without knowledge uncertainty the run's value of realization r is m[r] . G (one draw each);
    # the sampled model at the nominal response must give the same number for the same r. Only the order
    # of a 200-term sum differs -> rtol 1e-12.
    kw = {"grid_extra": "rule = 'trapezoid'"} if case == "trapezoid" else {}
    if case == "natural":
        kw["rating_extra"] = "natural_sd = 0.3"
    sc, res = run(
        make(
            scenario_factory, case, modes=TWO_MODES.format(shift=0.0).replace("spread_range = [0.8, 1.25]\n", ""), **kw
        )
    )
    assert not sc.model.has_knowledge_uncertainty
    drv = driver_for_result(res)
    r = np.arange(sc.ensemble.size)
    got = drv.evaluate(r[::-1])
    prop = res.propagation
    for key, name in zip(OUTPUT_KEYS, ("afp", "ead", "all")):
        np.testing.assert_allclose(got[key], prop.column(name)[::-1], rtol=1e-12, atol=0)
        np.testing.assert_allclose(drv.nominal[:, OUTPUT_KEYS.index(key)], prop.column(name), rtol=1e-12, atol=0)


@pytest.mark.parametrize("rule", ["midpoint", "trapezoid"])
def test_sampled_response_equals_the_risk_integral_written_out(scenario_factory, rule):
    # one normal failure mode without natural variability: for a draw (offset o, shift s, spread factor f,
    # damage factor dm) the AFP of realization r is sum_p w[r, p] Phi((h(x_p) + o - 5 - s) / (0.5 f)) and
    # the EAD dm sum_p w[r, p] (D_nb + Pf_p (D_b - D_nb)) at h(x_p) + o, damage linear in stage: written out
    # here with scipy.special.ndtr and numpy.interp, independently of riskcalc's chain. rtol 1e-12.
    modes = ONE_MODE_SHIFT.format(shift=0.3).replace("shift_sd = 0.3\n", "shift_sd = 0.3\nspread_range = [0.8, 1.25]\n")
    path = make(
        scenario_factory,
        f"direct_{rule}",
        modes=modes,
        conseq_extra=DAMAGE_TRI,
        rating_extra="knowledge_sd = 0.2",
        grid_extra=f"rule = '{rule}'",
    )
    sc, res = run(path)
    drv = driver_for_result(res)
    rng = np.random.default_rng(11)
    B = 9
    U = rng.random((B, 4))
    names = ["rating_offset", "fragility_shift:breach", "fragility_spread:breach", "damage_multiplier"]
    params = sc.model.uncertain.from_unit(names, U)
    r = rng.integers(0, sc.ensemble.size, B)
    got = drv.evaluate(r, params, workers=2)
    w = point_masses(cell_masses(sc.ensemble.aep(res.grid, r)), rule)
    x = evaluation_points(res.grid, sc.ensemble.log_scale, rule)
    h = sc.model.rating.stage_at(x)[None, :] + params.stage_offset[:, None]
    pf = sc_special.ndtr((h - 5.0 - params.fm_shift[0][:, None]) / (0.5 * params.fm_spread[0][:, None]))
    cons = sc.model.consequences
    db, dn = np.interp(h, cons.stage, cons.damage_breach), np.interp(h, cons.stage, cons.damage_no_breach)
    np.testing.assert_allclose(got[AFP], np.einsum("bp,bp->b", w, pf), rtol=1e-12, atol=0)
    np.testing.assert_allclose(
        got[EAD], params.damage_factor * np.einsum("bp,bp->b", w, dn + pf * (db - dn)), rtol=1e-12
    )
    # the quantiles of the registry: normal(0, 0.2) at u, uniform(0.8, 1.25), triangular(0.8, 1.0, 1.3)
    from scipy import stats

    np.testing.assert_allclose(params.stage_offset, stats.norm(0, 0.2).ppf(U[:, 0]), rtol=1e-12)
    np.testing.assert_allclose(params.fm_spread[0], 0.8 + 0.45 * U[:, 2], rtol=1e-12)
    np.testing.assert_allclose(params.damage_factor, stats.triang(2 / 5, loc=0.8, scale=0.5).ppf(U[:, 3]), rtol=1e-12)


def test_point_masses_rearrange_the_trapezoid_sum():
    # sum_i w_i g(x_i) = sum_j m_j (g(lo_j) + g(hi_j)) / 2, tail cell at x_J twice (integrate.evaluation_points)
    rng = np.random.default_rng(2)
    m, g = rng.random((3, 7)), rng.random(7)
    lo, hi = g, np.r_[g[1:], g[-1]]
    np.testing.assert_allclose(point_masses(m, "trapezoid") @ g, m @ (0.5 * (lo + hi)), rtol=1e-14)
    assert point_masses(m, "trapezoid").sum() == pytest.approx(m.sum(), rel=1e-14)  # mass is conserved
    assert point_masses(m, "midpoint") is not None and np.array_equal(point_masses(m, "midpoint"), m)


def test_factors_follow_the_scenario(scenario_factory):
    sc, _ = run(
        make(
            scenario_factory,
            "fac",
            modes=TWO_MODES.format(shift=0.3),
            conseq_extra=DAMAGE_TRI,
            rating_extra="knowledge_sd = 0.1",
        )
    )
    names = [f.name for f in scenario_factors(sc.model)]
    # seepage has no shift_sd or spread_range; the life-loss multiplier is fixed: neither appears
    assert names == [
        "hazard_realization",
        "rating_offset",
        "fragility_shift:overtopping",
        "fragility_spread:overtopping",
        "damage_multiplier",
    ]
    f = {x.name: x for x in scenario_factors(sc.model)}
    # quantile functions: normal(0, 0.1) at u = 0.975 -> 0.1 * 1.959964 (standard normal table)
    assert f["rating_offset"].values(0.975) == pytest.approx(0.1959964, abs=1e-7)
    assert f["fragility_spread:overtopping"].values(0.5) == pytest.approx(1.025)
    assert f["damage_multiplier"].values(0.0) == pytest.approx(0.8)


# --------------------------------------------------------------------------
# Sobol' indices of the risk model
# --------------------------------------------------------------------------
def test_hazard_only_realization_carries_all_the_variance(scenario_factory):
    # with one factor, V_1 = V, so S1 = ST = 1 (Sobol' 2001 decomposition); the estimates must contain 1
    # within their intervals, and the intervals must be narrow enough for the check to fail
    sc, res = run(make(scenario_factory, "hz", sens="[sensitivity]\nn = 4096\nseed = 3\n"))
    rep = sensitivity_for_run(sc, res)
    assert [f.name for f in rep.factors] == ["hazard_realization"]
    for key in (AFP, EAD, ALL):
        r = rep.sobol[key]
        for est, conf in ((r.S1[0], r.S1_conf[0]), (r.ST[0], r.ST_conf[0])):
            assert abs(est - 1.0) <= conf and conf < 0.1


def test_factor_that_does_not_enter_has_total_index_zero(scenario_factory):
    # no damage columns at all, yet an (active) damage multiplier: it cannot move AFP or ALL, so its
    # ST is 0 within its interval; EAD is identically 0, so its indices are undefined (NaN, with a note).
    conseq = "stage_m,life_loss_breach\n2.0,0\n4.0,1\n6.0,10\n9.0,50\n"
    sc, res = run(
        make(
            scenario_factory,
            "inert",
            modes=ONE_MODE_SHIFT.format(shift=0.4),
            conseq=conseq,
            conseq_extra=DAMAGE_TRI,
            sens="[sensitivity]\nn = 256\nseed = 5\n",
        )
    )
    rep = sensitivity_for_run(sc, res)
    for key in (AFP, ALL):
        r = rep.sobol[key]
        i = r.factors.index("damage_multiplier")
        assert abs(r.ST[i]) <= r.ST_conf[i] + 1e-12
        j = r.factors.index("fragility_shift:breach")  # positive control: a factor that does enter
        assert r.ST[j] > r.ST_conf[j]
    assert np.all(np.isnan(rep.sobol[EAD].ST)) and rep.sobol[EAD].note
    s = rep.summary()
    assert set(s) == set(OUTPUT_KEYS) and isinstance(s[AFP]["damage_multiplier"]["ST"], float)
    assert set(s[AFP]["damage_multiplier"]) == {"S1", "S1_conf", "ST", "ST_conf"}


def test_results_repeat_with_the_seed_and_change_with_another(scenario_factory):
    path = make(
        scenario_factory,
        "seed",
        modes=ONE_MODE_SHIFT.format(shift=0.3),
        conseq_extra=DAMAGE_TRI,
        rating_extra="knowledge_sd = 0.1",
        sens="[sensitivity]\nn = 128\nseed = 9\n",
    )
    sc, res = run(path)
    a = sensitivity_for_run(sc, res, workers=3).frame()
    b = sensitivity_for_run(sc, res, workers=1).frame()  # also independent of the number of threads
    assert a.equals(b)
    other = read_settings({"n": 128, "seed": 10}, sc.path)
    c = sensitivity_for_run(sc, res, other).frame()
    assert not np.allclose(a["ST"], c["ST"])


def test_target_width_doubles_n_and_wide_intervals_warn(scenario_factory):
    path = make(scenario_factory, "conv", modes=ONE_MODE_SHIFT.format(shift=0.3), rating_extra="knowledge_sd = 0.1")
    sc, res = run(path)
    small = sensitivity_for_run(sc, res, read_settings({"n": 16, "seed": 2, "grow": False}, sc.path))
    assert any("exceed 0.1" in w for w in small.warnings)  # 16 base samples: intervals are wide
    rep = sensitivity_for_run(sc, res, read_settings({"n": 32, "seed": 2, "target_width": 0.08}, sc.path))
    ns = [n for n, _ in rep.history]
    assert ns == [32 * 2**k for k in range(len(ns))] and len(ns) > 1
    assert rep.converged
    assert all(w < 0.08 for w in rep.history[-1][1].values() if w == w)


def test_groups_report_one_index_per_group(scenario_factory):
    sens = (
        "[sensitivity]\nn = 64\nseed = 4\n[sensitivity.groups]\n"
        'response = ["rating_offset", "fragility_shift:breach"]\n'
    )
    sc, res = run(
        make(
            scenario_factory,
            "grp",
            modes=ONE_MODE_SHIFT.format(shift=0.3),
            conseq_extra=DAMAGE_TRI,
            rating_extra="knowledge_sd = 0.1",
            sens=sens,
        )
    )
    rep = sensitivity_for_run(sc, res)
    assert rep.sobol[AFP].factors == ("hazard_realization", "response", "damage_multiplier")
    assert set(rep.frame()["source"]) >= {"rating+fragility", "hazard", "consequences"}


def test_morris_ranks_the_dominant_factor_first(scenario_factory):
    # constructed: a nearly degenerate ensemble (log-mean sd 1e-4), a fragility that may sit 1 m (two
    # spreads) either way, and a rating offset of 1 cm: the fragility shift must lead mu* of AFP
    rng = np.random.default_rng(1)
    ens = "mean,sd,skew\n" + "".join(f"{2.8 + 1e-4 * z:.6f},0.25,0.0\n" for z in rng.standard_normal(100))
    sens = "[sensitivity]\nn = 16\nseed = 6\nmorris = true\nmorris_trajectories = 20\n"
    sc, res = run(
        make(
            scenario_factory,
            "morris",
            modes=ONE_MODE_SHIFT.format(shift=1.0),
            ensemble=ens,
            rating_extra="knowledge_sd = 0.01",
            sens=sens,
        )
    )
    rep = sensitivity_for_run(sc, res)
    m = rep.morris[AFP]
    assert m.factors[int(np.argmax(m.mu_star))] == "fragility_shift:breach"
    assert set(rep.morris_frame()["output"]) == set(OUTPUT_KEYS)


# --------------------------------------------------------------------------
# the mean-mode gap by source
# --------------------------------------------------------------------------
def test_gap_table_against_the_run_and_the_multiplier_means(scenario_factory):
    sc, res = run(
        make(
            scenario_factory,
            "gap",
            modes=ONE_MODE_SHIFT.format(shift=0.3),
            conseq_extra=DAMAGE_TRI + LIFE_LOGN,
            rating_extra="knowledge_sd = 0.1",
        )
    )
    drv = driver_for_result(res)
    gap = gap_by_source(res, drv, seed=3, samples=4096)
    assert list(gap["source"].unique()) == ["hazard", "rating", "fragility", "consequences", "all"]
    g = gap.set_index(["source", "output"])
    for key in OUTPUT_KEYS:
        h = res.headline[key]
        # 'all' is the run's own predictive - mode
        assert g.loc[("all", key), "gap"] == h["predictive"] - h["mode"]
        # hazard alone: risk on the predictive masses with the nominal response (linearity identity,
        # computed here from the run's predictive masses and nominal integrands)
        col = res.propagation.names.index({AFP: "afp", EAD: "ead", ALL: "all"}[key])
        ref = res.propagation.masses_predictive @ res.propagation.integrands[:, col]
        assert g.loc[("hazard", key), "predictive"] == pytest.approx(ref, rel=1e-12)
        assert g.loc[(slice(None), key), "mode"].nunique() == 1
    # consequences alone scale EAD by E[multiplier] / nominal: triangular mean (low + mode + high) / 3
    # = 1.0333..; ALL by the lognormal mean exp(beta^2 / 2) = exp(0.045) (common formulas). AFP unmoved.
    # Scrambled Sobol' points on a smooth 1-D quantile function: error far below 1e-4 (triangular);
    # the lognormal's unbounded upper tail converges more slowly: rel 2e-3.
    assert g.loc[("consequences", EAD), "ratio"] == pytest.approx(3.1 / 3, rel=1e-4)
    assert g.loc[("consequences", ALL), "ratio"] == pytest.approx(np.exp(0.045), rel=2e-3)
    assert g.loc[("consequences", AFP), "gap"] == pytest.approx(0.0, abs=1e-15 * res.headline[AFP]["mode"])


def test_gap_repeats_with_the_seed(scenario_factory):
    sc, res = run(make(scenario_factory, "gapseed", modes=ONE_MODE_SHIFT.format(shift=0.3)))
    drv = driver_for_result(res)
    assert gap_by_source(res, drv, seed=4).equals(gap_by_source(res, drv, seed=4))


# --------------------------------------------------------------------------
# the [sensitivity] table
# --------------------------------------------------------------------------
@pytest.mark.parametrize(
    "table, key",
    [
        ("bogus = 1", "sensitivity.bogus"),
        ("n = 1000", "sensitivity.n"),
        ("seed = 0", "sensitivity.seed"),
        ("enabled = 'yes'", "sensitivity.enabled"),
        ("target_width = 2.0", "sensitivity.target_width"),
        ("morris_levels = 3", "sensitivity.morris_levels"),
        ("n = 4096\nn_max = 1024", "sensitivity.n_max"),
        ("exclude = ['hazard_realization']", "sensitivity.exclude"),
        ("include = ['no_such_factor']", "sensitivity.include"),
        ("[sensitivity.groups]\ng = ['no_such_factor']", "sensitivity.groups.g"),
        ("[sensitivity.groups]\ng = []", "sensitivity.groups.g"),
    ],
)
def test_bad_sensitivity_keys_name_the_key(scenario_factory, table, key):
    path = make(scenario_factory, "bad", sens="[sensitivity]\n" + table + "\n")
    with pytest.raises(InputError) as e:
        load_scenario(path)  # refused when loaded, before any computation
    assert e.value.key == key and "scenario.toml" in str(e.value) and "\n" not in str(e.value)


def test_enabled_flag_and_defaults(scenario_factory):
    off = load_scenario(make(scenario_factory, "off"))
    on = load_scenario(make(scenario_factory, "on", sens="[sensitivity]\nenabled = true\n"))
    assert not sensitivity_enabled(off) and sensitivity_enabled(on)
    s = read_settings({}, default_seed=0)
    assert s.n == 1024 and s.seed == 1 and s.n_resamples == 100  # seed 0 is 'no seed' in SALib


# --------------------------------------------------------------------------
# the command
# --------------------------------------------------------------------------
def _main(argv):
    with pytest.raises(SystemExit) as e:
        main([str(a) for a in argv])
    return e.value.code


def test_cli_end_to_end(scenario_factory, tmp_path, capsys):
    path = make(
        scenario_factory,
        "cli",
        modes=ONE_MODE_SHIFT.format(shift=0.3),
        conseq_extra=DAMAGE_TRI,
        rating_extra="knowledge_sd = 0.1",
    )
    out = tmp_path / "out"
    assert _main(["sensitivity", path, "--out", out, "--n", 32, "--seed", 7, "--morris"]) == 0
    printed = capsys.readouterr().out
    assert "fragility_shift:breach" in printed and "qualified, licensed engineers" in printed
    for rel in (
        "sensitivity.json",
        "tables/sobol_indices.csv",
        "tables/mean_mode_gap_by_source.csv",
        "tables/morris_screening.csv",
        "figures/sensitivity_indices.png",
        "figures/sensitivity_indices.svg",
    ):
        assert (out / rel).is_file(), rel
    js = json.loads((out / "sensitivity.json").read_text())
    assert set(js["sobol"]) == set(OUTPUT_KEYS) and js["settings"]["seed"] == 7 and js["settings"]["n_start"] == 32
    assert js["settings"]["n"] >= 32 and js["settings"]["grow"] is True  # the sample grows from --n
    assert "licensed engineers" in js["caution"]
    # a second run into the same directory needs --overwrite
    assert _main(["sensitivity", path, "--out", out, "--n", 32]) == 2


@pytest.mark.parametrize(
    "args, needle",
    [
        (["--n", 100], "--n"),
        (["--seed", 0], "--seed"),
    ],
)
def test_cli_bad_options_exit_2(scenario_factory, tmp_path, capsys, args, needle):
    path = make(scenario_factory, "clibad")
    out = tmp_path / "never"
    assert _main(["sensitivity", path, "--out", out, *args]) == 2
    err = capsys.readouterr().err
    assert needle in err and "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert not out.exists()


def test_cli_bad_scenario_exit_2(scenario_factory, tmp_path, capsys):
    path = make(scenario_factory, "clibadsc", sens="[sensitivity]\nn = 7\n")
    out = tmp_path / "never"
    assert _main(["sensitivity", path, "--out", out]) == 2
    err = capsys.readouterr().err
    assert "sensitivity.n" in err and "Traceback" not in err
    assert not out.exists() and not any(Path(tmp_path).glob(".never*"))
    assert _main(["sensitivity", tmp_path / "missing.toml", "--out", out]) == 2


def test_build_driver_without_a_scenario_matches_direct_masses(scenario_factory):
    sc, res = run(make(scenario_factory, "bd"))
    drv = build_driver(
        sc.ensemble, sc.model, res.grid, rule="midpoint", log_spacing=True, workers=2, chunk_bytes=8 * 200 * 37
    )  # many chunks on two threads
    np.testing.assert_array_equal(drv.masses, cell_masses(sc.ensemble.aep(res.grid)))
    assert np.all(np.diff(drv.nominal[drv.order, 0]) >= 0)  # severity order by nominal AFP
