"""The decision memo: ``memo.md`` and ``memo.html`` from a finished run's files.

The memo is rendered from what a run writes (``summary.json``, ``tables/*.csv``
and ``figures/*.png``), never from live objects, so :func:`write_memo` (inside
a run) and :func:`rebuild_memo` (``riskcalc memo OUTDIR``) give the same text.
:func:`write_memo` first adds the one table the memo needs that the run does
not already write, ``tables/tolerable_risk.csv`` (each reference line against
the predictive and mode results), and ``memo_sections.json`` when other
stages contribute sections (``result.extras["memo_sections"]``: :class:`Section`
objects, stored as their blocks and rendered by the same code as the rest).

Both formats come from one list of sections, so the Markdown and the HTML
hold the same numbers. Words, units and number formats come from
:mod:`riskcalc.outputs.labels`. The HTML is one self-contained file: figures are
embedded as base64 ``data:`` URIs, the stylesheet is inline, there are no
scripts and no network requests (a Content-Security-Policy forbids them), and
every string that came from a user file is escaped.

References
----------
.. [1] Stedinger, J.R. (1983). Design events with specified flood risk. Water
   Resources Research 19(2), 511-522.
.. [2] Beard, L.R. (1960). Probability estimates based on small normal
   distribution samples. Journal of Geophysical Research 65(7), 2143-2148.
"""

from __future__ import annotations

import base64
import csv
import dataclasses
import html
import json
import math
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import InputError
from .labels import (
    CAUTION,
    HEADLINE_KEYS,
    fmt_aep,
    fmt_index,
    fmt_num,
    fmt_percent,
    fmt_quantity,
    fmt_ratio,
    fmt_return_period,
    output_label,
    unit_text,
)

__all__ = [
    "write_memo",
    "rebuild_memo",
    "tolerable_risk_table",
    "mode_words",
    "render_memo",
    "Block",
    "Section",
    "blocks_markdown",
    "blocks_html",
    "section_to_dict",
    "section_from_dict",
]

#: Captions of the run figures, by file stem (in memo order).
FIGURE_CAPTIONS = {
    "hazard_ensemble": "Hazard ensemble on probability paper: members (grey), the predictive curve (mean AEP at "
    "fixed discharge), the mode and median curves and the credible band.",
    "aep_at_design_discharge": "Annual exceedance probability of one flood, the mode curve's design flood, under "
    "every realization. Their weighted mean is the predictive AEP of that flood.",
    "response_curves": "Rating (peak stage against peak discharge) and system response (probability of failure "
    "given stage, per failure mode and for the system).",
    "consequence_curves": "Consequences against peak stage: damage and life loss given breach and given no breach.",
    "risk_distributions": "AFP, EAD and ALL of every Monte Carlo draw (weighted; the paired totals over loadings when "
    "there are several), with the predictive value and the mode-curve value marked.",
    "fn_chart": "F-N curve (annual probability of N or more fatalities) and f-N point against the reference lines.",
    "risk_by_aep_band": "Where the risk comes from: share of the predictive AFP, EAD and ALL from floods in each AEP "
    "band.",
    "sensitivity_indices": "Sobol first-order and total sensitivity indices with their confidence intervals.",
    "risk_by_loading": "Where the risk comes from by loading: predictive and mode-curve AFP, EAD and ALL stacked by "
    "loading, the totals on top.",
}

MEMO_SECTIONS_FILE = "memo_sections.json"
TOLERABLE_TABLE = "tolerable_risk.csv"


# --------------------------------------------------------------------------
# The document: sections of blocks, rendered to Markdown and HTML
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class Block:
    """One block of a memo section.

    ``kind`` is one of :data:`BLOCK_KINDS`: ``p`` (a paragraph of ``text``), ``caution`` (``text`` set off as a
    caution), ``table`` (``header`` and ``rows`` of strings; ``css`` its class in HTML), ``list`` (``items``),
    ``figure`` (file stem ``figure`` under ``figures/``, caption ``text``; ``number`` and the base64 PNG
    ``image`` are filled in when the memo is assembled) and ``eq`` (preformatted ``text``). Every string is
    plain text: the renderers escape it for Markdown and for HTML.
    """

    kind: str
    text: str = ""
    header: tuple = ()
    rows: tuple = ()
    items: tuple = ()
    css: str = ""
    figure: str = ""
    number: int = 0
    image: str = ""

    def __post_init__(self):
        if self.kind not in BLOCK_KINDS:
            raise ValueError(f"unknown block kind {self.kind!r}; expected one of {', '.join(BLOCK_KINDS)}")


#: The kinds of :class:`Block`.
BLOCK_KINDS = ("p", "caution", "table", "list", "figure", "eq")


@dataclass(frozen=True)
class Section:
    """A titled section of blocks; ``new_page``: the printed memo starts it on a new page."""

    title: str
    anchor: str
    blocks: tuple = field(default_factory=tuple)
    new_page: bool = True

    @property
    def figures(self) -> list[str]:
        """File stems of the section's figures."""
        return [b.figure for b in self.blocks if b.kind == "figure"]


def section_to_dict(s: Section) -> dict:
    """A section as plain JSON types (``memo_sections.json``); figure numbers and images are left out."""
    blocks = []
    for b in s.blocks:
        d = {"kind": b.kind}
        for name in ("text", "css", "figure"):
            if getattr(b, name):
                d[name] = getattr(b, name)
        if b.header:
            d["header"] = [str(c) for c in b.header]
        if b.rows:
            d["rows"] = [[str(c) for c in r] for r in b.rows]
        if b.items:
            d["items"] = [str(i) for i in b.items]
        blocks.append(d)
    return {"title": s.title, "anchor": s.anchor, "new_page": s.new_page, "blocks": blocks}


def section_from_dict(d, path=None) -> Section:
    """The :class:`Section` of :func:`section_to_dict`.

    Raises
    ------
    InputError
        When ``d`` is not a section (``path`` names the file in the message).
    """
    if not isinstance(d, dict) or not isinstance(d.get("blocks"), list):
        raise InputError(
            "holds a memo section without blocks; expected the memo_sections.json of this riskcalc "
            "version (rerun the scenario)",
            path,
        )
    blocks = []
    for k, b in enumerate(d["blocks"], 1):
        if not isinstance(b, dict) or b.get("kind") not in BLOCK_KINDS:
            kind = b.get("kind") if isinstance(b, dict) else b
            raise InputError(
                f"block {k} of section {d.get('title', '')!r} has kind {kind!r}; expected one of "
                f"{', '.join(BLOCK_KINDS)}",
                path,
            )
        blocks.append(
            Block(
                b["kind"],
                text=str(b.get("text", "")),
                css=str(b.get("css", "")),
                figure=str(b.get("figure", "")),
                header=tuple(str(c) for c in b.get("header", ())),
                rows=tuple(tuple(str(c) for c in r) for r in b.get("rows", ())),
                items=tuple(str(i) for i in b.get("items", ())),
            )
        )
    title = str(d.get("title", ""))
    return Section(title, str(d.get("anchor", "")) or _slug(title), tuple(blocks), bool(d.get("new_page", True)))


def number_figures(blocks, images: dict, start: int = 1) -> tuple[list, int]:
    """Figure blocks numbered from ``start`` with their image attached; figures without an image are left out.

    Returns
    -------
    blocks : list of Block
    next : int
        The number of the next figure.
    """
    out = []
    for b in blocks:
        if b.kind == "figure":
            if b.figure not in images:
                continue
            b = dataclasses.replace(b, number=start, image=images[b.figure])
            start += 1
        out.append(b)
    return out, start


def _md_escape(s) -> str:
    """Markdown-safe text: backslash-escape the characters that start markup or raw HTML."""
    return re.sub(r"([\\`*_\[\]<>|#&])", r"\\\1", str(s))


def _h(s) -> str:
    return html.escape(str(s), quote=True)


_NUMBER = re.compile(r"^[-+]?[\d,]*\.?\d+(e[-+]?\d+)?( ± [\d.]+)?$|^n/a$|^−?∞$")


def _numeric_columns(b: Block) -> list[bool]:
    """True for a column whose non-empty cells are all numbers (right-aligned); the first column never is."""
    out = []
    for j in range(len(b.header)):
        cells = [str(r[j]) for r in b.rows if j < len(r) and str(r[j]).strip()]
        out.append(j > 0 and bool(cells) and all(_NUMBER.match(c) for c in cells))
    return out


def _caption(b: Block) -> str:
    return f"Figure {b.number}. {b.text}" if b.number else b.text


def _md_block(b: Block) -> str:
    if b.kind == "p":
        return _md_escape(b.text)
    if b.kind == "caution":
        return "> **Caution.** " + _md_escape(b.text)
    if b.kind == "list":
        return "\n".join(f"- {_md_escape(i)}" for i in b.items)
    if b.kind == "eq":
        return "```text\n" + b.text + "\n```"
    if b.kind == "table":
        num = _numeric_columns(b)
        head = "| " + " | ".join(_md_escape(c) for c in b.header) + " |"
        sep = "| " + " | ".join("---:" if num[j] else "---" for j in range(len(b.header))) + " |"
        rows = ["| " + " | ".join(_md_escape(c) for c in r) + " |" for r in b.rows]
        return "\n".join([head, sep, *rows])
    cap = _md_escape(_caption(b))  # figure
    return f"![{cap}](figures/{b.figure}.png)\n\n*{cap}* (also `figures/{b.figure}.svg`)"


def _html_block(b: Block) -> str:
    if b.kind == "p":
        return f"<p>{_h(b.text)}</p>"
    if b.kind == "caution":
        return f'<p class="caution"><strong>Caution.</strong> {_h(b.text)}</p>'
    if b.kind == "list":
        return "<ul>\n" + "\n".join(f"<li>{_h(i)}</li>" for i in b.items) + "\n</ul>"
    if b.kind == "eq":
        return f'<pre class="eq">{_h(b.text)}</pre>'
    if b.kind == "table":
        num = _numeric_columns(b)
        cls = [' class="n"' if n else "" for n in num]
        head = "".join(f"<th{k}>{_h(c)}</th>" for k, c in zip(cls, b.header))
        body = "\n".join("<tr>" + "".join(f"<td{k}>{_h(c)}</td>" for k, c in zip(cls, r)) + "</tr>" for r in b.rows)
        return f'<table class="{_h(b.css)}">\n<thead><tr>{head}</tr></thead>\n<tbody>\n{body}\n</tbody>\n</table>'
    cap = _caption(b)  # figure
    # embedded in the memo; elsewhere (comparison.md's fragment) a link to the file beside it, as in Markdown
    src = f"data:image/png;base64,{b.image}" if b.image else f"figures/{_h(b.figure)}.png"
    img = f'<img src="{src}" alt="{_h(cap)}">'
    return f'<figure id="fig-{_h(b.figure)}">\n{img}\n<figcaption>{_h(cap)}</figcaption>\n</figure>'


def blocks_markdown(blocks) -> str:
    """Markdown of a sequence of blocks, separated by blank lines."""
    return "\n\n".join(_md_block(b) for b in blocks)


def blocks_html(blocks) -> str:
    """HTML fragment of a sequence of blocks (every string escaped; images as ``data:`` URIs)."""
    return "\n".join(_html_block(b) for b in blocks)


CSS = """
:root { --ink: #1a1a1a; --muted: #555; --rule: #c8c8c8; --accent: #2b4a6f; --warn: #8a4b08; }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", "Helvetica Neue", Arial, sans-serif; color: var(--ink); line-height: 1.45;
       font-size: 15px; max-width: 960px; margin: 0 auto; padding: 24px 28px 60px; background: #fff; }
header.memo { border-bottom: 3px solid var(--accent); margin-bottom: 18px; padding-bottom: 8px; }
header.memo h1 { font-size: 26px; margin: 0 0 4px; color: var(--accent); }
header.memo .sub { color: var(--muted); font-size: 13px; margin: 0; }
h2 { font-size: 20px; color: var(--accent); border-bottom: 1px solid var(--rule); padding-bottom: 3px;
     margin-top: 34px; }
p.caution { border-left: 5px solid var(--warn); background: #fbf3ea; padding: 8px 12px; }
table { border-collapse: collapse; margin: 10px 0 14px; font-size: 13px; width: 100%; }
th, td { border-bottom: 1px solid var(--rule); padding: 4px 7px; text-align: left; vertical-align: top; }
th.n, td.n { text-align: right; font-variant-numeric: tabular-nums; }
td.n { white-space: nowrap; }
th { background: #eef1f5; border-bottom: 2px solid #8a97a8; }
table.hash td:last-child { font-family: "DejaVu Sans Mono", monospace; font-size: 11px; word-break: break-all; }
table.headline td:first-child { font-weight: bold; min-width: 12em; }
table.alternatives { font-size: 11.5px; }
table.alternatives th, table.alternatives td { padding: 4px 4px; }
figure { margin: 18px 0 22px; }
figure img { width: 100%; height: auto; border: 1px solid #e3e3e3; }
figcaption { font-size: 13px; color: var(--muted); margin-top: 4px; }
pre.eq { background: #f6f7f9; border: 1px solid #e1e4e8; padding: 10px 12px; font-size: 13px; white-space: pre-wrap; }
nav.toc ol { columns: 2; font-size: 14px; }
nav.toc a { color: var(--accent); text-decoration: none; }
footer { margin-top: 40px; font-size: 12px; color: var(--muted); border-top: 1px solid var(--rule); padding-top: 8px; }
@page { size: A4; margin: 16mm 14mm 18mm; }
@media print {
  body { max-width: none; padding: 0; font-size: 11pt; }
  section.page { break-before: page; page-break-before: always; }
  h2 { break-after: avoid; page-break-after: avoid; margin-top: 0; }
  figure, table, pre.eq, p.caution { break-inside: avoid; page-break-inside: avoid; }
  figure img { max-height: 200mm; object-fit: contain; border: none; }
  nav.toc { display: none; }
  a { color: inherit; text-decoration: none; }
}
"""


def render_memo(title: str, subtitle: str, sections) -> tuple[str, str]:
    """Markdown and HTML text of a memo from its sections (figures numbered, images attached).

    Returns
    -------
    markdown, html : str
    """
    md = [f"# {_md_escape(title)}", "", _md_escape(subtitle), ""]
    md += ["Contents: " + " · ".join(f"{k}. {_md_escape(s.title)}" for k, s in enumerate(sections, 1)), ""]
    for k, s in enumerate(sections, 1):
        md += [f"## {k}. {_md_escape(s.title)}", "", blocks_markdown(s.blocks), ""]
    toc = "\n".join(f'<li><a href="#{_h(s.anchor)}">{_h(s.title)}</a></li>' for s in sections)
    body = []
    for k, s in enumerate(sections, 1):
        cls = "page" if (s.new_page and k > 1) else "first"
        body.append(
            f'<section id="{_h(s.anchor)}" class="{cls}">\n<h2>{k}. {_h(s.title)}</h2>\n'
            + blocks_html(s.blocks)
            + "\n</section>"
        )
    page = f"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; img-src data:; style-src 'unsafe-inline'">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{_h(title)}</title>
<style>{CSS}</style>
</head>
<body>
<header class="memo">
<h1>{_h(title)}</h1>
<p class="sub">{_h(subtitle)}</p>
</header>
<nav class="toc"><ol>
{toc}
</ol></nav>
{chr(10).join(body)}
<footer>Written by riskcalc. {_h(CAUTION)}</footer>
</body>
</html>
"""
    return "\n".join(md).rstrip() + "\n", page


# --------------------------------------------------------------------------
# Tolerable-risk comparison (written at run time from the result)
# --------------------------------------------------------------------------
#: Columns of tables/tolerable_risk.csv (the first eleven as before; the rest added with the confidence).
TOLERABLE_COLUMNS = [
    "reference_line",
    "source",
    "kind",
    "definition",
    "compared_with",
    "curve",
    "computed_per_yr",
    "limit_per_yr",
    "ratio",
    "exceeds",
    "n_lives",
    "position",
    "share_of_draws_above",
    "share_of_draws_below",
    "share_of_draws_not_applicable",
    "draws_basis",
    "structure",
    "lines_from",
]


def tolerable_risk_table(result, guidelines=None):
    """Each reference line against the predictive and mode results, with the confidence, as a tidy table.

    An annual failure probability line is compared with AFP; a life-loss line (an f-N line) with the f-N
    point (AFP, ALL_inc / AFP), where ALL_inc = Σ P_f (L_breach − L_no_breach) m is the life loss caused by
    failure; an F-N limit line with the F-N curve anywhere in its N range (its largest ratio,
    :func:`riskcalc.decision.guidelines.check_fn_curve`). Individual-risk lines get a row saying they are not
    assessed when the scenario has no ``[[individual_risk]]`` group, else compared with the largest individual
    risk. The rows and the confidence come from :func:`riskcalc.decision.reference_checks.reference_checks`.

    Returns
    -------
    pandas.DataFrame
        Columns :data:`TOLERABLE_COLUMNS`: ``position`` is above, below, not applicable (an f-N point whose N
        lies outside the line's range, or an F-N curve with no point in it) or not assessed;
        ``share_of_draws_above`` is the weighted share of the Monte Carlo draws whose figure lies above the
        line (on the predictive row; blank on the mode row and for individual-risk lines), with the shares
        below and not applicable and what the draws are (``draws_basis``); ``structure`` and ``lines_from``
        say which lines were drawn.
    """
    import pandas as pd

    from ..decision.reference_checks import reference_checks

    ref = reference_checks(result, guidelines)
    rows = []
    for c in ref["lines"]:
        base = {
            "reference_line": c["line"],
            "source": c["source"],
            "kind": c["kind_text"],
            "definition": c["definition"],
            "structure": ref["structure"],
            "lines_from": ref["lines_from"],
        }
        if c["kind"] == "individual_risk" and c["predictive"]["position"] == "not assessed":
            rows.append(
                {
                    **base,
                    "compared_with": c["compared_with"],
                    "curve": "",
                    "computed_per_yr": np.nan,
                    "limit_per_yr": c["predictive"]["limit_per_yr"],
                    "ratio": np.nan,
                    "exceeds": "",
                    "n_lives": np.nan,
                    "position": "not assessed",
                }
            )
            continue
        for curve in ("predictive", "mode"):
            v = c[curve]
            ratio = np.nan if v["ratio"] is None else v["ratio"]
            row = {
                **base,
                "compared_with": c["compared_with"],
                "curve": curve,
                "computed_per_yr": np.nan if v["computed_per_yr"] is None else v["computed_per_yr"],
                "limit_per_yr": np.nan if v["limit_per_yr"] is None else v["limit_per_yr"],
                "ratio": ratio,
                "exceeds": "" if not math.isfinite(ratio) else ("yes" if ratio > 1 else "no"),
                "n_lives": np.nan if v["n_lives"] is None else v["n_lives"],
                "position": v["position"],
            }
            d = c["draws"]
            if curve == "predictive" and d is not None:
                row.update(
                    share_of_draws_above=d["share_above"],
                    share_of_draws_below=d["share_below"],
                    share_of_draws_not_applicable=d["share_not_applicable"],
                    draws_basis=d["basis"],
                )
            rows.append(row)
    return pd.DataFrame(rows, columns=TOLERABLE_COLUMNS)


def write_memo(result, outdir) -> list[Path]:
    """Write ``memo.md`` and ``memo.html`` for a run whose summary, tables and figures are in ``outdir``.

    Adds ``tables/tolerable_risk.csv`` (and ``memo_sections.json`` when
    ``result.extras["memo_sections"]`` holds :class:`Section` objects), then renders the memo
    from the files with :func:`rebuild_memo`, so a later ``riskcalc memo``
    gives the same text.

    Returns
    -------
    list of Path
        memo.md and memo.html.
    """
    from ..io import write_csv, write_json

    outdir = Path(outdir)
    (outdir / "tables").mkdir(parents=True, exist_ok=True)
    write_csv(outdir / "tables" / TOLERABLE_TABLE, tolerable_risk_table(result))
    extra = list((getattr(result, "extras", None) or {}).get("memo_sections", []) or [])
    if extra:
        write_json(
            outdir / MEMO_SECTIONS_FILE,
            [section_to_dict(s if isinstance(s, Section) else section_from_dict(s)) for s in extra],
        )
    return rebuild_memo(outdir)


# --------------------------------------------------------------------------
# Rebuilding from the files of a finished run
# --------------------------------------------------------------------------
def _read_csv(path: Path) -> list[dict]:
    if not path.exists():
        return []
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def _float(s):
    try:
        v = float(s)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _slug(s) -> str:
    return re.sub(r"[^a-z0-9]+", "-", str(s).lower()).strip("-") or "section"


def rebuild_memo(outdir) -> list[Path]:
    """Rebuild ``memo.md`` and ``memo.html`` from a finished run (summary.json, tables/*.csv, figures/*.png).

    Raises
    ------
    InputError
        When ``outdir`` is not a finished riskcalc run (no readable summary.json).
    """
    outdir = Path(outdir)
    sp = outdir / "summary.json"
    if not outdir.is_dir():
        raise InputError("is not a directory; expected the output directory of `riskcalc run`", outdir)
    if not sp.exists():
        raise InputError("summary.json not found; expected the output directory of a finished `riskcalc run`", outdir)
    try:
        summary = json.loads(sp.read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"is not valid JSON ({exc})", sp) from None
    for key in HEADLINE_KEYS:
        if not isinstance(summary.get(key), dict):
            raise InputError("missing headline figure; expected a summary.json written by `riskcalc run`", sp, key=key)
    extra = []
    xp = outdir / MEMO_SECTIONS_FILE
    if xp.exists():
        try:
            raw = json.loads(xp.read_text(encoding="utf-8"))
        except json.JSONDecodeError as exc:
            raise InputError(f"is not valid JSON ({exc})", xp) from None
        if not isinstance(raw, list):
            raise InputError("expected a list of memo sections", xp)
        extra = [section_from_dict(d, xp) for d in raw]
    figdir = outdir / "figures"
    images = {}
    if figdir.is_dir():
        for p in sorted(figdir.glob("*.png")):
            images[p.stem] = base64.b64encode(p.read_bytes()).decode("ascii")
    tol = _read_csv(outdir / "tables" / TOLERABLE_TABLE)
    title, subtitle, sections = memo_sections(summary, tol, images, extra)
    md, page = render_memo(title, subtitle, sections)
    paths = [outdir / "memo.md", outdir / "memo.html"]
    paths[0].write_text(md, encoding="utf-8")
    paths[1].write_text(page, encoding="utf-8")
    return paths


def mode_words(notes) -> str:
    """How the memo names the mode curve, from the run's mode-curve note (the first note starting "mode curve:").

    Only a mode chosen by the largest ``log_posterior`` is "the single most likely (mode) curve"; explicit
    parameters are the scenario's mode curve; the fallbacks are named for what they are (the curve at the
    weighted mean parameters, or the member closest to the median curve).
    """
    if isinstance(notes, str):
        notes = [notes]
    note = next((str(n) for n in (notes or []) if str(n).startswith("mode curve:")), "")
    if "weighted mean parameters" in note:
        return "the mode curve (here the curve at the weighted mean parameters: the ensemble has no log_posterior)"
    if "closest to the median curve" in note:
        return "the mode curve (here the member closest to the median curve: the ensemble has no log_posterior)"
    if "explicit parameters" in note:
        return "the mode curve (the scenario's explicit mode parameters)"
    if "largest log_posterior" in note:
        return "the single most likely (mode) curve"
    return "the mode curve"


def grid_error_blocks(summary: dict) -> list:
    """A paragraph on accuracy: each headline figure's grid error beside its Monte Carlo standard error."""
    g = summary.get("grid_error")
    if not g:
        return []
    parts = []
    mc_larger = True
    for key in HEADLINE_KEYS:
        d = g.get(key) or {}
        mc = d.get("relative_monte_carlo_standard_error")
        mc_larger = mc_larger and mc is not None and mc > d.get("relative_largest", 0.0)
        parts.append(
            f"{output_label(key).short} {fmt_percent(d.get('relative_largest', 0.0), sig=2)} "
            f"(Monte Carlo standard error {'not available' if mc is None else fmt_percent(mc, sig=2)})"
        )
    how = (
        "chosen as the smallest grid whose estimated error is below the target"
        if g.get("choice") == "adaptive"
        else "as the scenario gives it"
    )
    return [
        Block(
            "p",
            ("Accuracy of the flood loading's integrals" if summary.get("loadings") else "Accuracy of the integrals")
            + f": the grid of {g['grid_points']} points ({how}) has an estimated grid "
            f"error, as a share of each figure, of {'; '.join(parts)}; target {fmt_percent(g['target_relative'], sig=2)}. "
            "The grid error is a Richardson estimate from the same integrals on every second grid point. "
            + (
                "For every figure the Monte Carlo error of the ensemble and the response draws is the larger."
                if mc_larger
                else "For some figure the grid error is not small beside the Monte Carlo error: refine the grid."
            )
            + (
                " The seismic ground-motion integrals use their own log-spaced grid (hazard.points); their grid "
                "error is not estimated."
                if any(d.get("kind") == "seismic" for d in (summary.get("loadings") or {}).values())
                else ""
            ),
        )
    ]


def memo_sections(summary: dict, tolerable: list[dict], images: dict, extra=()) -> tuple[str, str, list]:
    """The memo's title, subtitle and sections from the run's files (see :func:`rebuild_memo`)."""
    prov = summary.get("provenance", {}) or {}
    settings = prov.get("settings", {}) or {}
    units = summary.get("units", {}) or {}
    cur = units.get("currency", "")
    var = settings.get("hazard_variable", "discharge")
    var_unit = unit_text(units.get("discharge" if var == "discharge" else "stage"))
    stage_unit = unit_text(units.get("stage"))
    title = f"Decision memo: {summary.get('title', 'untitled scenario')}"
    subtitle = (
        f"Run of {prov.get('date', 'unknown date')} with riskcalc {prov.get('riskcalc_version', '?')}; "
        f"scenario file {prov.get('scenario', '?')}; {settings.get('realizations', '?')} hazard realizations."
    )
    sections = []
    extra_figs = {f for s in extra for f in s.figures}

    def fig(stem, caption):  # numbered, with its image, once every section is in place
        return Block("figure", text=caption, figure=stem)

    # 1. headline ------------------------------------------------------------
    rows = []
    for key in HEADLINE_KEYS:
        o, h = output_label(key), summary[key]
        e = h.get("ensemble", {}) or {}
        rows.append(
            (
                o.text(cur),
                *(
                    o.fmt(v)
                    for v in (
                        h.get("predictive"),
                        h.get("mode"),
                        h.get("median_curve"),
                        e.get("p05"),
                        e.get("p50"),
                        e.get("p95"),
                    )
                ),
                fmt_ratio(h.get("ratio_predictive_to_mode")),
            )
        )
    blocks = [
        Block("caution", CAUTION),
        Block(
            "table",
            header=(
                "measure",
                "predictive",
                "mode curve",
                "median curve",
                "ensemble 5\u00a0%",
                "ensemble 50\u00a0%",
                "ensemble 95\u00a0%",
                "predictive / mode",
            ),
            rows=tuple(rows),
            css="headline",
        ),
    ]
    afp = summary["annual_failure_probability"]
    r_afp = afp.get("ratio_predictive_to_mode")
    crest = (summary.get("mode_understatement", {}) or {}).get("crest_check", {}) or {}
    m = crest.get("mode", {}) or {}
    p_d, years = crest.get("design_aep"), crest.get("years")
    if r_afp is not None and math.isfinite(r_afp) and m.get("aep_on_predictive"):
        word = "understates" if r_afp > 1.05 else "overstates" if r_afp < 0.95 else "matches, within 5 %,"
        blocks.append(
            Block(
                "p",
                (
                    f"What the ratio means: {mode_words(summary.get('notes'))} {word} the annual failure probability "
                    f"(predictive / mode = {fmt_ratio(r_afp)}{_flood_ratio(summary)}). A crest set at the mode curve's {fmt_aep(p_d)} stage "
                    f"({fmt_quantity(m.get('stage'), 'stage')} {stage_unit}) is exceeded on average about once in "
                    f"{fmt_return_period(m['aep_on_predictive'])} years on the predictive curve, not once in "
                    f"{fmt_return_period(p_d)}: the chance of at least one exceedance in {years} years is "
                    f"{fmt_percent(m.get('chance_in_years_predictive', 0))}, not "
                    f"{fmt_percent(m.get('chance_in_years_nominal', 0))}."
                ),
            )
        )
    r_h = afp.get("ratio_hazard_only")
    if r_h is not None and r_afp is not None and abs(r_h - r_afp) > 1e-9 * abs(r_afp):
        blocks.append(
            Block(
                "p",
                f"Of the AFP ratio {fmt_ratio(r_afp)}, the hazard ensemble alone (nominal response) "
                f"gives {fmt_ratio(r_h)}; the rest comes from the sampled uncertainty of the response "
                "and consequences, which the mode-curve analysis leaves out as well.",
            )
        )
    cs = (summary.get("mode_understatement", {}) or {}).get("crest_stage_check")
    if cs:
        blocks.append(
            Block(
                "p",
                f"The crest itself ({fmt_quantity(cs['crest_stage'], 'stage')} {stage_unit}) is reached with annual "
                f"probability {fmt_num(cs['aep_predictive'])} on the predictive curve and {fmt_num(cs['aep_mode'])} "
                f"on the mode curve (ratio {fmt_ratio(cs['ratio_predictive_to_mode'])}); the chance of reaching it "
                f"at least once in {cs['years']} years is {fmt_percent(cs['chance_in_years_predictive'], sig=2)} "
                f"(mode curve: {fmt_percent(cs['chance_in_years_mode'], sig=2)}).",
            )
        )
    blocks += _loading_blocks(summary, cur)
    blocks.append(
        Block(
            "p",
            "Linearity: the predictive result is the mean of the per-realization results (the "
            "weighted mean over the ensemble), which is why the risk is integrated against the "
            "predictive (mean) hazard curve and not the mode curve.",
        )
    )
    se = afp.get("mc_standard_error")
    if se is not None and afp.get("predictive"):
        blocks.append(
            Block(
                "p",
                f"Monte Carlo standard error of the predictive AFP: {fmt_num(se)} per year "
                f"({fmt_percent(se / afp['predictive'], decimals=1)} of the value).",
            )
        )
    blocks += grid_error_blocks(summary)
    sections.append(Section("Headline results", "headline", tuple(blocks), new_page=False))

    # 2. figures -------------------------------------------------------------
    from .figures import FIGURE_STEMS

    fblocks = []
    for stem in FIGURE_STEMS:
        if stem in images and stem not in extra_figs:
            cap = FIGURE_CAPTIONS[stem]
            if stem == "aep_at_design_discharge" and m.get(var) is not None:
                cap += (
                    f" Here {var} {fmt_quantity(m[var], var)} {var_unit}: mean AEP "
                    f"{fmt_num(m.get('aep_on_predictive'))} against {fmt_num(p_d)} on the mode curve."
                )
            fblocks.append(fig(stem, cap))
    for stem in sorted(images):
        if stem not in FIGURE_STEMS and stem not in extra_figs:
            fblocks.append(fig(stem, f"Figure file {stem}."))
    if not fblocks:
        fblocks.append(Block("p", "No figures were written for this run (outputs.figures = false)."))
    sections.append(Section("Figures", "figures", tuple(fblocks)))

    # 3. tolerable risk --------------------------------------------------------
    sections.append(Section("Tolerable-risk comparison", "tolerable-risk", tuple(_tolerable_blocks(tolerable))))

    # 4. sensitivity -----------------------------------------------------------
    sens = summary.get("sensitivity")
    if isinstance(sens, dict) and sens:
        sblocks = [
            Block(
                "p",
                "Sobol indices of the outputs to the uncertain inputs: the first-order index S1 is the "
                "share of output variance from one input alone, the total index ST includes its "
                "interactions (Saltelli et al. 2008). Intervals are the confidence half-widths.",
            )
        ]
        for out_key, d in sens.items():
            if not isinstance(d, dict):
                continue
            srows = []
            for factor, s in d.items():
                s = s or {}
                srows.append(
                    (factor, fmt_index(s.get("S1"), s.get("S1_conf")), fmt_index(s.get("ST"), s.get("ST_conf")))
                )
            try:
                name = output_label(str(out_key)).text(cur, unit=False)
            except KeyError:
                name = str(out_key).replace("_", " ")
            sblocks.append(Block("p", f"Output: {name}"))
            sblocks.append(Block("table", header=("factor", "first order S1", "total ST"), rows=tuple(srows)))
        if "sensitivity_indices" in images:
            sblocks.append(fig("sensitivity_indices", FIGURE_CAPTIONS["sensitivity_indices"]))
        sections.append(Section("Sensitivity", "sensitivity", tuple(sblocks)))

    # 5. sections from other stages (alternatives, economics, ...) ------------------
    for k, s in enumerate(extra, 1):
        sections.append(
            dataclasses.replace(s, title=s.title or f"Section {k}", anchor=f"extra-{k}-{_slug(s.anchor or s.title)}")
        )

    # 6. warnings ----------------------------------------------------------------
    warns = list(summary.get("warnings", []) or [])
    wblocks = [Block("list", items=tuple(warns))] if warns else [Block("p", "The run raised no warnings.")]
    notes = [n for n in (summary.get("notes", []) or []) if not str(n).startswith("linearity:")]
    if notes:
        wblocks += [Block("p", "Notes of the run:"), Block("list", items=tuple(notes))]
    sections.append(Section("Warnings", "warnings", tuple(wblocks)))

    # 7. provenance --------------------------------------------------------------
    prow = [
        ("riskcalc version", str(prov.get("riskcalc_version", ""))),
        ("run date", str(prov.get("date", ""))),
        ("Python", str(prov.get("python", ""))),
        ("seed", str(prov.get("seed", ""))),
        ("scenario file", str(prov.get("scenario", ""))),
    ]
    prow += [(f"setting: {k}", _setting(v)) for k, v in sorted(settings.items())]
    hashes = tuple((str(k), str(v)) for k, v in sorted((prov.get("inputs", {}) or {}).items()))
    hfit = prov.get("hazard_fit") or {}
    if hfit:  # the hazard ensemble was fitted by the run (docs/fitting.md): its outputs and seed
        prow.append(
            (
                "hazard fit",
                f"{hfit.get('family')} fitted to the record, {hfit.get('draws')} draws, "
                f"seed {hfit.get('seed')}; files in {hfit.get('folder')}/",
            )
        )
        hashes += tuple((str(k), str(v)) for k, v in sorted((hfit.get("outputs") or {}).items()))
    sections.append(
        Section(
            "Provenance",
            "provenance",
            (
                Block("table", header=("item", "value"), rows=tuple(prow), css="text"),
                Block("p", "SHA-256 of every input file (a changed file gives a different digest):"),
                Block("table", header=("input file", "SHA-256"), rows=hashes, css="text hash"),
            ),
        )
    )

    # 8. cautions -------------------------------------------------------------------
    sections.append(Section("Cautions and limitations", "cautions", tuple(_caution_blocks(summary))))

    # 9. methods --------------------------------------------------------------------
    sections.append(Section("Methods appendix", "methods", tuple(_methods_blocks(bool(sens)))))

    # figures numbered through the whole memo
    n = 1
    for i, sec in enumerate(sections):
        blocks, n = number_figures(sec.blocks, images, n)
        sections[i] = dataclasses.replace(sec, blocks=tuple(blocks))
    return title, subtitle, sections


def _flood_ratio(summary: dict) -> str:
    """'' or ' for the total over loadings; 11.65 for the flood loading alone'."""
    loads = summary.get("loadings")
    if not loads or "flood" not in loads:
        return ""
    r = loads["flood"]["annual_failure_probability"]["ratio_predictive_to_mode"]
    return f" for the total over loadings; {fmt_ratio(r)} for the flood loading alone"


def _loading_blocks(summary: dict, cur: str) -> list:
    """Where the risk comes from (a study with several loadings) and the individual risks."""
    out = []
    loads = summary.get("loadings")
    if loads:
        keys = HEADLINE_KEYS
        rows = []
        order = list(dict.fromkeys(r["loading"] for r in summary["total"]["breakdown"])) or list(loads)
        for name in order:
            d = loads[name]
            cells = [name, d.get("kind", "")]
            for k in keys:
                v, t = d[k]["predictive"], summary[k]["predictive"]
                o = output_label(k)
                cells.append(f"{o.fmt(v)} ({fmt_percent(v / t) if t else '-'})")
            cells.append(fmt_ratio(d["annual_failure_probability"]["ratio_predictive_to_mode"]))
            rows.append(tuple(cells))
        rows.append(
            (
                "total",
                "",
                *(output_label(k).fmt(summary[k]["predictive"]) for k in keys),
                fmt_ratio(summary["annual_failure_probability"]["ratio_predictive_to_mode"]),
            )
        )
        comb = summary["total"]["annual_failure_probability_combination"]
        out += [
            Block(
                "p",
                "Where the risk comes from: the headline figures above are totals over the loadings, taken as "
                "independent. Predictive figures of each loading, with its share of the total:",
            ),
            Block(
                "table",
                header=("loading", "kind", *(output_label(k).axis(cur) for k in keys), "AFP predictive / mode"),
                rows=tuple(rows),
            ),
            Block(
                "p",
                f"Total AFP as the sum over loadings {fmt_num(comb['rare_event_sum'])}; as independent loadings "
                f"1 - prod(1 - AFP) = {fmt_num(comb['independent'])}; any dependence between loadings gives a value "
                f"between {fmt_num(comb['lower_bound'])} and {fmt_num(comb['upper_bound'])}. The failure-mode split "
                "is in tables/risk_by_loading.csv. Sensitivity indices and alternatives cover the flood loading. A "
                "loading without a hazard ensemble (normal operation) enters the mode-curve figures with its nominal "
                "probabilities (the median or mode of each distribution), so part of the total predictive / mode "
                "ratio is the mean-to-median ratio of those probabilities, not the choice of one hazard curve.",
            ),
        ]
    for x in summary.get("individual_risk") or []:
        out.append(
            Block(
                "p",
                f"Individual risk, {x['name']} (present {fmt_percent(x['exposure'])} of the time, fatality rate "
                f"{fmt_num(x['fatality_rate_given_failure'])} given failure): {fmt_num(x['predictive'])} per year "
                f"on the predictive measure, {fmt_num(x['mode'])} on the mode curves; 5-95 % of the draws "
                f"{fmt_num(x['p05'])} to {fmt_num(x['p95'])}.",
            )
        )
    return out


def _setting(v) -> str:
    if isinstance(v, float):
        return f"{v:g}"
    return str(v)


def _share(s) -> str:
    v = _float(s)
    return fmt_ratio(v) if v is not None else "n/a"


def _tolerable_blocks(tol: list[dict]) -> list[Block]:
    from ..decision.guidelines import STRUCTURES, structure_note

    blocks = [
        Block(
            "p",
            "The computed risk against tolerable-risk reference lines. Ratio = computed / line; above "
            "1 the result lies above the line. These lines are defaults from published guidance (or "
            "the lines the scenario gives); the governing agency's current policy applies and decides "
            "which lines, if any, are used for a decision. Items marked [from memory] were recalled and "
            "have not been checked against the primary document.",
        )
    ]
    if not tol:
        blocks.append(Block("p", "No tolerable-risk table was found (tables/tolerable_risk.csv)."))
        return blocks
    structure = tol[0].get("structure") or "unspecified"
    if structure in STRUCTURES:
        blocks.append(Block("p", structure_note(structure, tol[0].get("lines_from") or "defaults")))
    sources = []
    for r in tol:
        if r["source"] not in sources:
            sources.append(r["source"])
    ref = {s: f"[{i}]" for i, s in enumerate(sources, 1)}
    by_line: dict = {}
    for r in tol:
        by_line.setdefault((r["reference_line"], r["compared_with"]), {})[r["curve"] or "-"] = r
    rows = []
    n_exceed = {"predictive": 0, "mode": 0}
    n_na = {"predictive": 0, "mode": 0}
    n_lines = n_not_assessed = 0
    basis = []

    def cell(rr):
        if not rr:
            return "n/a"
        if rr.get("position") == "not applicable":
            return "not applicable"
        return fmt_ratio(_float(rr.get("ratio")))

    for (name, what), d in by_line.items():
        p = d.get("predictive") or d.get("-")
        mo = d.get("mode", {})
        if "-" in d:
            n_not_assessed += 1
            rows.append((f"{name} {ref[p['source']]}", p["definition"], what, "", "", "", "", ""))
            continue
        n_lines += 1
        for c, rr in (("predictive", p), ("mode", mo)):
            if rr and rr.get("exceeds") == "yes":
                n_exceed[c] += 1
            if rr and rr.get("position") == "not applicable":
                n_na[c] += 1
        nl = _float(p.get("n_lives"))
        where = f" at N = {fmt_num(nl)}" if nl is not None and p.get("position") != "not applicable" else ""
        share = _share(p.get("share_of_draws_above"))
        na = _float(p.get("share_of_draws_not_applicable"))
        if na:
            share += f" ({fmt_ratio(na)} n/a)"
        if p.get("draws_basis") and p["draws_basis"] not in basis:
            basis.append(p["draws_basis"])
        rows.append(
            (
                f"{name} {ref[p['source']]}",
                p["definition"],
                what + where,
                fmt_num(_float(p["computed_per_yr"])),
                fmt_num(_float(p["limit_per_yr"])),
                cell(p),
                cell(mo),
                share,
            )
        )
    blocks.append(
        Block(
            "table",
            header=(
                "reference line",
                "definition",
                "compared with",
                "predictive [1/yr]",
                "line [1/yr]",
                "ratio (predictive)",
                "ratio (mode curve)",
                "share of draws above the line",
            ),
            rows=tuple(rows),
            css="tolerable",
        )
    )
    if n_lines:
        text = (
            f"On the predictive curve the result lies above {n_exceed['predictive']} of {n_lines} lines; on the "
            f"mode curve above {n_exceed['mode']}."
        )
        if n_na["predictive"] or n_na["mode"]:
            text += (
                f" {n_na['predictive']} (predictive) and {n_na['mode']} (mode curve) are not applicable: the "
                "f-N point's N lies outside the line's N range, or the F-N curve has no point in it; that is "
                "not the same as lying below the line."
            )
        text += (
            " The f-N point uses the life loss caused by failure, ALL_inc = Σ P_f (L_breach − L_no_breach) m, "
            "so N = ALL_inc / AFP is the average life loss given failure; f-N points are compared with the "
            "f-N lines (annualized life loss and AFP), F-N limit lines with the F-N curve."
        )
        blocks.append(Block("p", text))
        conf = (
            "Confidence: the last column is the weighted share of the epistemic Monte Carlo draws whose figure "
            "lies above the line (for an F-N limit line, whose F-N curve exceeds it anywhere in its N range); "
            "the share of draws to which the line does not apply is given in brackets when there are any."
        )
        if basis:
            conf += " Draws used: " + "; ".join(basis) + "."
        conf += (
            " The predictive figure is the mean over the draws, so it can lie above a line while fewer than "
            "half of the draws do: a few draws with large risk raise the mean."
        )
        blocks.append(Block("p", conf))
    if n_not_assessed:
        blocks.append(
            Block(
                "p",
                f"{n_not_assessed} individual-risk line(s) are not assessed: the scenario defines no "
                "[[individual_risk]] group (the location and exposure of the person most at risk), so the "
                "annual probability of death of that person is not computed.",
            )
        )
    blocks.append(Block("p", "Sources of the lines:"))
    blocks.append(Block("list", items=tuple(f"{ref[s]} {s}" for s in sources)))
    return blocks


def _caution_blocks(summary: dict) -> list[Block]:
    discharge_unit = unit_text((summary.get("units", {}) or {}).get("discharge"))
    modes = list((summary.get("failure_modes") or {}).keys())
    ext = summary.get("extrapolation", {}) or {}
    tr = summary.get("truncation", {}) or {}
    b = summary.get("annual_failure_probability_bounds", {}) or {}
    loads = summary.get("loadings") or {}
    if loads:
        modes = [f"{name}: {m}" for name, d in loads.items() for m in (d.get("failure_modes") or {})]
        other = "gate or operational failure, debris blockage, loadings not listed"
    else:
        other = "seismic loading, failure at normal pool, gate or operational failure, debris blockage"
    flood = " of the flood loading" if loads else ""
    exposure = summary.get("exposure")
    items = [
        f"Failure modes not modelled are not in these numbers. Modelled: {', '.join(modes) or 'none listed'}. "
        f"Any other mode (for example {other}) adds risk the memo does not show.",
        f"Failure modes{flood} are combined as independent, 1 − Π(1 − P_i). If they were fully dependent the AFP"
        f"{flood} would be {fmt_num(b.get('lower_fully_dependent'))} instead of "
        f"{fmt_num(b.get('upper_independent'))} per year (unimodal bounds)."
        + (" Loadings are combined as independent too (the bounds are in the headline section)." if loads else ""),
        "Consequences are held fixed in time: population, buildings, warning and evacuation are as in the "
        "consequence tables, not as they may become; they depend on peak stage only, not on duration, velocity"
        + (
            " or breach timing; time of day and warning enter only through the weighted exposure scenarios ("
            + ", ".join(e["name"] for e in exposure)
            + ")."
            if exposure
            else ", season, time of day or breach timing."
        ),
        "Life-loss estimates are uncertain by a factor of several even with good data; treat ALL and the F-N "
        "curve as orders of magnitude.",
        (
            f"Stage above the rating (or routing) table is extrapolated: "
            f"{fmt_percent(ext.get('share_of_afp_beyond_rating_table'), sig=2)} of the AFP comes from floods above "
            f"its top "
            f"({fmt_quantity(ext['rating_table_top'])} {discharge_unit})."
            if ext.get("rating_table_top") is not None
            else "The hazard is given as peak stage, so no rating curve is used; the stage-frequency ensemble carries "
            "any rating uncertainty itself."
        ),
        f"The hazard ensemble carries the uncertainty of the frequency analysis only; change over time (climate, "
        f"land use, upstream works) is not included unless the ensemble includes it. The predictive AEP above the "
        f"grid is {fmt_num(tr.get('aep_above_grid'))} and is counted in the top cell, not dropped.",
        "Figures and tables are only as good as the inputs: the frequency ensemble, the rating curve, the "
        "fragility curves and the consequence curves.",
    ]
    return [Block("list", items=tuple(items)), Block("caution", CAUTION)]


def _methods_blocks(with_sensitivity: bool) -> list[Block]:
    eq = "\n".join(
        [
            "Predictive (mean) hazard curve, at fixed discharge q, realizations r = 1..R with weights w_r:",
            "    p̄(q) = Σ_r w_r p_r(q)                                                  [1, 2, 3, 4]",
            "Credible band and median curve: weighted quantiles over r of q_r(p) at fixed AEP p.",
            "Interval masses on the grid q_0 < … < q_J (tail cell above the grid):",
            "    m[r, j] = p_r(q_j) − p_r(q_(j+1)),   m[r, J] = p_r(q_J)",
            "Stage from the rating curve, h(q), monotone in log q [9]; natural variability ε ~ N(0, σ_h):",
            "    P_f*(q) = E_ε[ P_f(h(q) + ε) ]   (Gauss–Hermite quadrature)",
            "Failure modes combined as independent, with the unimodal bounds [5]:",
            "    P_f = 1 − Π_i (1 − P_i),   max_i P_i ≤ P_f ≤ 1 − Π_i (1 − P_i)",
            "Integrands (cell midpoints) and the risk of realization r:",
            "    AFP: g = P_f     EAD: g = P_f D_b + (1 − P_f) D_nb     ALL: g = P_f L_b + (1 − P_f) L_nb",
            "    R_r = Σ_j g_j m[r, j]",
            "Linearity (the predictive result is the mean of the per-realization results):",
            "    Σ_r w_r R_r = Σ_j g_j m̄_j,   m̄_j = Σ_r w_r m[r, j]",
            "F-N curve, annual probability of N or more fatalities:",
            "    F(N) = Σ_j P_f,j m̄_j 1[L_j ≥ N]",
            "Chance of at least one exceedance in n years:   1 − (1 − p)^n",
            "Closed-form check of the risk integral (power-law hazard H = k0 x^−k, lognormal fragility θ, β) [6]:",
            "    λ_f = H(θ) exp(k² β² / 2)",
        ]
    )
    blocks = [
        Block("p", "The chain, in the order it is computed. Numbers in brackets refer to the list below."),
        Block("eq", eq),
        Block(
            "p",
            "Frequency families follow Bulletin 17B/17C (log-Pearson Type III frequency factors) [3, 4]; "
            "the Pearson Type III tail for small skew uses Temme's uniform expansion [8]. Life loss "
            "from population at risk uses fatality rates such as those suggested by Graham [7].",
        ),
    ]
    refs = [
        "[1] Stedinger, J.R. (1983). Design events with specified flood risk. Water Resources Research 19(2), 511–522.",
        "[2] Beard, L.R. (1960). Probability estimates based on small normal distribution samples. Journal of "
        "Geophysical Research 65(7), 2143–2148.",
        "[3] Interagency Advisory Committee on Water Data (1982). Guidelines for Determining Flood Flow Frequency, "
        "Bulletin 17B, Appendix 11 (expected probability) [from memory].",
        "[4] England, J.F., et al. (2019). Guidelines for Determining Flood Flow Frequency, Bulletin 17C. USGS "
        "Techniques and Methods 4-B5, v1.1.",
        "[5] Ang, A.H.-S. and Tang, W.H. (1984). Probability Concepts in Engineering Planning and Design, Vol. II. "
        "Wiley, section 6.2.",
        "[6] Cornell, C.A., Jalayer, F., Hamburger, R.O. and Foutch, D.A. (2002). Probabilistic basis for 2000 SAC "
        "FEMA steel moment frame guidelines. Journal of Structural Engineering 128(4), 526–533 [from memory].",
        "[7] Graham, W.J. (1999). A Procedure for Estimating Loss of Life Caused by Dam Failure. DSO-99-06, US "
        "Bureau of Reclamation [from memory].",
        "[8] Temme, N.M. (1979). The asymptotic expansion of the incomplete gamma functions. SIAM Journal on "
        "Mathematical Analysis 10(4), 757–766.",
        "[9] Fritsch, F.N. and Carlson, R.E. (1980). Monotone piecewise cubic interpolation. SIAM Journal on "
        "Numerical Analysis 17(2), 238–246.",
    ]
    if with_sensitivity:
        refs.append(
            "[10] Saltelli, A., Ratto, M., Andres, T., Campolongo, F., Cariboni, J., Gatelli, D., Saisana, M. "
            "and Tarantola, S. (2008). Global Sensitivity Analysis: The Primer. Wiley."
        )
    blocks += [Block("p", "References:"), Block("list", items=tuple(refs))]
    return blocks
