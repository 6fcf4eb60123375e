"""Tolerable-risk reference lines: defaults, configuration and checks."""

import dataclasses

import numpy as np
import pytest

from riskcalc.decision import guidelines as gl
from riskcalc.errors import InputError

D = gl.DEFAULT_GUIDELINES


def line(set_key, name_part):
    (found,) = [ln for ln in D[set_key].lines if name_part in ln.name]
    return found


# --------------------------------------------------------------------------
# Defaults
# --------------------------------------------------------------------------
# Anchor points of the default F-N limit lines [from memory; not verified against the primary documents]:
# USACE ER 1110-2-1156 (2014) ch. 5: (N=1, F=1e-3) to (N=1000, F=1e-6);
# ANCOLD (2003): existing dams (1, 1e-3) to (1000, 1e-6), new dams (1, 1e-4) to (1000, 1e-7).
FN_ANCHORS = [
    ("usace_2014", "societal", (1.0, 1e-3), (1000.0, 1e-6)),
    ("ancold_2003", "existing", (1.0, 1e-3), (1000.0, 1e-6)),
    ("ancold_2003", "new dams", (1.0, 1e-4), (1000.0, 1e-7)),
]


@pytest.mark.parametrize("set_key, part, start, end", FN_ANCHORS)
def test_default_fn_lines_pass_through_their_end_points(set_key, part, start, end):
    ln = [x for x in D[set_key].lines if isinstance(x, gl.FNLimitLine) and part in x.name][0]
    assert gl.evaluate_line(ln, start[0]) == pytest.approx(start[1], rel=1e-12)
    assert gl.evaluate_line(ln, end[0]) == pytest.approx(end[1], rel=1e-12)
    # nothing beyond the stated range
    assert np.isnan(gl.evaluate_line(ln, 0.5)) and np.isnan(gl.evaluate_line(ln, 1001.0))


def test_default_probability_and_life_loss_values():
    # USBR Public Protection Guidelines (2011): AFP 1e-4; ALL 1e-3 and 1e-2 lives/yr. USACE (2014) individual
    # incremental risk 1e-4; ANCOLD (2003) individual risk 1e-4 existing, 1e-5 new. [from memory]
    assert line("usbr_2011", "annual failure probability").value == 1e-4
    assert sorted(x.value for x in D["usbr_2011"].lines if isinstance(x, gl.LifeLossLine)) == [1e-3, 1e-2]
    assert line("usace_2014", "individual").value == 1e-4
    assert line("ancold_2003", "individual risk, existing").value == 1e-4
    assert line("ancold_2003", "individual risk, new").value == 1e-5
    for key in D:
        for x in D[key].lines:
            if isinstance(x, gl.ProbabilityLine) and "individual" in x.name.lower():
                assert x.measure == "individual_risk" and not x.on_chart


def test_default_citations_are_marked_unverified_and_docstring_defers_to_policy():
    for gs in D.values():
        assert "[from memory; check the primary document]" in gs.source
        for x in gs.lines:
            assert "[from memory; check the primary document]" in x.source
    doc = " ".join(gl.__doc__.split())
    assert "governing agency's current policy" in doc


def test_default_lines_have_slope_minus_one():
    # slope -1 on log-log axes: F * N is constant along every default F-N and life-loss line
    n = np.logspace(0, 3, 31)
    for gs in D.values():
        for x in gs.chart_lines:
            f = gl.evaluate_line(x, n)
            if isinstance(x, gl.ProbabilityLine):
                np.testing.assert_array_equal(f, x.value)
                continue
            fn = f * n
            np.testing.assert_allclose(fn, fn[0], rtol=1e-12)
            if isinstance(x, gl.LifeLossLine):
                np.testing.assert_allclose(fn, x.value, rtol=1e-12)  # f N = ALL


def test_chart_lines_leave_out_individual_risk():
    usace = D["usace_2014"]
    assert len(usace.chart_lines) == len(usace.lines) - 1
    with pytest.raises(ValueError, match="individual risk"):
        gl.evaluate_line(line("usace_2014", "individual"), 10.0)
    assert gl.check_value(line("usace_2014", "individual"), 3e-4) == pytest.approx(3.0)


def test_defaults_are_immutable():
    with pytest.raises(TypeError):
        D["mine"] = D["usace_2014"]
    with pytest.raises(dataclasses.FrozenInstanceError):
        line("usace_2014", "societal").anchor_f = 1.0


def test_evaluate_line_is_vectorized_with_nan_outside():
    ln = gl.FNLimitLine("test", "test source", anchor_n=10.0, anchor_f=1e-4, slope=-2.0, n_min=1, n_max=100)
    n = np.array([[0.0, -1.0, 1.0], [10.0, 100.0, np.nan]])
    f = gl.evaluate_line(ln, n)
    assert f.shape == (2, 3)
    # F = anchor_f (N / anchor_n)^slope
    np.testing.assert_allclose(f[[0, 1, 1], [2, 0, 1]], [1e-4 * 100, 1e-4, 1e-4 / 100], rtol=1e-12)
    assert np.isnan(f[0, 0]) and np.isnan(f[0, 1]) and np.isnan(f[1, 2])


# --------------------------------------------------------------------------
# Configuration
# --------------------------------------------------------------------------
def test_from_config_builds_custom_lines():
    cfg = {
        "name": "Agency X",
        "source": "Agency X dam safety policy (2021), s. 3",
        "include": ["usbr_2011"],
        "fn_lines": [
            {
                "name": "limit",
                "source": "Agency X (2021), fig. 2",
                "anchor_n": 10,
                "anchor_f": 1e-4,
                "slope": -1.5,
                "n_min": 1,
                "n_max": 1e4,
            }
        ],
        "life_loss_lines": [{"name": "ALL 0.005", "source": "Agency X (2021)", "value": 5e-3}],
        "probability_lines": [{"name": "IR", "source": "Agency X (2021)", "value": 1e-5, "measure": "individual_risk"}],
    }
    gs = gl.from_config(cfg)
    assert gs.name == "Agency X" and len(gs.lines) == len(D["usbr_2011"].lines) + 3
    fn = [x for x in gs.lines if x.name == "limit"][0]
    assert fn.n_max == 1e4 and isinstance(fn.anchor_n, float)
    assert gl.evaluate_line(fn, 1000.0) == pytest.approx(1e-4 * 100.0**-1.5, rel=1e-12)
    assert gl.from_config(None).lines == ()
    assert gl.from_config({}).lines == ()


GOOD_FN = {"name": "l", "source": "s", "anchor_n": 1, "anchor_f": 1e-3}


@pytest.mark.parametrize(
    "cfg, key, words",
    [
        ({"fn_lines": [dict(GOOD_FN, anchor_f=-1e-3)]}, "guidelines.fn_lines[0].anchor_f", "positive"),
        ({"fn_lines": [dict(GOOD_FN, anchor_f=2.0)]}, "guidelines.fn_lines[0].anchor_f", "annual probability"),
        ({"fn_lines": [GOOD_FN, dict(GOOD_FN, anchor_n="ten")]}, "guidelines.fn_lines[1].anchor_n", "number"),
        ({"fn_lines": [dict(GOOD_FN, slope=1.0)]}, "guidelines.fn_lines[0].slope", "<= 0"),
        ({"fn_lines": [dict(GOOD_FN, n_min=100, n_max=10)]}, "guidelines.fn_lines[0].n_max", "n_min"),
        (
            {"fn_lines": [{k: v for k, v in GOOD_FN.items() if k != "source"}]},
            "guidelines.fn_lines[0].source",
            "missing",
        ),
        ({"fn_lines": [dict(GOOD_FN, anchorf=1e-3)]}, "guidelines.fn_lines[0].anchorf", "unknown key"),
        ({"fn_lines": GOOD_FN}, "guidelines.fn_lines", "list of tables"),
        (
            {"life_loss_lines": [{"name": "a", "source": "s", "value": 0}]},
            "guidelines.life_loss_lines[0].value",
            "positive",
        ),
        (
            {"probability_lines": [{"name": "a", "source": "s", "value": 1e-4, "measure": "afp"}]},
            "guidelines.probability_lines[0].measure",
            "individual_risk",
        ),
        ({"include": ["usace"]}, "guidelines.include[0]", "usace_2014"),
        ({"lines": []}, "guidelines.lines", "unknown key"),
        ({"fn_lines": [dict(GOOD_FN, name=" ")]}, "guidelines.fn_lines[0].name", "text"),
    ],
)
def test_from_config_errors_name_the_key(cfg, key, words):
    with pytest.raises(ValueError) as err:
        gl.from_config(cfg)
    assert isinstance(err.value, InputError)
    assert f"key '{key}'" in str(err.value)
    assert words in str(err.value)


def test_direct_construction_validates():
    with pytest.raises(ValueError, match="anchor_n"):
        gl.FNLimitLine("l", "s", anchor_n=0.0, anchor_f=1e-3)
    with pytest.raises(ValueError, match="value"):
        gl.ProbabilityLine("p", "s", value=np.nan)
    with pytest.raises(ValueError, match="lines"):
        gl.GuidelineSet("g", "s", lines=("not a line",))


# --------------------------------------------------------------------------
# Checks
# --------------------------------------------------------------------------
def test_check_point_above_and_below_fn_line():
    usace = line("usace_2014", "societal")
    # f-N points: N = ALL / AFP. (AFP 1e-4, ALL 1e-2) -> N = 100, line 1e-5, ratio 10 (above);
    # (AFP 1e-6, ALL 1e-5) -> N = 10, line 1e-4, ratio 0.01 (below); N = 0.5 is left of the line's range.
    res = gl.check_point(usace, [1e-4, 1e-6, 1e-4], [1e-2, 1e-5, 5e-5])
    np.testing.assert_allclose(res.n[:2], [100.0, 10.0])
    np.testing.assert_allclose(res.ratio[:2], [10.0, 0.01], rtol=1e-12)
    np.testing.assert_allclose(res.limit[:2], [1e-5, 1e-4], rtol=1e-12)
    assert res.exceeds.tolist() == [True, False, False]
    assert np.isnan(res.ratio[2])


def test_check_point_life_loss_and_probability_lines():
    all_line = line("usbr_2011", "0.001")
    afp_line = line("usbr_2011", "annual failure probability")
    afp = np.array([1e-3, 1e-5, 0.0])
    all_ = np.array([1e-2, 1e-4, 0.0])
    res = gl.check_point(all_line, afp, all_)
    # on f-N axes the line f = c / N; the ratio f / (c / N) equals ALL / c
    np.testing.assert_allclose(res.ratio, [10.0, 0.1, 0.0], rtol=1e-12)
    np.testing.assert_allclose(res.ratio[:2], afp[:2] / res.limit[:2], rtol=1e-12)
    assert res.exceeds.tolist() == [True, False, False]
    assert np.isnan(res.n[2])
    res = gl.check_point(afp_line, afp, all_)
    np.testing.assert_allclose(res.ratio, [10.0, 0.1, 0.0], rtol=1e-12)
    with pytest.raises(ValueError, match="individual risk"):
        gl.check_point(line("usace_2014", "individual"), 1e-4, 1e-3)
    with pytest.raises(ValueError):
        gl.check_point(afp_line, -1e-4, 1e-3)


def test_check_fn_curve_step_catches_exceedance_between_points():
    # line F = 1e-3 / N on 1..1000. Curve F(N) = 5e-4 on [1, 10), 1e-5 at N >= 10. At the given points the
    # ratios are 0.5 and 0.1, but just below N = 10 the curve is still 5e-4 where the line is 1e-4: ratio 5.
    usace = line("usace_2014", "societal")
    n = [1.0, 10.0]
    f = [5e-4, 1e-5]
    pts = gl.check_fn_curve(usace, n, f, step=False)
    np.testing.assert_allclose(pts.ratio, [0.5, 0.1], rtol=1e-12)
    assert not pts.exceeds
    st = gl.check_fn_curve(usace, n, f, step=True)
    assert st.max_ratio == pytest.approx(5.0, rel=1e-12)
    assert st.n_at_max == 10.0 and st.exceeds


def test_check_fn_curve_per_realization_and_range_clipping():
    usace = line("usace_2014", "societal")
    n = np.array([500.0, 5000.0])
    f = np.array([[1e-5, 1e-9], [1e-7, 1e-9]])
    res = gl.check_fn_curve(usace, n, f)
    # the first step [500, 5000) is checked at the end of the line's range, N = 1000, line 1e-6;
    # the point N = 5000 is beyond the range
    np.testing.assert_allclose(res.max_ratio, [10.0, 0.1], rtol=1e-12)
    np.testing.assert_array_equal(res.n_at_max, [1000.0, 1000.0])
    assert res.exceeds.tolist() == [True, False]
    assert np.all(np.isnan(res.ratio[:, 1]))
    # a curve wholly outside the range: no ratio, no exceedance
    out = gl.check_fn_curve(usace, [2000.0, 3000.0], [1.0, 1.0])
    assert np.isnan(out.max_ratio) and not out.exceeds
    with pytest.raises(ValueError):
        gl.check_fn_curve(usace, [10.0, 1.0], [1e-3, 1e-4])
    with pytest.raises(ValueError):
        gl.check_fn_curve(usace, [1.0, 10.0], [1e-3, 1e-4, 1e-5])
