"""The decision memo: content from the run's files, escaping, rebuild, and rendering in headless Chromium."""

from __future__ import annotations

import dataclasses
import json
import re
import shutil
import subprocess
import textwrap
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

import riskcalc.workflows as workflows
from riskcalc.cli import app, main
from riskcalc.outputs import figures as plots
from riskcalc.io import write_json
from riskcalc.outputs.labels import HEADLINE_KEYS, output_label
from riskcalc.outputs.memo import Block, Section, rebuild_memo, write_memo
from riskcalc.workflows import run_scenario

from conftest import write_scenario

NASTY = '<script>alert(1)</script> & "x" $5'
CHROMIUM = workflows.find_chromium()
needs_chromium = pytest.mark.skipif(CHROMIUM is None, reason="Chromium is not installed (.ci/run installs it)")


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    """A small scenario, titled with HTML markup, run once: (result, output directory)."""
    base = tmp_path_factory.mktemp("memo")
    sc = write_scenario(base / "sc", toml_extra="[grid]\npoints = 400\n")
    text = sc.read_text().replace('title = "test scenario"', f"title = {json.dumps(NASTY)}")
    sc.write_text(text)
    out = base / "out"
    result = run_scenario(sc, out)
    return result, out


def _chromium(*args, timeout=120):
    profile = Path(__import__("tempfile").mkdtemp(prefix="rc-test-chromium-"))
    try:
        return subprocess.run(
            [CHROMIUM, *workflows.CHROMIUM_FLAGS, f"--user-data-dir={profile}", *args],
            capture_output=True,
            text=True,
            timeout=timeout,
        )
    finally:
        shutil.rmtree(profile, ignore_errors=True)


class _Tables(HTMLParser):
    """Rows of the <table class="..."> elements of a page: {class: [[cell, ...], ...]}."""

    def __init__(self):
        super().__init__()
        self.tables, self._cls, self._row, self._cell = {}, None, None, None

    def handle_starttag(self, tag, attrs):
        if tag == "table":
            self._cls = dict(attrs).get("class", "")
            self.tables.setdefault(self._cls, [])
        elif tag == "tr" and self._cls is not None:
            self._row = []
        elif tag in ("td", "th") and self._row is not None:
            self._cell = ""

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self._row.append(self._cell)
            self._cell = None
        elif tag == "tr" and self._row is not None:
            self.tables[self._cls].append(self._row)
            self._row = None
        elif tag == "table":
            self._cls = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell += data


def _number(cell: str) -> float:
    return float(cell.replace(",", ""))


def _check_headline(rows, summary):
    """Rows: [label, predictive, mode, median, p05, p50, p95, ratio] in HEADLINE_KEYS order."""
    assert len(rows) == len(HEADLINE_KEYS)
    for row, key in zip(rows, HEADLINE_KEYS):
        h, kind = summary[key], output_label(key).kind
        want = [
            h["predictive"],
            h["mode"],
            h["median_curve"],
            h["ensemble"]["p05"],
            h["ensemble"]["p50"],
            h["ensemble"]["p95"],
        ]
        for cell, v in zip(row[1:7], want):
            got = _number(cell)
            if kind == "money" and abs(v) >= 100:
                # whole currency units: rounding error at most 0.5
                assert got == pytest.approx(v, abs=0.5)
            else:
                # three significant figures: relative rounding error at most 5e-3
                assert got == pytest.approx(v, rel=5e-3, abs=1e-300)
        # the ratio is printed with two decimals: error at most 0.005
        assert _number(row[7]) == pytest.approx(h["ratio_predictive_to_mode"], abs=0.005)


def test_markdown_and_html_hold_the_headline_numbers_of_summary_json(run):
    _, out = run
    summary = json.loads((out / "summary.json").read_text())
    md = (out / "memo.md").read_text()
    labels = [output_label(k).text(summary["units"]["currency"], unit=False) for k in HEADLINE_KEYS]
    md_rows = [
        [c.strip().replace("\\", "") for c in line.strip().strip("|").split("|")]
        for line in md.splitlines()
        if any(line.startswith(f"| {lab}") for lab in labels)
    ]
    _check_headline(md_rows, summary)
    parser = _Tables()
    parser.feed((out / "memo.html").read_text())
    _check_headline(parser.tables["headline"][1:], summary)  # row 0 is the header


def test_crest_sentence_and_linearity_line(run):
    _, out = run
    summary = json.loads((out / "summary.json").read_text())
    md = (out / "memo.md").read_text()
    c = summary["mode_understatement"]["crest_check"]
    # once in N years = 1 / AEP on the predictive curve (common practice), printed in whole years, or to three
    # significant figures above 1,000 (labels.fmt_return_period) -> error at most 0.5 years or 5e-3 relative
    m = re.search(r"about once in ([\d,.]+) years on the predictive curve, not once in ([\d,.]+):", md)
    assert m, md
    assert _number(m.group(1)) == pytest.approx(1 / c["mode"]["aep_on_predictive"], rel=5e-3, abs=0.5)
    assert _number(m.group(2)) == pytest.approx(1 / c["design_aep"], rel=5e-3, abs=0.5)
    # every year shares one unknown curve: the n-year chance is the ensemble mean of each curve's chance
    # (checked against simulated n-year sequences in test_risk_chain), below the independent-years figure
    chance = c["mode"]["chance_in_years_predictive"]
    assert chance < 1 - (1 - c["mode"]["aep_on_predictive"]) ** c["years"]
    assert f"{100 * chance:.0f} %" in md
    assert "the predictive result is the mean of the per-realization results" in md


def test_user_strings_are_escaped(run):
    _, out = run
    page = (out / "memo.html").read_text()
    md = (out / "memo.md").read_text()
    assert "<script" not in page.lower()  # the memo has no scripts, and the title's markup is escaped
    assert "&lt;script&gt;alert(1)&lt;/script&gt; &amp; &quot;x&quot; $5" in page
    assert "<script>" not in md and r'\<script\>alert(1)\</script\> \& "x" $5' in md


def test_html_is_self_contained_and_prints_by_section(run):
    _, out = run
    page = (out / "memo.html").read_text()
    assert not re.search(r"""(src|href)\s*=\s*["']?(https?:|//)""", page, re.I)
    assert "<link" not in page and "@import" not in page and "url(" not in page
    assert "Content-Security-Policy" in page and "default-src 'none'" in page
    n_img = page.count('<img src="data:image/png;base64,')
    assert n_img == len(list((out / "figures").glob("*.png")))
    assert "@media print" in page and "break-before: page" in page


def test_memo_sections_cautions_provenance_and_references(run):
    result, out = run
    md = (out / "memo.md").read_text()
    for title in (
        "Headline results",
        "Figures",
        "Tolerable-risk comparison",
        "Warnings",
        "Provenance",
        "Cautions and limitations",
        "Methods appendix",
    ):
        assert f". {title}" in md
    for p in result.scenario.files:  # SHA-256 of every input, as hashlib computes it
        import hashlib

        assert hashlib.sha256(p.read_bytes()).hexdigest() in md
    assert f"| seed | {result.scenario.seed} |" in md
    assert "never replace" in md and "governing agency's current policy" in md
    for ref in ("Stedinger", "Beard", "Bulletin 17B", "Bulletin 17C", "Ang, A.H.-S.", "Cornell", "Graham", "Temme"):
        assert ref in md
    assert "Saltelli" not in md  # cited only when sensitivity results are shown


def test_tolerable_risk_table_against_the_default_lines(run):
    result, out = run
    import pandas as pd

    t = pd.read_csv(out / "tables" / "tolerable_risk.csv")
    # USBR (2011) annual failure probability line 1e-4 per year (shared references section 7) [from memory]
    row = t[(t.reference_line == "USBR annual failure probability") & (t.curve == "predictive")].iloc[0]
    assert row.ratio == pytest.approx(result.values_predictive["afp"] / 1e-4, rel=1e-9)
    # USBR annualized life loss line 1e-2 lives/yr: the f-N point's ratio is ALL / 0.01 [from memory]
    row = t[(t.reference_line == "USBR annualized life loss 0.01") & (t.curve == "mode")].iloc[0]
    assert row.ratio == pytest.approx(result.values_mode["all_incremental"] / 1e-2, rel=1e-9)
    # F-N line (1, 1e-3) to (1000, 1e-6): F_line(N) = 1e-3 / N, checked at the worst step
    row = t[(t.reference_line == "USACE societal incremental risk limit") & (t.curve == "predictive")].iloc[0]
    assert row.limit_per_yr == pytest.approx(1e-3 / row.n_lives, rel=1e-9)
    assert row.ratio >= np.max(result.fn["predictive"] / (1e-3 / result.fn["levels"])) * (1 - 1e-9)
    md = (out / "memo.md").read_text()
    assert md.count("[from memory") >= 3 and "ER 1110-2-1156" in md and "ANCOLD (2003)" in md


def test_riskcalc_memo_rebuilds_the_same_memo(run, tmp_path):
    _, out = run
    copy = tmp_path / "copy"
    shutil.copytree(out, copy)
    md, page = (copy / "memo.md").read_bytes(), (copy / "memo.html").read_bytes()
    (copy / "memo.md").unlink()
    (copy / "memo.html").unlink()
    res = CliRunner().invoke(app, ["memo", str(copy)])
    assert res.exit_code == 0, res.output
    assert (copy / "memo.md").read_bytes() == md
    assert (copy / "memo.html").read_bytes() == page


def test_memo_on_a_folder_that_is_not_a_run_exits_2(tmp_path, capsys):
    with pytest.raises(SystemExit) as exc:
        main(["memo", str(tmp_path)])
    assert exc.value.code == 2
    err = capsys.readouterr().err
    assert "summary.json not found" in err and "Traceback" not in err


def test_pdf_without_chromium_exits_2(run, tmp_path, monkeypatch, capsys):
    _, out = run
    copy = tmp_path / "copy"
    shutil.copytree(out, copy)
    monkeypatch.setattr(workflows, "find_chromium", lambda: None)
    with pytest.raises(SystemExit) as exc:
        main(["memo", str(copy), "--pdf"])
    assert exc.value.code == 2
    assert "needs Chromium" in capsys.readouterr().err
    assert not (copy / "memo.pdf").exists()


def test_sensitivity_and_extra_sections_are_rendered(run, tmp_path):
    result, _ = run
    sens = {
        "annual_failure_probability": {
            "hazard realization": {"S1": 0.61, "S1_conf": 0.04, "ST": 0.72, "ST_conf": 0.05},
            "fragility median": {"S1": 0.2, "S1_conf": 0.03, "ST": 0.27, "ST_conf": 0.04},
        }
    }
    extra = [
        Section(
            "Alternatives <b>",
            "alternatives",
            (
                Block("p", "Raise the levee: benefit <em>1.5</em> per year."),
                Block("table", header=("alternative", "benefit"), rows=(("raise | levee", "1,500"),)),
                Block("figure", text="Benefit of each alternative.", figure="benefit_distributions"),
            ),
        )
    ]
    r2 = dataclasses.replace(result, sensitivity=sens, extras={"memo_sections": extra})
    out = tmp_path / "out"
    shutil.copytree(run[1], out)  # the run's files; then what a run with these results adds
    write_json(out / "summary.json", r2.summary())
    plots.plot_sensitivity(sens, out / "figures" / "sensitivity_indices")
    write_memo(r2, out)
    md = (out / "memo.md").read_text()
    page = (out / "memo.html").read_text()
    assert "0.61 ± 0.04" in md and "0.72 ± 0.05" in page and "Saltelli" in md
    assert (out / "figures" / "sensitivity_indices.png").exists()
    # a section from another stage goes through the same escaping and table code as the memo's own
    assert "Alternatives &lt;b&gt;" in page and "&lt;em&gt;1.5&lt;/em&gt;" in page and "<em>" not in page
    assert r"Raise the levee: benefit \<em\>1.5\</em\> per year." in md
    assert r"| raise \| levee | 1,500 |" in md and '<td class="n">1,500</td>' in page
    # its figure is left out: no benefit_distributions.png in this run's figures folder
    assert "benefit_distributions" not in md and "Benefit of each alternative" not in page
    assert md.index("Tolerable-risk comparison") < md.index("Alternatives") < md.index("Warnings")
    before = md
    rebuild_memo(out)
    assert (out / "memo.md").read_text() == before


# --------------------------------------------------------------------------
# In a real browser
# --------------------------------------------------------------------------
CHECK_SCRIPT = textwrap.dedent("""
    <script>
    window.__errors = [];
    window.addEventListener("error", function (e) {
      window.__errors.push(String(e.message || (e.target && e.target.tagName) || "error"));
    }, true);
    window.addEventListener("load", function () {
      var imgs = Array.prototype.slice.call(document.images);
      var bad = imgs.filter(function (i) { return !(i.complete && i.naturalWidth > 0); })
                    .map(function (i) { return i.alt; });
      var out = document.createElement("pre");
      out.id = "rc-check";
      out.textContent = "RCCHECK" + JSON.stringify({images: imgs.length, broken: bad, errors: window.__errors})
                        + "RCEND";
      document.body.appendChild(out);
    });
    </script>
""")


@needs_chromium
def test_memo_renders_in_headless_chromium(run, tmp_path):
    _, out = run
    page = (out / "memo.html").read_text()
    # a copy with a check script; the memo's own policy forbids scripts, so the copy drops that meta line
    probe = re.sub(r'<meta http-equiv="Content-Security-Policy"[^>]*>', "", page)
    probe = probe.replace("<head>", "<head>" + CHECK_SCRIPT, 1)
    probe_path = tmp_path / "probe.html"
    probe_path.write_text(probe)
    res = _chromium("--virtual-time-budget=5000", "--dump-dom", probe_path.as_uri())
    m = re.search(r"RCCHECK(.*?)RCEND", res.stdout)
    assert m, res.stderr[-500:]
    check = json.loads(m.group(1).replace("&quot;", '"'))
    assert check["images"] == len(list((out / "figures").glob("*.png"))) > 0
    assert check["broken"] == []
    assert check["errors"] == []

    shot = tmp_path / "shot.png"
    res = _chromium(
        "--window-size=1000,2400", "--hide-scrollbars", f"--screenshot={shot}", (out / "memo.html").as_uri()
    )
    assert shot.exists(), res.stderr[-500:]
    import matplotlib.pyplot as plt

    img = plt.imread(shot)[..., :3]
    assert img.shape[0] >= 2000
    # not blank: a white page has zero variance; text, tables and figures give a clearly positive one
    assert img.std() > 0.05
    assert (img.mean(axis=2) < 0.5).mean() > 0.01  # at least 1 % dark (ink) pixels


@needs_chromium
def test_memo_pdf_through_chromium(run, tmp_path):
    _, out = run
    copy = tmp_path / "copy"
    shutil.copytree(out, copy)
    res = CliRunner().invoke(app, ["memo", str(copy), "--pdf"])
    assert res.exit_code == 0, res.output
    pdf = (copy / "memo.pdf").read_bytes()
    assert pdf.startswith(b"%PDF")
    # one page a section at least (print stylesheet: a page break before each section after the first)
    assert len(re.findall(rb"/Type\s*/Page[^s]", pdf)) >= 7


def test_memo_names_the_mean_parameter_fallback_and_states_the_confidence(run):
    result, out = run
    md = (out / "memo.md").read_text()
    # the conftest ensemble has no log_posterior: the "mode" curve is the curve at the weighted mean parameters
    assert result.scenario.ensemble.log_posterior is None
    assert "single most likely" not in md and "weighted mean parameters" in md
    # no structure key: the dam lines, with a note that the kind was not given
    assert "does not give the kind of structure" in md
    # the last column of the tolerable-risk table is the share of draws above the line, from the CSV
    import pandas as pd

    t = pd.read_csv(out / "tables" / "tolerable_risk.csv")
    row = t[(t.reference_line == "USBR annual failure probability") & (t.curve == "predictive")].iloc[0]
    w, afp = result.propagation.weights, result.propagation.column("afp")
    # USBR AFP line 1e-4 [from memory]: the weighted share of draws with AFP > 1e-4, computed here directly
    assert row.share_of_draws_above == pytest.approx(float(w[afp > 1e-4].sum()), abs=1e-9)
    line = [ln for ln in md.splitlines() if ln.startswith("| USBR annual failure probability")][0]
    assert line.rstrip(" |").endswith(f"{row.share_of_draws_above:.2f}")
    assert "share of draws above the line" in md


def test_a_point_outside_a_line_range_is_not_applicable_in_the_memo(tmp_path):
    # a life-loss line drawn only for N >= 10000 lives: the f-N point of this scenario (N = ALL_inc / AFP, a few
    # lives) lies left of it, so the line does not apply: "not applicable", not "below"
    sc = write_scenario(
        tmp_path / "sc",
        toml_extra=textwrap.dedent("""
    [grid]
    points = 400
    [guidelines]
    [[guidelines.life_loss_lines]]
    name = "ALL 0.001 for N >= 10000"
    source = "test source"
    value = 1e-3
    n_min = 10000
    """),
    )
    out = tmp_path / "out"
    result = run_scenario(sc, out)
    n = result.values_predictive["all_incremental"] / result.values_predictive["afp"]
    assert n < 1e4
    import pandas as pd

    t = pd.read_csv(out / "tables" / "tolerable_risk.csv")
    assert set(t.position) == {"not applicable"} and t.exceeds.isna().all()
    md = (out / "memo.md").read_text()
    (line,) = [ln for ln in md.splitlines() if ln.startswith("| ALL 0.001 for N")]
    assert line.count("not applicable") == 2 and "below" not in line
    assert "not applicable" in md and "not the same as lying below the line" in md
    assert "scenario's \\[guidelines\\]" in md
