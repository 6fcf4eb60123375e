"""Reference lines with confidence: hand-made cases, N ranges, default lines by structure kind, the run line.

Line values are display defaults recalled from published guidance (shared references, section 7)
[from memory; check the primary documents]: USACE ER 1110-2-1156 (2014) ch. 5, F-N limit (N = 1,
F = 1e-3) to (N = 1000, F = 1e-6); USBR Public Protection Guidelines (2011), AFP 1e-4 per year and
annualized life loss 1e-3 and 1e-2 lives/yr; ANCOLD (2003). The confidence against a line is the weighted
share of the draws whose figure lies above it (design notes, "Study structure and reporting rules").
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np
import pytest

from riskcalc.cli import main
from riskcalc.config.scenario import load_scenario
from riskcalc.decision import guidelines as gl
from riskcalc.decision import reference_checks as rc
from riskcalc.risk.assess import assess

ROOT = Path(__file__).resolve().parents[1]
UNVERIFIED = "[from memory; check the primary document]"

USACE_FN = gl.FNLimitLine(
    "F-N limit",
    "USACE ER 1110-2-1156 (2014) [from memory]",
    anchor_n=1.0,
    anchor_f=1e-3,
    slope=-1.0,
    n_min=1.0,
    n_max=1000.0,
)
AFP_LINE = gl.ProbabilityLine("AFP 1e-4", "USBR PPG (2011) [from memory]", 1e-4)
IR_LINE = gl.ProbabilityLine("individual", "USACE (2014) [from memory]", 1e-4, measure="individual_risk")


def _brute_fn_above(line, levels, f, per_decade=4000):
    """Independent check of an F-N curve against an F-N line: the step curve F(N) = f[k] on [n_k, n_(k+1))
    (and f[-1] at n[-1]) on a dense grid inside the line's range, compared point by point with the line."""
    levels = np.asarray(levels, float)
    lo, hi = max(line.n_min, levels[0]), min(line.n_max, levels[-1])
    if lo > hi:
        return None
    n = np.unique(np.r_[np.geomspace(lo, hi, per_decade), levels[(levels >= lo) & (levels <= hi)]])
    k = np.searchsorted(levels, n, side="right") - 1
    curve = np.asarray(f, float)[k]
    line_f = line.anchor_f * (n / line.anchor_n) ** line.slope
    return bool(np.any(curve > line_f * (1 + 1e-9)))


# --------------------------------------------------------------------------
# Hand-made cases: weights and values that sum by hand
# --------------------------------------------------------------------------
W = np.array([0.1, 0.2, 0.3, 0.4])


def test_confidence_against_an_afp_line_by_hand():
    # AFP of four draws against the line 1e-4: draws 1 (2e-4) and 3 (1.5e-4) lie above, so
    # P(AFP > 1e-4) = 0.1 + 0.3 = 0.4; none is not applicable
    afp = np.array([2e-4, 5e-5, 1.5e-4, 1e-5])
    ratio, _, _ = rc.point_ratios(AFP_LINE, afp, np.zeros(4))
    np.testing.assert_allclose(ratio, afp / 1e-4, rtol=1e-12)
    d = rc.draw_shares(ratio, W)
    assert d["share_above"] == pytest.approx(0.4, abs=1e-15)
    assert d["share_below"] == pytest.approx(0.6, abs=1e-15)
    assert d["share_not_applicable"] == 0.0 and d["count"] == 4


def test_confidence_against_a_life_loss_line_with_an_n_range_by_hand():
    # f N = 1e-3 lives/yr drawn for 1 <= N <= 100. Points (AFP, ALL_inc) and N = ALL_inc / AFP:
    #   d1 (1e-4, 5e-3): N = 50, ALL 5e-3 > 1e-3        -> above
    #   d2 (1e-5, 2e-3): N = 200, beyond the range       -> not applicable (not "below", not "above")
    #   d3 (1e-3, 5e-4): N = 0.5, left of the range      -> not applicable
    #   d4 (1e-4, 5e-4): N = 5, ALL 5e-4 < 1e-3          -> below
    line = gl.LifeLossLine("ALL 1e-3 on 1..100", "test", 1e-3, n_min=1.0, n_max=100.0)
    afp = np.array([1e-4, 1e-5, 1e-3, 1e-4])
    all_inc = np.array([5e-3, 2e-3, 5e-4, 5e-4])
    ratio, n, _ = rc.point_ratios(line, afp, all_inc)
    np.testing.assert_allclose(n, [50.0, 200.0, 0.5, 5.0], rtol=1e-12)
    assert [rc.position(r) for r in ratio] == ["above", "not applicable", "not applicable", "below"]
    d = rc.draw_shares(ratio, W)
    assert d["share_above"] == pytest.approx(0.1, abs=1e-15)
    assert d["share_not_applicable"] == pytest.approx(0.5, abs=1e-15)
    assert d["share_below"] == pytest.approx(0.4, abs=1e-15)


def test_confidence_against_an_fn_line_by_hand_and_by_brute_force():
    # F-N limit F = 1e-3 / N on 1..1000; curves at N = 1, 10, 100 (step functions):
    #   d1 [2e-3, 1e-5, 0]:    on [1, 10) F = 2e-3 against the line down to 1e-4 at N -> 10: above
    #   d2 [5e-5, 5e-6, 1e-7]: ratio at most 0.5 (step ends) -> below
    #   d3 [1e-4, 2e-5, 2e-6]: on [10, 100) F = 2e-5 against 1e-5 at N -> 100: above
    #   d4 [0, 0, 0]: below
    # P(curve above the line somewhere in its range) = 0.1 + 0.3 = 0.4
    levels = np.array([1.0, 10.0, 100.0])
    f = np.array([[2e-3, 1e-5, 0.0], [5e-5, 5e-6, 1e-7], [1e-4, 2e-5, 2e-6], [0.0, 0.0, 0.0]])
    ratio, _ = rc.curve_ratios(USACE_FN, levels, f)
    assert [rc.position(r) for r in ratio] == ["above", "below", "above", "below"]
    np.testing.assert_allclose(ratio[:3], [20.0, 0.5, 2.0], rtol=1e-12)
    for k in range(4):
        assert _brute_fn_above(USACE_FN, levels, f[k]) == (ratio[k] > 1), k
    assert rc.draw_shares(ratio, W)["share_above"] == pytest.approx(0.4, abs=1e-15)


def test_fn_curve_without_a_point_in_the_line_range():
    # a line for N >= 100; the curve stops at N = 10. F(10) = 0: an F-N curve does not rise with N, so it is 0
    # all along the line (below). F(10) > 0: the curve is not known at N >= 100 (not applicable).
    line = gl.FNLimitLine("large N", "test", anchor_n=100.0, anchor_f=1e-5, n_min=100.0, n_max=1000.0)
    levels = [1.0, 10.0]
    r, _ = rc.curve_ratios(line, levels, np.array([[1e-3, 0.0], [1e-3, 1e-4]]))
    assert rc.position(r[0]) == "below" and r[0] == 0.0
    assert rc.position(r[1]) == "not applicable"


def test_line_checks_compare_fn_points_with_fn_lines_only():
    levels = np.array([1.0, 10.0, 100.0])
    line = gl.LifeLossLine("ALL 1e-2", "test", 1e-2)
    pred = rc.Figures(2e-4, 3e-3, np.array([2e-4, 1e-4, 1e-7]))
    mode = rc.Figures(5e-5, 1e-4, np.array([5e-5, 1e-5, 0.0]))
    draws = rc.Figures(
        np.array([2e-4, 5e-5, 1e-4, 3e-4]),
        np.array([3e-2, 1e-4, 1e-3, 2e-2]),
        np.array([[2e-3, 1e-5, 0.0], [5e-5, 5e-6, 1e-7], [1e-4, 2e-5, 2e-6], [0.0, 0.0, 0.0]]),
    )
    out = rc.line_checks([USACE_FN, line, AFP_LINE, IR_LINE], levels, pred, mode, draws, W)
    by = {c["line"]: c for c in out}
    # F-N limit line: against the F-N curve; predictive [2e-4, 1e-4, 1e-7]: on [10, 100) F = 1e-4 against 1e-5
    # near N = 100 -> ratio 10
    fn = by["F-N limit"]
    assert fn["compared_with"].startswith("F-N curve") and fn["predictive"]["ratio"] == pytest.approx(10.0)
    assert fn["predictive"]["position"] == "above" and fn["mode"]["position"] == "below"
    assert fn["draws"]["share_above"] == pytest.approx(0.4, abs=1e-15)
    # life-loss line: against the f-N point; predictive ALL 3e-3 < 1e-2 (below); draws 1 (3e-2) and 4 (2e-2)
    # lie above: 0.1 + 0.4 = 0.5
    ll = by["ALL 1e-2"]
    assert ll["compared_with"].startswith("f-N point")
    assert ll["predictive"]["ratio"] == pytest.approx(0.3) and ll["predictive"]["position"] == "below"
    assert ll["predictive"]["n_lives"] == pytest.approx(15.0)
    assert ll["draws"]["share_above"] == pytest.approx(0.5, abs=1e-15)
    # AFP line: 2e-4 > 1e-4; draws 1 (2e-4) and 4 (3e-4) above: 0.5
    assert by["AFP 1e-4"]["predictive"]["position"] == "above"
    assert by["AFP 1e-4"]["draws"]["share_above"] == pytest.approx(0.5, abs=1e-15)
    # individual risk: not assessed, no confidence
    ir = by["individual"]
    assert ir["predictive"]["position"] == ir["mode"]["position"] == "not assessed" and ir["draws"] is None
    counts = rc.count_positions(out)
    assert counts["lines_assessed"] == 3 and counts["lines_not_assessed"] == 1
    assert counts["predictive"]["above"] == 2 and counts["mode"]["above"] == 0
    with pytest.raises(ValueError, match="F-N limit line"):
        rc.point_ratios(USACE_FN, 1e-4, 1e-3)


def test_check_point_life_loss_line_outside_its_range_is_not_applicable():
    line = gl.LifeLossLine("ALL 1e-3 on 10..", "test", 1e-3, n_min=10.0)
    res = gl.check_point(line, [1e-4, 1e-2], [1e-2, 1e-2])  # N = 100 (in range, ratio 10); N = 1 (outside)
    assert res.ratio[0] == pytest.approx(10.0) and res.exceeds.tolist() == [True, False]
    assert math.isnan(res.ratio[1])


# --------------------------------------------------------------------------
# Default lines by structure kind
# --------------------------------------------------------------------------
def test_levee_default_lines_exclude_the_dam_only_sources():
    levee = gl.default_guidelines("levee")
    assert levee.lines, "a levee gets lines"
    for ln in levee.lines:
        # USACE's tolerable risk guidelines cover levees as well as dams (Snorteland 2019); USBR's public
        # protection guidelines and ANCOLD are written for dams [from memory]
        assert "Reclamation" not in ln.source and "ANCOLD" not in ln.source and "USBR" not in ln.name
        assert "US Army Corps of Engineers" in ln.source and UNVERIFIED in ln.source
    assert not any(
        isinstance(ln, gl.LifeLossLine) or (isinstance(ln, gl.ProbabilityLine) and ln.on_chart) for ln in levee.lines
    )  # the AFP and ALL lines are USBR's
    fn = [ln for ln in levee.lines if isinstance(ln, gl.FNLimitLine)]
    assert len(fn) == 1  # societal limit (1, 1e-3) to (1000, 1e-6) [from memory]
    assert gl.evaluate_line(fn[0], 1.0) == pytest.approx(1e-3)
    assert gl.evaluate_line(fn[0], 1000.0) == pytest.approx(1e-6)
    assert set(gl.DAM_ONLY).isdisjoint(gl.STRUCTURE_DEFAULTS["levee"])


def test_dam_and_unspecified_defaults_are_the_former_defaults():
    dam = gl.default_guidelines("dam")
    unspecified = gl.default_guidelines("unspecified")
    former = [ln for k in ("usace_2014", "usbr_2011", "ancold_2003") for ln in gl.DEFAULT_GUIDELINES[k].lines]
    assert list(dam.lines) == former and list(unspecified.lines) == former
    assert "not given" in unspecified.name
    assert "does not give the kind of structure" in gl.structure_note("unspecified")
    assert "levee" in gl.structure_note("levee") and "not drawn" in gl.structure_note("levee")
    with pytest.raises(ValueError, match="structure"):
        gl.default_guidelines("bridge")


@pytest.mark.parametrize(
    "folder, kind", [("tarnhollow_dam", "dam"), ("amberlow_levee", "levee"), ("amberlow_alternatives", "levee")]
)
def test_bundled_scenarios_name_their_structure(folder, kind):
    sc = load_scenario(ROOT / "scenarios" / folder / "scenario.toml")
    assert sc.structure == kind
    gs, origin = gl.scenario_guideline_set(sc)
    assert origin == "defaults" and list(gs.lines) == list(gl.default_guidelines(kind).lines)


def test_a_levee_draws_dam_lines_only_when_its_guidelines_ask(scenario_factory):
    path = scenario_factory(folder="lv", toml_extra='[guidelines]\ninclude = ["usace_levee", "usbr_2011"]\n')
    path.write_text('structure = "levee"\n' + path.read_text())  # a top-level key, before any table
    sc = load_scenario(path)
    gs, origin = gl.scenario_guideline_set(sc)
    assert origin == "scenario"
    assert any("Reclamation" in ln.source for ln in gs.lines) and any("levee" in ln.name for ln in gs.lines)


# --------------------------------------------------------------------------
# A run: reference_checks against an independent computation, and the line `riskcalc run` prints
# --------------------------------------------------------------------------
@pytest.fixture(scope="module")
def small_run(tmp_path_factory):
    from conftest import write_scenario

    path = write_scenario(tmp_path_factory.mktemp("ref") / "sc", toml_extra="[grid]\npoints = 400\n")
    sc = load_scenario(path)
    return sc, assess(sc)


def test_reference_checks_of_a_run_against_an_independent_computation(small_run):
    sc, r = small_run
    ref = rc.reference_checks(r)
    assert ref["structure"] == "unspecified" and ref["lines_from"] == "defaults"
    assert "does not give the kind of structure" in ref["note"]
    prop = r.propagation
    afp_d, all_d, w = prop.column("afp"), np.maximum(prop.column("all_incremental"), 0), prop.weights
    by = {c["line"]: c for c in ref["lines"]}
    # USBR AFP line 1e-4 [from memory]: the share of draws above is a weighted count
    c = by["USBR annual failure probability"]
    assert c["draws"]["share_above"] == pytest.approx(float(w[afp_d > 1e-4].sum()), abs=1e-12)
    assert c["predictive"]["position"] == ("above" if r.values_predictive["afp"] > 1e-4 else "below")
    # USBR life-loss line 1e-2 lives/yr [from memory]: above where ALL_inc > 0.01
    c = by["USBR annualized life loss 0.01"]
    assert c["draws"]["share_above"] == pytest.approx(float(w[all_d > 1e-2].sum()), abs=1e-12)
    assert c["mode"]["position"] == ("above" if r.values_mode["all_incremental"] > 1e-2 else "below")
    # USACE F-N limit [from memory]: brute force on the per-realization curves (ensemble weights)
    c = by["USACE societal incremental risk limit"]
    levels = np.asarray(r.fn["levels"], float)
    line = [ln for ln in gl.DEFAULT_GUIDELINES["usace_2014"].lines if isinstance(ln, gl.FNLimitLine)][0]
    fpr = getattr(prop, "fn_per_draw", None)
    weights = prop.weights if fpr is not None else sc.ensemble.weights
    fpr = fpr if fpr is not None else prop.fn_per_realization
    above = np.array([bool(_brute_fn_above(line, levels, row, per_decade=600)) for row in fpr])
    assert c["draws"]["share_above"] == pytest.approx(float(weights[above].sum()), abs=1e-12)
    assert c["predictive"]["position"] == ("above" if _brute_fn_above(line, levels, r.fn["predictive"]) else "below")
    # individual-risk lines: not assessed
    assert all(c["predictive"]["position"] == "not assessed" for c in ref["lines"] if c["kind"] == "individual_risk")
    assert ref["counts"]["lines_not_assessed"] == 3


def test_tolerable_risk_csv_carries_the_confidence(small_run):
    from riskcalc.outputs.memo import tolerable_risk_table

    _, r = small_run
    t = tolerable_risk_table(r)
    w, afp_d = r.propagation.weights, r.propagation.column("afp")
    row = t[(t.reference_line == "USBR annual failure probability") & (t.curve == "predictive")].iloc[0]
    assert row.share_of_draws_above == pytest.approx(float(w[afp_d > 1e-4].sum()), abs=1e-12)
    assert row.share_of_draws_above + row.share_of_draws_below + row.share_of_draws_not_applicable == pytest.approx(
        1.0, abs=1e-12
    )
    mode = t[(t.reference_line == "USBR annual failure probability") & (t.curve == "mode")].iloc[0]
    assert np.isnan(mode.share_of_draws_above)  # the confidence is one per line, on the predictive row
    ir = t[t.kind == "individual risk line"]
    assert len(ir) == 3 and set(ir.position) == {"not assessed"}


def test_riskcalc_run_prints_the_reference_line_count(tmp_path, capsys):
    from conftest import write_scenario

    path = write_scenario(tmp_path / "sc", toml_extra="[grid]\npoints = 400\n")
    text = path.read_text()
    path.write_text('structure = "dam"\n' + text)
    with pytest.raises(SystemExit) as info:
        main(["run", str(path), "--out", str(tmp_path / "out"), "--quiet"])
    assert info.value.code == 0
    capsys.readouterr()
    with pytest.raises(SystemExit) as info:
        main(["run", str(path), "--out", str(tmp_path / "out2")])
    out = capsys.readouterr().out
    (line,) = [ln for ln in out.splitlines() if ln.startswith("Reference lines")]
    # independent count on the run's own figures: dam defaults = USACE F-N, USBR AFP, two USBR ALL lines,
    # two ANCOLD F-N lines [from memory]
    r = assess(load_scenario(path))
    vp, vm = r.values_predictive, r.values_mode
    levels = np.asarray(r.fn["levels"], float)
    fn_lines = [
        ln
        for k in ("usace_2014", "ancold_2003")
        for ln in gl.DEFAULT_GUIDELINES[k].lines
        if isinstance(ln, gl.FNLimitLine)
    ]

    def count(v, fn):
        k = int(v["afp"] > 1e-4) + int(v["all_incremental"] > 1e-3) + int(v["all_incremental"] > 1e-2)
        return k + sum(bool(_brute_fn_above(ln, levels, fn)) for ln in fn_lines)

    m = re.search(r"predictive figures lie above (\d+) of 6, the mode-curve figures above (\d+) of 6", line)
    assert m, line
    assert (int(m.group(1)), int(m.group(2))) == (count(vp, r.fn["predictive"]), count(vm, r.fn["mode"]))
    assert "defaults for a dam" in line and "individual risk is not assessed" in line
