"""A study of several loadings: totals, static and seismic loadings, exposure scenarios, Graham's rates,
consequences per failure mode and individual risk, each against an independent computation."""

from __future__ import annotations

import math
import re

import numpy as np
import pytest
from scipy import integrate, stats

from riskcalc.cli import main
from riskcalc.config.scenario import load_scenario
from riskcalc.hazard.seismic import SeismicHazard, fixed_pool
from riskcalc.response.consequences import ConsequenceCurves, with_exposure
from riskcalc.response.life_loss import ExposureScenario, graham_rate, warning_class
from riskcalc.response.loadings import SeismicFragility, SeismicLoading
from riskcalc.risk.assess import assess
from riskcalc.risk.loadings import assess_seismic, seismic_failure_frequency

from conftest import write_scenario

STATIC = """
[consequence_tables]
dry = "dry.csv"

[[loadings]]
name = "normal operation"
kind = "static"
pool = {{ stage = {stage} }}
  [[loadings.failure_modes]]
  name = "piping"
  annual_probability = {{ distribution = "fixed", value = {p} }}
  consequences = "dry"
"""
DRY = "stage_m,damage_breach_usd,life_loss_breach\n2.0,1.0e6,4\n6.0,3.0e6,20\n"


def _cli(argv, capsys):
    with pytest.raises(SystemExit) as info:
        main([str(a) for a in argv])
    out = capsys.readouterr()
    return info.value.code, out.out, out.err


# ------------------------------------------------------------------------------------------------------
# totals
# ------------------------------------------------------------------------------------------------------


def test_total_of_two_flood_loadings_is_the_sum_of_separate_runs(tmp_path):
    """Two flood loadings summed equal two single-loading runs added by hand (additivity of annualized
    risk over independent loadings, rare-event sum; common practice)."""
    other = write_scenario(
        tmp_path / "b",
        conseq="stage_m,damage_breach_usd,life_loss_breach\n1.0,0,0\n3.0,2.0e6,3\n8.0,9.0e6,30\n",
        modes="""
        [[failure_modes]]
        name = "seepage"
          [[failure_modes.nodes]]
          kind = "normal"
          median = 3.5
          spread = 0.6
        """,
    )
    main_sc = write_scenario(
        tmp_path / "a",
        toml_extra=f"""
        [[loadings]]
        name = "second river"
        kind = "flood"
        scenario = "{other.as_posix()}"
        """,
    )
    both = assess(load_scenario(main_sc))
    a = assess(load_scenario(write_scenario(tmp_path / "a2")))
    b = assess(load_scenario(other))
    for key in ("annual_failure_probability", "expected_annual_damage", "annualized_life_loss"):
        want = a.headline[key].predictive + b.headline[key].predictive
        assert both.overall[key].predictive == pytest.approx(want, rel=1e-12)
        want_mode = a.headline[key].mode + b.headline[key].mode
        assert both.overall[key].mode == pytest.approx(want_mode, rel=1e-12)
        se = math.hypot(a.headline[key].mc_standard_error, b.headline[key].mc_standard_error)
        assert both.overall[key].mc_standard_error == pytest.approx(se, rel=1e-12)
    # the flood loading of the study is the scenario alone
    assert both.headline["annual_failure_probability"].predictive == a.headline["annual_failure_probability"].predictive
    s = both.summary()
    assert set(s["loadings"]) == {"flood", "second river"}
    assert s["annual_failure_probability"]["predictive"] == pytest.approx(
        s["total"]["annual_failure_probability_combination"]["rare_event_sum"]
    )
    # the total F-N is the sum of the loadings' F-N on common levels
    f_sum = sum(np.asarray(ld.fn.predictive) for ld in both.study.loadings)
    np.testing.assert_allclose(both.overall_fn.predictive, f_sum, rtol=1e-12)


def test_static_node_with_annual_probability_p_gives_afp_p(tmp_path):
    """A normal-operation failure mode of fixed annual probability p has AFP p, EAD p D(h) and ALL p L(h)
    at its pool stage h (closed form)."""
    p, stage = 2.5e-4, 4.0
    path = write_scenario(tmp_path / "s", toml_extra=STATIC.format(stage=stage, p=p))
    (tmp_path / "s" / "dry.csv").write_text(DRY)
    r = assess(load_scenario(path))
    st = r.study.loadings[1]
    assert st.kind == "static"
    assert st.predictive["afp"] == pytest.approx(p, rel=1e-14)
    d_h, l_h = np.interp(stage, [2.0, 6.0], [1.0e6, 3.0e6]), np.interp(stage, [2.0, 6.0], [4, 20])
    assert st.predictive["ead"] == pytest.approx(p * d_h, rel=1e-12)
    assert st.predictive["all"] == pytest.approx(p * l_h, rel=1e-12)
    flood = r.headline["annual_failure_probability"].predictive
    assert r.overall["annual_failure_probability"].predictive == pytest.approx(flood + p, rel=1e-12)
    comb = r.study.afp_combination
    assert comb["independent"] == pytest.approx(1 - (1 - flood) * (1 - p), rel=1e-12)
    assert comb["lower_bound"] == pytest.approx(max(flood, p)) and comb["upper_bound"] == pytest.approx(flood + p)
    # F-N of the static loading: F(N) = p for N <= L(h), 0 above
    lv = st.fn.levels
    np.testing.assert_allclose(st.fn.predictive, np.where(lv <= l_h, p, 0.0), rtol=1e-12, atol=0)


def test_static_lognormal_probability_mean(tmp_path):
    """Stratified draws of a lognormal annual probability reproduce its mean median·exp(β²/2) (closed form),
    within four reported standard errors."""
    extra = STATIC.format(stage=4.0, p=1e-4).replace(
        'distribution = "fixed", value = 0.0001', 'distribution = "lognormal", median = 1e-5, beta = 0.8'
    )
    path = write_scenario(tmp_path / "s", toml_extra=extra)
    (tmp_path / "s" / "dry.csv").write_text(DRY)
    st = assess(load_scenario(path)).study.loadings[1]
    exact = 1e-5 * math.exp(0.32)
    se = st.standard_error("afp")
    assert 0 < se < 0.02 * exact
    assert abs(st.predictive["afp"] - exact) < 4 * se
    assert st.mode["afp"] == pytest.approx(1e-5)


# ------------------------------------------------------------------------------------------------------
# seismic
# ------------------------------------------------------------------------------------------------------


def _power_law_loading(k0, k, median, beta, levels=(1e-4, 50.0), n=80, points=3000):
    a = np.geomspace(*levels, n)
    hz = SeismicHazard("pga_g", a, (k0 * a**-k)[None, :], np.ones(1), ("only",), 0)
    cons = ConsequenceCurves(np.array([0.0, 10.0]), np.ones(2), np.zeros(2), np.ones(2), np.zeros(2))
    fm = SeismicFragility("slump", np.zeros(1), np.array([median]), np.array([beta]))
    return SeismicLoading("eq", hz, fixed_pool(5.0), (fm,), cons, points=points)


@pytest.mark.parametrize("k0,k,median,beta", [(1e-4, 2.5, 0.5, 0.4), (3e-5, 3.0, 0.8, 0.6), (2e-4, 1.8, 0.3, 0.3)])
def test_seismic_power_law_hazard_lognormal_fragility_closed_form(k0, k, median, beta):
    """∫ P_f |dλ| = λ(A) exp(k² β² / 2) for λ = k0 a^-k and a lognormal fragility (Cornell et al. 2002, eq. 7)."""
    ld = _power_law_loading(k0, k, median, beta)
    closed = k0 * median**-k * math.exp(k**2 * beta**2 / 2)
    nu = seismic_failure_frequency(ld)
    assert nu == pytest.approx(closed, rel=2e-4)
    res = assess_seismic(ld, _NoUncertainty(), np.array([1.0]), 1, 1)
    assert -math.log1p(-res.predictive["afp"]) == pytest.approx(closed, rel=2e-4)
    # EAD = damage 1 x failure frequency; direct quadrature with scipy
    f = lambda la: stats.norm.cdf((la - math.log(median)) / beta) * k * k0 * math.exp(-k * la)  # noqa: E731
    direct, _ = integrate.quad(f, math.log(1e-4), math.log(50.0), limit=400)
    assert res.predictive["ead"] == pytest.approx(direct, rel=2e-4)


class _NoUncertainty:
    class uncertain:
        parameters = ()


def test_seismic_branches_weights_and_pool_bins(tmp_path):
    """A seismic loading read from tables: the predictive frequency is the weighted mean over branch curves and
    the probability-weighted mean over pool bins of the per-case frequencies (linearity, by hand)."""
    d = tmp_path / "q"
    extra = """
    [[loadings]]
    name = "earthquake"
    kind = "seismic"
    hazard = { table = "hz.csv", weights = { low = 0.25, high = 0.75 }, points = 2000 }
    pool = { table = "pool.csv", bins = 4 }
      [[loadings.failure_modes]]
      name = "slump"
      table = "frag.csv"
    """
    path = write_scenario(d, toml_extra=extra)
    a = np.geomspace(0.01, 20, 40)
    rows = "\n".join(f"{x:.6g},{2e-5 * x**-2.2:.8e},{6e-5 * x**-2.2:.8e}" for x in a)
    (d / "hz.csv").write_text("pga_g,low,high\n" + rows + "\n")
    (d / "pool.csv").write_text("stage_m,fraction_exceeded\n2.0,1.0\n4.0,0.5\n6.0,0.0\n")
    (d / "frag.csv").write_text("stage_m,median_g,beta\n2.0,1.0,0.4\n6.0,0.5,0.4\n")
    r = assess(load_scenario(path))
    eq = r.study.loadings[1]
    # pool bins: non-exceedance (j + 1/2)/4 on the piecewise-linear duration curve
    u = (np.arange(4) + 0.5) / 4
    h = np.interp(u, [0.0, 0.5, 1.0], [2.0, 4.0, 6.0])
    med = np.interp(h, [2.0, 6.0], [1.0, 0.5])
    k0 = 0.25 * 2e-5 + 0.75 * 6e-5
    nu = np.mean(k0 * med**-2.2 * math.exp(2.2**2 * 0.4**2 / 2))  # Cornell et al. (2002) per bin
    assert -math.log1p(-eq.predictive["afp"]) == pytest.approx(nu, rel=3e-3)
    # the mode curve is the branch with the largest weight
    nu_mode = np.mean(6e-5 * med**-2.2 * math.exp(2.2**2 * 0.4**2 / 2))
    assert -math.log1p(-eq.mode["afp"]) == pytest.approx(nu_mode, rel=3e-3)


# ------------------------------------------------------------------------------------------------------
# exposure scenarios and F-N
# ------------------------------------------------------------------------------------------------------

EXPOSURE = """
[[exposure]]
name = "day"
weight = 0.7
population_factor = 1.0
[[exposure]]
name = "night"
weight = 0.3
population_factor = 2.0
"""


def test_exposure_weighted_all_by_hand(tmp_path):
    """ALL with exposure scenarios = Σ π_e f_e × ALL without them (life loss is linear in population)."""
    base = assess(load_scenario(write_scenario(tmp_path / "a")))
    exp = assess(load_scenario(write_scenario(tmp_path / "b", toml_extra=EXPOSURE)))
    factor = 0.7 * 1.0 + 0.3 * 2.0
    h0, h1 = base.headline["annualized_life_loss"], exp.headline["annualized_life_loss"]
    assert h1.predictive == pytest.approx(factor * h0.predictive, rel=1e-12)
    assert h1.mode == pytest.approx(factor * h0.mode, rel=1e-12)
    # damage and AFP are untouched
    for key in ("annual_failure_probability", "expected_annual_damage"):
        assert exp.headline[key].predictive == pytest.approx(base.headline[key].predictive, rel=1e-12)


def test_fn_of_two_exposure_scenarios_by_hand(tmp_path):
    """F(N) of a static failure of probability p at one stage with two exposure scenarios:
    p [π_day 1(L_day >= N) + π_night 1(L_night >= N)] (by hand)."""
    p, stage = 1e-4, 4.0
    path = write_scenario(tmp_path / "s", toml_extra=STATIC.format(stage=stage, p=p) + EXPOSURE)
    (tmp_path / "s" / "dry.csv").write_text(DRY)
    st = assess(load_scenario(path)).study.loadings[1]
    l_day = np.interp(stage, [2.0, 6.0], [4, 20])
    l_night = 2.0 * l_day
    lv = st.fn.levels
    want = p * (0.7 * (l_day >= lv) + 0.3 * (l_night >= lv))
    np.testing.assert_allclose(st.fn.predictive, want, rtol=1e-12, atol=0)
    assert lv.max() >= l_night  # the levels reach the night-time tail
    assert st.predictive["all"] == pytest.approx(p * (0.7 * l_day + 0.3 * l_night), rel=1e-12)


def test_fn_of_flood_chain_with_exposure_is_the_mixture(tmp_path):
    """The flood chain's F-N integrand with two exposure scenarios is the weighted sum of the F-N integrands
    with each scenario's life loss alone (the mixture over scenarios, by definition of F(N))."""
    import dataclasses

    from riskcalc.response.consequences import read_consequence_table

    d = tmp_path / "b"
    sc = load_scenario(write_scenario(d, toml_extra=EXPOSURE))
    ch = sc.model
    x = np.geomspace(50, 5000, 30)
    lv = np.array([1.0, 5.0, 10.0, 20.0, 40.0, 80.0])
    mix = ch.on(x).fn_integrand(lv)[0]
    raw = read_consequence_table(d / "consequences.csv", stage_unit="m", currency="usd")
    one = {}
    for name, f in (("day", 1.0), ("night", 2.0)):
        c = with_exposure(raw, [ExposureScenario(name, 1.0, f)])
        one[name] = dataclasses.replace(ch, consequences=c).on(x).fn_integrand(lv)[0]
    np.testing.assert_allclose(mix, 0.7 * one["day"] + 0.3 * one["night"], rtol=1e-12, atol=1e-300)
    assert np.any(one["night"] > one["day"])  # the night-time scenario carries the tail


# ------------------------------------------------------------------------------------------------------
# Graham (1999)
# ------------------------------------------------------------------------------------------------------


def test_graham_rates_worked_case():
    """Graham (1999), DSO-99-06, Table 1 [from memory; check the primary document]: medium severity with some
    warning (15-60 min) and vague understanding suggests 0.04 (range 0.01-0.08); 1,000 people at risk give
    40 fatalities. High severity without warning suggests 0.75 (0.3-1.0); low severity with adequate warning
    and precise understanding 0.0002."""
    assert warning_class(0.1) == "none" and warning_class(0.5) == "some" and warning_class(2.0) == "adequate"
    mid, lo, hi = graham_rate("medium", 0.5, "vague")
    assert (mid, lo, hi) == (0.04, 0.01, 0.08)
    assert 1000 * mid == pytest.approx(40.0)
    assert graham_rate("high", 0.0)[0] == 0.75
    assert graham_rate("low", 3.0, "precise")[0] == 0.0002


def test_graham_rates_from_depth_velocity_table(tmp_path):
    """A table of population at risk and depth x velocity gets breach life loss PAR × rate per exposure
    scenario (severity low below 4.6 m²/s [from memory], medium above), and the life-loss factor spans the
    ratios of Graham's range ends (by hand)."""
    cons = "stage_m,population_at_risk,depth_velocity_breach_m2s,damage_breach_usd\n2.0,100,1.0,0\n9.0,500,8.0,1e7\n"
    extra = """
    [[exposure]]
    name = "day"
    weight = 0.5
    warning_hours = 2.0
    understanding = "precise"
    [[exposure]]
    name = "night"
    weight = 0.5
    warning_hours = 0.1
    """
    sc = load_scenario(write_scenario(tmp_path / "g", conseq=cons, toml_extra=extra))
    c = sc.model.consequences
    # day: adequate warning, precise -> low 0.0002, medium 0.01; night: no warning -> low 0.01, medium 0.15
    np.testing.assert_allclose(c.life_loss_breach_by_exposure[0], [100 * 0.0002, 500 * 0.01])
    np.testing.assert_allclose(c.life_loss_breach_by_exposure[1], [100 * 0.01, 500 * 0.15])
    np.testing.assert_allclose(c.life_loss_breach, 0.5 * (c.life_loss_breach_by_exposure.sum(axis=0)))
    mid = 0.5 * (100 * 0.0002 + 500 * 0.01) + 0.5 * (100 * 0.01 + 500 * 0.15)
    lo = 0.5 * (0 + 500 * 0.002) + 0.5 * (0 + 500 * 0.03)
    hi = 0.5 * (100 * 0.0004 + 500 * 0.02) + 0.5 * (100 * 0.02 + 500 * 0.35)
    assert c.rate_range == pytest.approx((lo / mid, hi / mid))
    lf = [p for p in sc.model.uncertain.parameters if p.target == "life_loss_factor"]
    assert len(lf) == 1 and lf[0].distribution.support() == pytest.approx((lo / mid, hi / mid))


# ------------------------------------------------------------------------------------------------------
# consequences per failure mode, individual risk
# ------------------------------------------------------------------------------------------------------

TWO_MODES = """
[[failure_modes]]
name = "overtop"
  [[failure_modes.nodes]]
  kind = "normal"
  median = 5.0
  spread = 0.5
[[failure_modes]]
name = "pipe"
consequences = "pipe_breach"
  [[failure_modes.nodes]]
  kind = "normal"
  median = 4.0
  spread = 1.0
"""


def test_failure_mode_consequences_allocated_by_hand(tmp_path):
    """EAD and ALL integrands with a failure mode of its own breach table: Σ_i a_i X_b,i + (1 − P_f) X_nb with
    a_i = P_f P_i / Σ P_j (proportional allocation), evaluated by hand with scipy.stats.norm."""
    d = tmp_path / "m"
    path = write_scenario(d, modes=TWO_MODES, toml_extra='[consequence_tables]\npipe_breach = "pipe.csv"\n')
    (d / "pipe.csv").write_text("stage_m,damage_breach_usd,life_loss_breach\n0.0,2.0e6,3\n10.0,4.0e6,5\n")
    ch = load_scenario(path).model
    x = np.array([30.0, 200.0, 900.0, 4000.0])
    g = ch.integrands(x)
    names = ch.output_names()
    h = ch.stage_at(x)
    p1, p2 = stats.norm.cdf(h, 5.0, 0.5), stats.norm.cdf(h, 4.0, 1.0)
    pf = 1 - (1 - p1) * (1 - p2)
    a1, a2 = pf * p1 / (p1 + p2), pf * p2 / (p1 + p2)
    st = [2.0, 4.0, 6.0, 9.0]
    db = np.interp(h, st, [0, 1e6, 5e6, 2e7])
    dn = np.interp(h, st, [0, 0, 1e6, 5e6])
    lb = np.interp(h, st, [0, 1, 10, 50])
    d2 = np.interp(h, [0.0, 10.0], [2e6, 4e6])
    l2 = np.interp(h, [0.0, 10.0], [3, 5])
    np.testing.assert_allclose(g[:, names.index("ead")], a1 * db + a2 * d2 + (1 - pf) * dn, rtol=1e-10)
    np.testing.assert_allclose(g[:, names.index("ead_incremental")], a1 * (db - dn) + a2 * (d2 - dn), rtol=1e-10)
    np.testing.assert_allclose(g[:, names.index("all")], a1 * lb + a2 * l2, rtol=1e-10)
    # F-N: each mode's share at its own life loss (nominal, no natural variability)
    lv = np.array([2.0, 4.0, 8.0, 30.0])
    fn = ch.on(x).fn_integrand(lv)[0]
    np.testing.assert_allclose(fn, a1[:, None] * (lb[:, None] >= lv) + a2[:, None] * (l2[:, None] >= lv), rtol=1e-10)


def test_individual_risk_by_hand(tmp_path):
    """IR = exposure × fatality rate × Σ AFP_i over the failure modes counted (definition)."""
    p = 3e-5
    extra = (
        STATIC.format(stage=4.0, p=p)
        + """
    [[individual_risk]]
    name = "cottage"
    exposure = 0.5
    fatality_rate = 0.8
    failure_modes = ["normal operation: piping"]
    [[individual_risk]]
    name = "everyone"
    exposure = 1.0
    fatality_rate = 0.1
    """
    )
    path = write_scenario(tmp_path / "s", toml_extra=extra)
    (tmp_path / "s" / "dry.csv").write_text(DRY)
    r = assess(load_scenario(path))
    cottage, everyone = r.individual_risk
    assert cottage.predictive == pytest.approx(0.5 * 0.8 * p, rel=1e-12)
    assert cottage.failure_modes == ("normal operation: piping",)
    total_afp = r.overall["annual_failure_probability"].predictive
    assert everyone.predictive == pytest.approx(0.1 * total_afp, rel=1e-9)
    ref = r.summary()["reference_lines"]
    ir_lines = [c for c in ref["lines"] if c["kind"] == "individual_risk"]
    assert ir_lines and all(c["predictive"]["position"] in ("above", "below") for c in ir_lines)
    for c in ir_lines:
        assert c["predictive"]["computed_per_yr"] == pytest.approx(max(cottage.predictive, everyone.predictive))


# ------------------------------------------------------------------------------------------------------
# bad input: refused by `riskcalc check` with one line and exit 2
# ------------------------------------------------------------------------------------------------------

BAD = [
    (
        "unknown loading kind",
        '[[loadings]]\nname = "wind"\nkind = "tornado"\n',
        {},
        r"key 'loadings\[1\]\.kind': unknown loading kind 'tornado'",
    ),
    (
        "pool-duration not monotone",
        '[[loadings]]\nname = "n"\nkind = "static"\npool = { table = "pool.csv" }\n'
        '  [[loadings.failure_modes]]\n  name = "p"\n  annual_probability = { value = 1e-5 }\n',
        {"pool.csv": "stage_m,fraction_exceeded\n1.0,1.0\n2.0,0.4\n3.0,0.6\n4.0,0.0\n"},
        r"pool.csv, row 4, column 'fraction_exceeded': fraction 0.6 is not below",
    ),
    (
        "exposure weights not summing to 1",
        '[[exposure]]\nname = "day"\nweight = 0.6\n[[exposure]]\nname = "night"\nweight = 0.3\n',
        {},
        r"key 'exposure': the exposure weights add up to 0.9; expected 1",
    ),
    (
        "failure mode naming a missing consequence table",
        "",
        {},
        r"key 'failure_modes\[2\]\.consequences': names consequence table 'nowhere'",
    ),
    (
        "seismic weights not summing to 1",
        '[[loadings]]\nname = "eq"\nkind = "seismic"\nhazard = { table = "hz.csv", weights = { a = 0.5 } }\n'
        'pool = { stage = 3.0 }\n  [[loadings.failure_modes]]\n  name = "s"\n  median = 0.5\n  beta = 0.4\n',
        {"hz.csv": "pga_g,a\n0.1,1e-2\n1.0,1e-4\n"},
        r"key 'loadings\[1\]\.hazard\.weights': the curve weights add up to 0.5; expected 1",
    ),
    (
        "rising seismic hazard curve",
        '[[loadings]]\nname = "eq"\nkind = "seismic"\nhazard = { table = "hz.csv", weights = { a = 1.0 } }\n'
        'pool = { stage = 3.0 }\n  [[loadings.failure_modes]]\n  name = "s"\n  median = 0.5\n  beta = 0.4\n',
        {"hz.csv": "pga_g,a\n0.1,1e-2\n1.0,2e-2\n"},
        r"hz.csv, row 3, column 'a': 0.02 rises above",
    ),
    (
        "static mode with a fragility",
        '[[loadings]]\nname = "n"\nkind = "static"\npool = { stage = 3.0 }\n'
        '  [[loadings.failure_modes]]\n  name = "p"\n  median = 0.5\n',
        {},
        r"a static failure mode takes annual_probability, not 'median'",
    ),
    (
        "Graham table without warning time",
        "",
        {"consequences.csv": "stage_m,population_at_risk,depth_velocity_breach_m2s\n1,10,1\n5,100,6\n"},
        r"set \[life_loss\] warning_hours",
    ),
]


@pytest.mark.parametrize("label,extra,files,message", BAD, ids=[b[0] for b in BAD])
def test_bad_study_input_is_refused_with_one_line(tmp_path, capsys, label, extra, files, message):
    d = tmp_path / "bad"
    modes = None
    if label == "failure mode naming a missing consequence table":
        modes = TWO_MODES.replace('consequences = "pipe_breach"', 'consequences = "nowhere"')
    path = write_scenario(d, toml_extra=extra, modes=modes)
    for name, text in files.items():
        (d / name).write_text(text)
    code, out, err = _cli(["check", path], capsys)
    assert code == 2, (out, err)
    lines = [ln for ln in err.strip().splitlines() if ln.strip()]
    assert len(lines) == 1 and "Traceback" not in err
    assert re.search(message, lines[0]), lines[0]


def test_scenario_without_loadings_has_no_study_keys(tmp_path):
    """Backwards compatible: a scenario without [[loadings]] is one flood loading; the summary has no
    'loadings' key and its headline is the flood's."""
    r = assess(load_scenario(write_scenario(tmp_path / "a")))
    assert r.study is None and r.overall is r.headline
    s = r.summary()
    assert "loadings" not in s and s["individual_risk"] is None and s["exposure"] is None


def test_standard_error_of_stratified_replicates_matches_reruns(tmp_path):
    """The reported standard error of a static loading (spread of independent stratified replicates) agrees
    with the spread of its predictive AFP and ALL over independent reruns (the definition of a standard error)."""
    from riskcalc.risk.loadings import assess_static

    extra = STATIC.format(stage=4.0, p=1e-4).replace(
        'distribution = "fixed", value = 0.0001', 'distribution = "lognormal", median = 1e-5, beta = 1.5'
    )
    extra += '\n[consequences.life_loss_multiplier]\ndistribution = "lognormal"\nmedian = 1.0\nbeta = 0.7\n'
    path = write_scenario(tmp_path / "s", toml_extra="")
    text = path.read_text().replace('[consequences]\ntable = "consequences.csv"\n', "")
    path.write_text(
        text + '\n[consequences]\ntable = "consequences.csv"\n' + extra.replace("[consequences.", "[consequences.")
    )
    (tmp_path / "s" / "dry.csv").write_text(DRY)
    sc = load_scenario(path)
    ld = sc.loadings[0]
    vals, ses = [], []
    for seed in range(60):
        r = assess_static(ld, sc.model, np.array([1.0]), 400, seed)
        vals.append([r.predictive["afp"], r.predictive["all"]])
        ses.append([r.standard_error("afp"), r.standard_error("all")])
    observed = np.std(vals, axis=0, ddof=1)
    reported = np.sqrt(np.mean(np.square(ses), axis=0))
    assert np.all(reported > 0.7 * observed) and np.all(reported < 1.4 * observed), (reported, observed)


def test_mixed_graham_and_direct_tables_need_an_explicit_multiplier(tmp_path, capsys):
    """Graham's range becomes one factor on all life loss, so a scenario mixing Graham-rate tables with tables
    of direct life loss must give its own multiplier (refused with one line otherwise)."""
    d = tmp_path / "mix"
    extra = '[consequence_tables]\ngraham = "g.csv"\n[life_loss]\nwarning_hours = 0.5\n' + TWO_MODES.replace(
        'consequences = "pipe_breach"', 'consequences = "graham"'
    )
    path = write_scenario(d, modes="", toml_extra=extra)
    (d / "g.csv").write_text("stage_m,population_at_risk,depth_velocity_breach_m2s\n1,10,1\n8,100,6\n")
    code, _, err = _cli(["check", path], capsys)
    assert code == 2 and "others do not; give [consequences] life_loss_multiplier" in err
    path = write_scenario(
        d,
        modes="",
        toml_extra=extra.replace("warning_hours = 0.5\n", 'warning_hours = 0.5\nrate_uncertainty = "none"\n'),
    )
    code, out, err = _cli(["check", path], capsys)
    assert code == 0, err


def test_warnings_of_a_study_name_the_flood_loading(tmp_path):
    """In a study the run's warnings (computed on the flood loading) say so."""
    path = write_scenario(tmp_path / "s", toml_extra=STATIC.format(stage=4.0, p=1e-4))
    (tmp_path / "s" / "dry.csv").write_text(DRY)
    r = assess(load_scenario(path))
    assert all(w.startswith("flood loading: ") for w in r.warnings)
    assert r.summary()["annual_failure_probability_bounds"]["applies_to"].startswith("the flood loading")


@pytest.mark.parametrize("seed", range(6))
def test_rating_interpolant_equals_scipy_pchip(seed):
    """riskcalc's own monotone cubic (no scipy.interpolate import at check time) equals
    scipy.interpolate.PchipInterpolator (Fritsch & Carlson 1980; Fritsch & Butland 1984) on random tables,
    monotone and not."""
    from scipy.interpolate import PchipInterpolator

    from riskcalc.response.rating import hermite_cubic, pchip_derivatives

    rng = np.random.default_rng(seed)
    for n in (2, 3, 5, 9):
        x = np.sort(rng.uniform(0, 5, n)) + np.arange(n) * 1e-3
        y = np.cumsum(rng.uniform(0.01, 2, n)) if seed % 2 else rng.normal(size=n)
        xq = np.linspace(x[0], x[-1], 400)
        np.testing.assert_allclose(
            hermite_cubic(x, y, pchip_derivatives(x, y), xq), PchipInterpolator(x, y)(xq), rtol=0, atol=1e-12
        )
