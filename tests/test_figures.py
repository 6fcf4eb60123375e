"""Figures of a risk run: files written, readable, deterministic, and drawing the right lines."""

from __future__ import annotations

from pathlib import Path

import matplotlib.pyplot as plt
import numpy as np
import pytest

from riskcalc.outputs import figures as plots
from riskcalc.risk.assess import assess
from riskcalc.decision.guidelines import DEFAULT_GUIDELINES, STRUCTURE_DEFAULTS
from riskcalc.config.scenario import load_scenario

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def bundled(tmp_path_factory):
    """The bundled dam scenario (two failure modes, life loss), assessed once, its figures written once."""
    sc = load_scenario(ROOT / "scenarios" / "tarnhollow_dam" / "scenario.toml")
    result = assess(sc)
    folder = tmp_path_factory.mktemp("figs")
    paths = plots.run_figures(result, folder)
    return result, folder, paths


def test_every_figure_is_written_as_png_and_svg(bundled):
    _, folder, paths = bundled
    expected = [s for s in plots.FIGURE_STEMS if s != "sensitivity_indices"]  # no sensitivity results yet
    # the bundled dam has [[loadings]], so its loading breakdown is drawn
    assert sorted(p.name for p in paths) == sorted(f"{s}.{e}" for s in expected for e in ("png", "svg"))
    for stem in expected:
        img = plt.imread(folder / f"{stem}.png")[..., :3]
        assert img.shape[0] > 300 and img.shape[1] > 600
        assert img.std() > 0.05  # not blank
        svg = (folder / f"{stem}.svg").read_text()
        assert "<svg" in svg and "<dc:date>" not in svg  # no date in the metadata


def test_figures_are_deterministic(bundled, tmp_path):
    result, folder, _ = bundled
    # the two figures with seeded subsampling (members, f-N draws) drawn again give the same bytes
    plots.plot_hazard(
        result.curves,
        result.scenario.ensemble,
        tmp_path / "hazard_ensemble",
        title=f"{result.scenario.title}: hazard ensemble ({result.scenario.ensemble.size} realizations)",
    )
    plots.plot_fn(result, None, tmp_path / "fn_chart")  # as run_figures draws it
    for name in ("hazard_ensemble.png", "hazard_ensemble.svg", "fn_chart.png", "fn_chart.svg"):
        assert (tmp_path / name).read_bytes() == (folder / name).read_bytes(), name


def test_aep_distribution_marks_the_weighted_mean_and_the_mode(bundled):
    result, _, _ = bundled
    ens = result.scenario.ensemble
    x = result.crest["mode"][ens.quantity]
    # predictive AEP = weighted mean of the member AEPs at fixed discharge (Stedinger 1983)
    p = ens.aep(np.array([x]))[:, 0]
    fig = plots.plot_aep_distribution(result)
    ax = fig.axes[0]
    xs = sorted(float(ln.get_xdata()[0]) for ln in ax.get_lines() if len(ln.get_xdata()) == 2)
    plt.close(fig)
    assert any(v == pytest.approx(float(ens.weights @ p), rel=1e-12) for v in xs)
    # the mode curve's design-AEP discharge has the design AEP on the mode curve (by construction)
    assert any(v == pytest.approx(result.crest["design_aep"]) for v in xs)


def test_fn_chart_draws_only_chart_lines(bundled):
    result, _, _ = bundled
    gs = plots.scenario_guidelines(result.scenario)  # no [guidelines] section: the default sets for a dam
    dam = {ln.name for k in STRUCTURE_DEFAULTS["dam"] for ln in DEFAULT_GUIDELINES[k].lines}
    assert {ln.name for ln in gs.lines} == dam
    fig = plots.plot_fn(result, gs)
    labels = " ".join(
        t.get_text().replace("\n", " ") for ax in fig.axes if ax.get_legend() for t in ax.get_legend().get_texts()
    )
    plt.close(fig)
    for ln in gs.lines:
        assert (ln.name in labels) == (ln in gs.chart_lines), ln.name


def test_identical_lines_are_drawn_once():
    # shared references section 7 [from memory]: the USACE societal limit and the ANCOLD limit for existing
    # dams are the same line, (N = 1, F = 1e-3) to (N = 1000, F = 1e-6)
    from riskcalc.decision.guidelines import GuidelineSet

    lines = DEFAULT_GUIDELINES["usace_2014"].lines + DEFAULT_GUIDELINES["ancold_2003"].lines
    merged = plots.merged_chart_lines(GuidelineSet("all", "test", lines))
    fn = [(ln, lab) for ln, lab in merged if ln.kind == "fn_limit"]
    assert len(fn) == 2
    assert any("USACE" in lab and "existing dams" in lab for _, lab in fn)


def test_scenario_guidelines_section_is_used(scenario_factory):
    path = scenario_factory(
        toml_extra="""
    [guidelines]
    name = "agency policy"
    source = "Agency policy 2020, s. 4"
    [[guidelines.fn_lines]]
    name = "agency F-N limit"
    source = "Agency policy 2020, s. 4"
    anchor_n = 1
    anchor_f = 1e-4
    """
    )
    gs = plots.scenario_guidelines(load_scenario(path))
    assert [ln.name for ln in gs.lines] == ["agency F-N limit"]


def test_sensitivity_figure_and_dollar_signs_in_labels(tmp_path):
    sens = {
        "expected_annual_damage": {
            "damage $ multiplier": {"S1": 0.5, "S1_conf": 0.05, "ST": 0.6, "ST_conf": 0.06},
            "hazard realization": {"S1": 0.3, "S1_conf": None, "ST": 0.4, "ST_conf": 0.02},
        }
    }
    paths = plots.plot_sensitivity(sens, tmp_path / "s")
    assert [p.suffix for p in paths] == [".png", ".svg"]
    assert "damage $ multiplier" in (tmp_path / "s.svg").read_text()
    assert plots.plot_sensitivity(None) is None


def test_tick_labels_are_powers_of_ten():
    assert plots._pow10(1e-4) == "10⁻⁴" and plots._pow10(100.0) == "10²" and plots._pow10(1.0) == "1"
    assert plots._pow10(3e-4) == ""  # minor positions stay unlabelled


def test_members_are_one_rasterized_collection_with_the_count_in_the_legend(bundled):
    from matplotlib.collections import LineCollection
    from matplotlib.lines import Line2D

    result, folder, _ = bundled
    ens = result.scenario.ensemble
    fig = plots.plot_hazard(result.curves, ens, max_members=150)
    ax = fig.axes[0]
    collections = [c for c in ax.collections if isinstance(c, LineCollection)]
    assert len(collections) == 1  # every member in one artist
    lc = collections[0]
    assert len(lc.get_segments()) == min(150, ens.size) and lc.get_rasterized()
    assert f"150 of {ens.size:,}" in lc.get_label()
    # no per-member Line2D: only the predictive, median and mode curves
    assert len([a for a in ax.get_children() if isinstance(a, Line2D) and a.get_label()[:1] != "_"]) == 3
    assert any(t.get_text().startswith("ensemble members (150 of") for t in ax.get_legend().get_texts())
    plt.close(fig)
    # the dense layers are one embedded image inside the SVG, the rest vector
    svg = (folder / "hazard_ensemble.svg").read_text()
    assert svg.count("<image") == 1 and svg.count("<path") > 20


def test_histograms_are_one_artist_each(bundled):
    from matplotlib.patches import Rectangle, StepPatch

    result, _, _ = bundled
    fig = plots.plot_risk_distributions(result)
    for ax in fig.axes:
        assert len([p for p in ax.patches if isinstance(p, StepPatch)]) == 1
        # the 5-95 % span is the only rectangle (no rectangle a bin)
        assert len([p for p in ax.patches if type(p) is Rectangle]) <= 1
    plt.close(fig)


def test_fn_cloud_is_rasterized_and_counted(bundled):
    result, _, _ = bundled
    fig = plots.plot_fn(result, plots.scenario_guidelines(result.scenario))
    clouds = [c for c in fig.axes[1].collections if c.get_label().startswith("draws (")]
    assert len(clouds) == 1 and clouds[0].get_rasterized()
    assert " of " in clouds[0].get_label()
    plt.close(fig)


def test_png_files_are_palette_images_small_enough_for_the_memo(bundled):
    from PIL import Image

    _, folder, paths = bundled
    pngs = [p for p in paths if p.suffix == ".png"]
    for p in pngs:
        with Image.open(p) as img:
            assert img.mode == "P"  # adaptive palette of at most 256 colours
    # the memo embeds every PNG in base64 (4/3 of the bytes); seven figures must leave room under 1 MB
    assert sum(p.stat().st_size for p in pngs) * 4 / 3 < 0.6e6


def test_run_figures_reports_progress_once_a_figure(bundled, tmp_path):
    result, _, _ = bundled
    calls = []
    paths = plots.run_figures(result, tmp_path, progress=lambda done, total: calls.append((done, total)))
    n = len(paths) // 2  # a PNG and an SVG a figure
    assert calls == [(i, n) for i in range(1, n + 1)]


def test_progress_group_gives_callbacks_only_when_shown(monkeypatch):
    import sys

    from riskcalc.progress import progress_group

    with progress_group(enabled=False) as bar:
        assert bar("figures") is None  # a run then passes no callback at all
    monkeypatch.setattr(sys.stderr, "isatty", lambda: True, raising=False)
    with progress_group(enabled=True) as bar:
        update = bar("figures")
        assert callable(update)
        update(1, 3)
        update(3, 3)
