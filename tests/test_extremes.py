"""Extreme but valid inputs give finite answers (never NaN or null headline figures), and the
warnings that matter fire when they should and stay quiet when they should not.

Expected values are closed forms of the method (design notes, "Grid and masses"): the mass below
the grid carries no risk, so a fragility of 1 everywhere gives AFP = p̄(x_0), and 0 everywhere
gives AFP = 0 exactly; a near-degenerate ensemble (sd 1e-4 of log10 Q) puts its mass at one
discharge, so AFP ≈ P(x_0 < Q) · P_f(h(10^mean)).
"""

from __future__ import annotations

import json
import tracemalloc

import numpy as np
import pytest
from scipy import special as sc

from riskcalc.risk.assess import assess
from riskcalc.response.consequences import ConsequenceCurves
from riskcalc.hazard.ensemble import HazardEnsemble
from riskcalc.io import write_json
from riskcalc.response.chain import ResponseChain
from riskcalc.risk.propagate import propagate
from riskcalc.response import FailureMode, FragilityCurve
from riskcalc.config.scenario import load_scenario

HEADLINE = ("annual_failure_probability", "expected_annual_damage", "annualized_life_loss")
FAST = "[grid]\npoints = 300\n"


def ensemble_csv(rows):
    return "mean,sd,skew\n" + "".join(f"{m},{s},{g}\n" for m, s, g in rows)


def finite_summary(result, tmp_path):
    """summary.json is written with allow_nan=False and every headline figure is a finite number."""
    write_json(tmp_path / "summary.json", result.summary())  # raises on NaN / inf
    s = json.loads((tmp_path / "summary.json").read_text())
    for key in HEADLINE:
        h = s[key]
        for v in (h["predictive"], h["mode"], h["median_curve"], h["mc_standard_error"], *h["ensemble"].values()):
            assert isinstance(v, float) and np.isfinite(v), (key, h)
    return s


def run(factory, tmp_path, folder, **kw):
    kw.setdefault("toml_extra", FAST)
    path = factory(folder=folder, **kw)
    return assess(load_scenario(path), workers=1)


def table_mode(p_lo, p_hi):
    return (
        """
    [[failure_modes]]
    name = "breach"
      [[failure_modes.nodes]]
      kind = "table"
      table = "frag.csv"
    """,
        f"stage_m,probability\n-100,{p_lo}\n100,{p_hi}\n",
    )


@pytest.mark.parametrize("skew", [-3.0, 3.0])
def test_extreme_skew_is_finite(scenario_factory, tmp_path, skew):
    rows = [(2.5 + 0.02 * i, 0.25, skew) for i in range(-3, 4)]
    res = run(scenario_factory, tmp_path, f"skew{skew}", ensemble=ensemble_csv(rows))
    s = finite_summary(res, tmp_path)
    afp = s["annual_failure_probability"]
    assert 0 <= afp["predictive"] <= 1 and afp["predictive"] > 0
    # skew -3 is bounded above at 10^(mean + 2 sd / 3) (Bulletin 17B, Appendix 3: t = alpha + 2z/g >= 0)
    if skew < 0:
        assert res.grid[-1] <= 10 ** (2.56 + 2 * 0.25 / 3) * (1 + 1e-9)


def test_tiny_nonzero_skew_is_the_normal_case(scenario_factory, tmp_path):
    # a skew of 1e-200 once gave NaN (4 / skew^2 overflowed): it is the zero-skew case to rounding
    a = run(scenario_factory, tmp_path, "g0", ensemble=ensemble_csv([(2.5, 0.25, 0.0), (2.6, 0.2, 0.0)]))
    b = run(scenario_factory, tmp_path, "gt", ensemble=ensemble_csv([(2.5, 0.25, 1e-200), (2.6, 0.2, -1e-200)]))
    finite_summary(b, tmp_path)
    for key in HEADLINE:
        assert b.headline[key]["predictive"] == pytest.approx(a.headline[key]["predictive"], rel=1e-12)


def test_near_degenerate_ensemble(scenario_factory, tmp_path):
    rows = [(2.5, 1e-4, 0.0), (2.5, 1e-4, 0.1)]
    res = run(scenario_factory, tmp_path, "sd", ensemble=ensemble_csv(rows))
    finite_summary(res, tmp_path)
    q = 10**2.5
    h = res.scenario.model.stage_at(np.array([q]))[0]
    pf = sc.ndtr((h - 5.0) / 0.5)  # conftest's normal breach node: median 5, spread 0.5
    mass = res.propagation.aep_predictive[0]  # P(Q > x_0), the mass the grid sees
    # the ensemble spans 10^(2.5 ± 5e-4): P_f varies by < 0.1 % across it (slope of Φ at this stage)
    assert res.headline["annual_failure_probability"]["predictive"] == pytest.approx(mass * pf, rel=2e-3)


def test_aep_down_to_1e8(scenario_factory, tmp_path):
    res = run(scenario_factory, tmp_path, "deep", toml_extra="[grid]\npoints = 400\naep_min = 1e-8\n")
    s = finite_summary(res, tmp_path)
    # the grid reaches every member's 1e-8 quantile, so the predictive AEP above it is at most 1e-8
    assert 0 <= s["truncation"]["aep_above_grid"] <= 1e-8
    ens = res.scenario.ensemble
    assert res.grid[-1] >= ens.quantile(np.array([1e-8])).max() * (1 - 1e-12)


def test_single_realization(scenario_factory, tmp_path):
    res = run(scenario_factory, tmp_path, "one", ensemble=ensemble_csv([(2.5, 0.25, 0.1)]))
    s = finite_summary(res, tmp_path)
    for key in HEADLINE:
        h = s[key]
        # one member: the predictive curve is that member, which is also the mode curve (the
        # weighted mean of one parameter set); every ensemble statistic is that value; SE 0
        assert h["predictive"] == pytest.approx(h["mode"], rel=1e-12)
        for v in h["ensemble"].values():
            assert v == pytest.approx(h["predictive"], rel=1e-12)
        assert h["mc_standard_error"] == 0.0
    assert any("effective size is 1 realizations" in w for w in res.warnings)


def test_two_row_rating_table(scenario_factory, tmp_path):
    res = run(scenario_factory, tmp_path, "r2", rating="discharge_m3s,stage_m\n10,1.0\n100000,11.0\n")
    finite_summary(res, tmp_path)
    # two rows: stage is linear in log10 Q (PCHIP through two points is the chord)
    q = np.array([31.6, 1000.0, 5e4])
    np.testing.assert_allclose(res.scenario.model.stage_at(q), 1.0 + 10.0 * (np.log10(q) - 1) / 4, rtol=1e-12)


def test_fragility_zero_everywhere_gives_afp_exactly_zero(scenario_factory, tmp_path):
    modes, frag = table_mode(0, 0)
    path = scenario_factory(folder="zero", modes=modes, toml_extra=FAST)
    (path.parent / "frag.csv").write_text(frag)
    res = assess(load_scenario(path), workers=1)
    for curve in ("predictive", "mode", "median_curve"):
        assert res.headline["annual_failure_probability"][curve] == 0.0
        assert res.headline["annualized_life_loss"][curve] == 0.0  # life loss only given breach here
    assert np.all(res.propagation.column("afp") == 0.0)
    # EAD is then the non-breach damage alone, still finite and >= 0
    assert res.headline["expected_annual_damage"]["predictive"] > 0
    s = res.summary()
    # 0 / 0 has no ratio: written as null, not NaN
    assert s["mode_understatement"]["annual_failure_probability"] is None
    json.dumps(s, allow_nan=False)


def test_fragility_one_everywhere_gives_predictive_aep_of_grid_bottom(scenario_factory, tmp_path):
    modes, frag = table_mode(1, 1)
    path = scenario_factory(folder="one", modes=modes, toml_extra=FAST)
    (path.parent / "frag.csv").write_text(frag)
    res = assess(load_scenario(path), workers=1)
    ens = res.scenario.ensemble
    p0 = float(ens.weights @ ens.aep(res.grid[:1])[:, 0])  # p̄(x_0), straight from the families
    afp = res.headline["annual_failure_probability"]["predictive"]
    assert afp == pytest.approx(p0, rel=1e-12)
    assert afp == pytest.approx(res.propagation.aep_predictive[0], rel=1e-12)
    # x_0 is the smallest member quantile at AEP 0.999, so p̄(x_0) >= 0.999
    assert 0.999 <= afp <= 1 + 1e-12


def test_million_realizations_bounded_memory():
    # R = 10^6 Gumbel members (cheap), a 200-point grid: the dense (R, Q) masses alone would be
    # 1.6 GB; the chunked propagation must stay far below that (sanity bound, not a benchmark)
    R, Q = 10**6, 200
    rng = np.random.default_rng(11)
    ens = HazardEnsemble(
        family="gumbel",
        weights=np.full(R, 1.0 / R),
        params={"location": rng.normal(500, 20, R), "scale": rng.uniform(80, 120, R)},
    )
    grid = np.geomspace(200, 5000, Q)
    z = np.zeros(2)
    model = ResponseChain(
        failure_modes=(FailureMode("m", (FragilityCurve("normal", median=1500.0, spread=200.0),)),),
        consequences=ConsequenceCurves(np.array([0.0, 1e4]), z, z, z, z),
    )
    tracemalloc.start()
    try:
        prop = propagate(ens, model, grid, seed=1, workers=1, chunk_bytes=16 * 2**20)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    dense = 8 * R * Q
    assert prop.n_chunks > 1
    assert peak < 0.25 * dense, f"peak {peak / 2**20:.0f} MiB"
    v = prop.column("afp")
    assert np.all(np.isfinite(v)) and np.all((v >= 0) & (v <= 1))
    # the linearity identity still holds at this size (sum of 10^6 terms: 1e-9 relative)
    assert prop.weights @ v == pytest.approx(prop.masses_predictive @ prop.integrands[:, 0], rel=1e-9)


# ----------------------------------------------------------------------
# warnings that matter
# ----------------------------------------------------------------------
def test_no_spurious_warnings_on_a_well_sampled_scenario(scenario_factory, tmp_path):
    # 2,000 members of a tight ensemble, the breach well inside the rating table and the grid
    rng = np.random.default_rng(5)
    rows = zip(rng.normal(2.5, 0.02, 2000).round(6), rng.uniform(0.24, 0.26, 2000).round(6), [0.0] * 2000)
    res = run(scenario_factory, tmp_path, "good", ensemble=ensemble_csv(rows))
    assert res.warnings == []


def test_warns_on_extrapolation_beyond_rating_table(scenario_factory, tmp_path):
    # the table stops at 1,000 m3/s (stage 4) but the breach median is at stage 5
    res = run(scenario_factory, tmp_path, "ex", rating="discharge_m3s,stage_m\n10,1.0\n100,2.0\n1000,4.0\n")
    assert res.extrapolation["share_of_afp_beyond_rating_table"] > 0.5
    assert any("above the rating table (1000 m³/s)" in w and "extrapolated" in w for w in res.warnings)


def test_warns_on_truncation_above_grid(scenario_factory, tmp_path):
    # a grid that stops at AEP 1e-3 while the breach sits near the 1e-4 flood
    res = run(scenario_factory, tmp_path, "tr", toml_extra="[grid]\npoints = 300\naep_min = 1e-3\n")
    share = (
        res.truncation["tail_contribution"]["annual_failure_probability"]
        / res.headline["annual_failure_probability"]["predictive_nominal_response"]
    )
    assert share > 0.01
    assert any("comes from floods above the grid" in w and "lower grid.aep_min" in w for w in res.warnings)


def test_warns_on_too_few_realizations(scenario_factory, tmp_path):
    rows = [(2.5 + 0.05 * np.sin(i), 0.25 + 0.03 * np.cos(i), 0.0) for i in range(12)]
    res = run(scenario_factory, tmp_path, "few", ensemble=ensemble_csv(rows))
    assert any("effective size is 12 realizations" in w for w in res.warnings)
    assert any("Monte Carlo standard error" in w and "(12 realizations) is too small" in w for w in res.warnings)


def test_effective_size_warning_is_not_raised_at_the_threshold(scenario_factory, tmp_path):
    res = run(scenario_factory, tmp_path, "ess200")  # conftest's ensemble has exactly 200 equal weights
    assert not any("effective size" in w for w in res.warnings)
