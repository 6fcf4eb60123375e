"""One caution text, identical in summary.json, memo.md, memo.html, comparison.md, comparison.json and the run's
printout; one renderer for the alternatives section (comparison.md and the memo)."""

from __future__ import annotations

import contextlib
import html
import io
import json
import re
import textwrap
from html.parser import HTMLParser

import pytest

from riskcalc.cli import main
from riskcalc.outputs.labels import CAUTION

from conftest import write_scenario

# the conftest consequence table with every damage doubled: an alternative that changes the consequences
CONSEQ_X2 = (
    "stage_m,damage_breach_usd,damage_no_breach_usd,life_loss_breach\n"
    "2.0,0,0,0\n4.0,2.0e6,0,1\n6.0,1.0e7,2.0e6,10\n9.0,4.0e7,1.0e7,50\n"
)

EXTRA = textwrap.dedent("""
[grid]
points = 400
[economics]
rate = 0.05
period_years = 30
[[alternatives]]
name = "doubled <damage>"
first_cost = 1.0e6
annual_om = 1.0e4
construction_months = 12
  [alternatives.consequences]
  table = "consequences_x2.csv"
""")


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    """A small scenario with one alternative, run once through the command line: (stdout, output directory)."""
    base = tmp_path_factory.mktemp("caution")
    sc = write_scenario(base / "sc", toml_extra=EXTRA)
    (sc.parent / "consequences_x2.csv").write_text(CONSEQ_X2)
    out = base / "out"
    buf = io.StringIO()  # capsys is function-scoped; this fixture runs once for the module
    with contextlib.redirect_stdout(buf), pytest.raises(SystemExit) as info:
        main(["run", str(sc), "--out", str(out)])
    assert info.value.code == 0
    return buf.getvalue(), out


class _Text(HTMLParser):
    """The text of every element with class ``caution``, markup removed and entities resolved."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.cautions, self._depth = [], 0

    def handle_starttag(self, tag, attrs):
        if self._depth:
            self._depth += 1
        elif "caution" in (dict(attrs).get("class") or "").split():
            self._depth = 1
            self.cautions.append("")

    def handle_endtag(self, tag):
        if self._depth:
            self._depth -= 1

    def handle_data(self, data):
        if self._depth:
            self.cautions[-1] += data


def test_one_caution_everywhere(run):
    stdout, out = run
    assert json.loads((out / "summary.json").read_text())["caution"] == CAUTION
    assert json.loads((out / "comparison.json").read_text())["caution"] == CAUTION
    assert f"Caution: {CAUTION}" in stdout.splitlines()
    md = (out / "memo.md").read_text()
    assert f"> **Caution.** {CAUTION}" in md.splitlines()  # the headline section opens with it
    assert CAUTION in (out / "comparison.md").read_text()
    parser = _Text()
    parser.feed((out / "memo.html").read_text())
    # headline, alternatives and cautions sections: each caution paragraph carries the one text
    assert len(parser.cautions) >= 3 and all(CAUTION in c for c in parser.cautions)
    assert f"Caution. {CAUTION}" in parser.cautions


def _section(md: str, title: str) -> str:
    m = re.search(rf"^## \d+\. {re.escape(title)}\n\n(.*?)(?=^## |\Z)", md, re.S | re.M)
    assert m, title
    return m.group(1).strip()


def test_alternatives_section_is_rendered_once_by_the_memo_code(run):
    _, out = run
    md = (out / "memo.md").read_text()
    body = _section(md, "Alternatives and economics")
    comp = (out / "comparison.md").read_text()
    assert comp.startswith("# Alternatives and economics\n\n")
    # the same blocks, the same renderer: only the figure number differs (1 alone, the memo's running number)
    normalize = lambda s: re.sub(r"Figure \d+\.", "Figure N.", s)  # noqa: E731
    assert normalize(body) == normalize(comp.split("\n\n", 1)[1].strip())
    assert body.count("figures/benefit_distributions.png") == 1  # the figure once, not twice
    assert r"doubled \<damage\>" in body and "| alternative |" in body
    page = (out / "memo.html").read_text()
    assert "doubled &lt;damage&gt;" in page and "<damage>" not in page
    assert '<section id="extra-1-alternatives"' in page
    # the memo's HTML holds the same table as its Markdown, cell for cell
    rows = [ln for ln in body.splitlines() if ln.startswith("| doubled")]
    assert len(rows) == 1
    cells = [c.strip().replace("\\", "") for c in rows[0].strip("|").split("|")]
    tr = re.search(r"<tr><td>doubled &lt;damage&gt;</td>.*?</tr>", page)
    assert tr, "alternatives row missing from memo.html"
    assert [html.unescape(c) for c in re.findall(r"<td[^>]*>(.*?)</td>", tr.group(0))] == cells
