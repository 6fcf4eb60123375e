"""The decision memo: ``memo.md`` and ``memo.html`` from a finished run's files.

The memo is rendered from what a run writes (``summary.json``, ``tables/*.csv``
and ``figures/*.png``), never from live objects, so :func:`write_memo` (inside
a run) and :func:`rebuild_memo` (``riskcalc memo OUTDIR``) give the same text.
:func:`write_memo` first adds the one table the memo needs that the run does
not already write, ``tables/tolerable_risk.csv`` (each reference line against
the predictive and mode results), and ``memo_sections.json`` when other
stages contribute sections (``result.extras["memo_sections"]``).

Both formats come from one list of sections, so the Markdown and the HTML
hold the same numbers. The HTML is one self-contained file: figures are
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
import html
import json
import math
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import InputError

__all__ = ["write_memo", "rebuild_memo", "tolerable_risk_table", "render_memo", "HEADLINE_ROWS"]

#: Headline rows: summary key, label, unit text (``{cur}`` is the currency), number format.
HEADLINE_ROWS = (
    ("annual_failure_probability", "Annual failure probability (AFP)", "1/yr", "num"),
    ("expected_annual_damage", "Expected annual damage (EAD)", "{cur}/yr", "money"),
    ("annualized_life_loss", "Annualized life loss (ALL)", "lives/yr", "num"),
)

#: Captions of the run figures, by file stem (in memo order).
FIGURE_CAPTIONS = {
    "hazard_ensemble": "Hazard ensemble on probability paper: members (grey), the predictive curve (mean AEP at "
                       "fixed discharge), the mode and median curves and the credible band.",
    "aep_at_design_discharge": "Annual exceedance probability of one flood, the mode curve's design flood, under "
                               "every realization. Their weighted mean is the predictive AEP of that flood.",
    "response_curves": "Rating (peak stage against peak discharge) and system response (probability of failure "
                       "given stage, per failure mode and for the system).",
    "consequence_curves": "Consequences against peak stage: damage and life loss given breach and given no breach.",
    "risk_distributions": "AFP, EAD and ALL of every Monte Carlo draw (weighted), with the predictive value and the "
                          "mode-curve value marked.",
    "fn_chart": "F-N curve (annual probability of N or more fatalities) and f-N point against the reference lines.",
    "risk_by_aep_band": "Where the risk comes from: share of the predictive AFP, EAD and ALL from floods in each AEP "
                        "band.",
    "sensitivity_indices": "Sobol first-order and total sensitivity indices with their confidence intervals.",
}

MEMO_SECTIONS_FILE = "memo_sections.json"
TOLERABLE_TABLE = "tolerable_risk.csv"

CAUTION = ("These results are screening support for qualified, licensed engineers; they support, and never "
           "replace, their judgment and the governing codes. The tolerable-risk lines shown are defaults from "
           "published guidance (or the lines given in the scenario): the governing agency's current policy and "
           "local codes decide which apply. The results are only as good as the inputs and the failure modes "
           "considered.")


# --------------------------------------------------------------------------
# Formatting
# --------------------------------------------------------------------------
def fmt_num(v) -> str:
    """Three significant figures (``0.00873``, ``1.12e-05``); ``n/a`` for None or NaN."""
    if v is None or not math.isfinite(float(v)):
        return "n/a"
    return f"{float(v):.3g}"


def fmt_money(v) -> str:
    """Whole currency units with thousands separators (``1,227,087``)."""
    if v is None or not math.isfinite(float(v)):
        return "n/a"
    v = float(v)
    return f"{v:,.0f}" if abs(v) >= 100 else f"{v:.3g}"


def _fmt(v, kind):
    return fmt_money(v) if kind == "money" else fmt_num(v)


def _ratio(v) -> str:
    if v is None or not math.isfinite(float(v)):
        return "n/a"
    return f"{float(v):.2f}"


def _once_in(p) -> str:
    return f"{1 / p:,.0f}" if p and p > 0 else "n/a"


def _pct(p) -> str:
    return f"{100 * p:.0f} %"


def _aep_text(p) -> str:
    return f"{100 * p:g} %" if p >= 1e-3 else f"{p:g}"


_UNITS = {"m3s": "m³/s", "cfs": "ft³/s", "m": "m", "ft": "ft"}


# --------------------------------------------------------------------------
# The document: sections of blocks, rendered to Markdown and HTML
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class Block:
    """One block of the memo. ``kind``: p, caution, table, list, figure, eq, raw."""

    kind: str
    text: str = ""
    header: tuple = ()
    rows: tuple = ()
    items: tuple = ()
    css: str = ""
    figure: str = ""
    number: int = 0
    markdown: str = ""
    html: str = ""


@dataclass(frozen=True)
class Section:
    title: str
    anchor: str
    blocks: tuple = field(default_factory=tuple)
    new_page: bool = True


def _md_escape(s) -> str:
    """Markdown-safe text: backslash-escape the characters that start markup or raw HTML."""
    return re.sub(r"([\\`*_\[\]<>|#&])", r"\\\1", str(s))


def _h(s) -> str:
    return html.escape(str(s), quote=True)


_NUMBER = re.compile(r"^[-+]?[\d,]*\.?\d+(e[-+]?\d+)?( ± [\d.]+)?$|^n/a$")


def _numeric_columns(b: Block) -> list[bool]:
    """True for a column whose non-empty cells are all numbers (right-aligned); the first column never is."""
    out = []
    for j in range(len(b.header)):
        cells = [str(r[j]) for r in b.rows if j < len(r) and str(r[j]).strip()]
        out.append(j > 0 and bool(cells) and all(_NUMBER.match(c) for c in cells))
    return out


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
    if b.kind == "figure":
        cap = f"Figure {b.number}. {b.text}"
        return f"![{_md_escape(cap)}](figures/{b.figure}.png)\n\n*{_md_escape(cap)}* (also `figures/{b.figure}.svg`)"
    if b.kind == "raw":
        return b.markdown.strip()
    raise ValueError(f"unknown block kind {b.kind!r}")


def _html_block(b: Block, images: dict) -> str:
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
        body = "\n".join("<tr>" + "".join(f"<td{k}>{_h(c)}</td>" for k, c in zip(cls, r)) + "</tr>"
                         for r in b.rows)
        return f'<table class="{_h(b.css)}">\n<thead><tr>{head}</tr></thead>\n<tbody>\n{body}\n</tbody>\n</table>'
    if b.kind == "figure":
        cap = f"Figure {b.number}. {b.text}"
        data = images.get(b.figure)
        img = (f'<img src="data:image/png;base64,{data}" alt="{_h(cap)}">' if data else
               f'<p class="missing">figure file {_h(b.figure)}.png is missing</p>')
        return f'<figure id="fig-{_h(b.figure)}">\n{img}\n<figcaption>{_h(cap)}</figcaption>\n</figure>'
    if b.kind == "raw":
        return b.html.strip()
    raise ValueError(f"unknown block kind {b.kind!r}")


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
figure { margin: 18px 0 22px; }
figure img { width: 100%; height: auto; border: 1px solid #e3e3e3; }
figcaption { font-size: 13px; color: var(--muted); margin-top: 4px; }
pre.eq { background: #f6f7f9; border: 1px solid #e1e4e8; padding: 10px 12px; font-size: 13px; white-space: pre-wrap; }
nav.toc ol { columns: 2; font-size: 14px; }
nav.toc a { color: var(--accent); text-decoration: none; }
.missing { color: var(--warn); }
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
    """Markdown and HTML text of a memo from its sections (``images``: stem -> base64 PNG in each figure block).

    Returns
    -------
    markdown, html : str
    """
    images = {}
    for s in sections:
        for b in s.blocks:
            if b.kind == "figure" and b.html:
                images[b.figure] = b.html
    md = [f"# {_md_escape(title)}", "", _md_escape(subtitle), ""]
    md += ["Contents: " + " · ".join(f"{k}. {s.title}" for k, s in enumerate(sections, 1)), ""]
    for k, s in enumerate(sections, 1):
        md += [f"## {k}. {_md_escape(s.title)}", ""]
        for b in s.blocks:
            md += [_md_block(b), ""]
    toc = "\n".join(f'<li><a href="#{s.anchor}">{_h(s.title)}</a></li>' for s in sections)
    body = []
    for k, s in enumerate(sections, 1):
        cls = "page" if (s.new_page and k > 1) else "first"
        body.append(f'<section id="{s.anchor}" class="{cls}">\n<h2>{k}. {_h(s.title)}</h2>\n' +
                    "\n".join(_html_block(b, images) for b in s.blocks) + "\n</section>")
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
_KIND_TEXT = {"fn_limit": "F-N limit line", "life_loss": "annualized life loss line",
              "probability": "annual failure probability line"}


def _definition(line) -> str:
    if line.kind == "fn_limit":
        rng = f"{line.n_min:g} ≤ N ≤ {line.n_max:g}" if math.isfinite(line.n_max) else f"N ≥ {line.n_min:g}"
        return f"F = {line.anchor_f:g} × (N / {line.anchor_n:g})^{line.slope:g}, {rng}"
    if line.kind == "life_loss":
        return f"f × N = {line.value:g} lives/yr"
    if line.measure == "individual_risk":
        return f"individual risk {line.value:g} per year"
    return f"AFP = {line.value:g} per year"


def tolerable_risk_table(result, guidelines=None):
    """Each reference line against the predictive and mode results, as a tidy table.

    An annual failure probability line is compared with AFP; a life-loss line
    with the f-N point (AFP, ALL_inc / AFP), where ALL_inc = Σ P_f (L_breach −
    L_no_breach) m is the life loss caused by failure; an F-N limit line with
    the F-N curve (its largest ratio, :func:`riskcalc.guidelines.check_fn_curve`).
    Individual-risk lines get a row saying they are not assessed.

    Returns
    -------
    pandas.DataFrame
        Columns ``reference_line, source, kind, definition, compared_with,
        curve, computed_per_yr, limit_per_yr, ratio, exceeds, n_lives``.
    """
    import pandas as pd

    from ..decision.guidelines import check_fn_curve, check_point, check_value, evaluate_line
    from .figures import scenario_guidelines

    gs = guidelines if guidelines is not None else scenario_guidelines(result.scenario)
    rows = []
    curves = (("predictive", result.values_predictive, result.fn["predictive"]),
              ("mode", result.values_mode, result.fn["mode"]))
    levels = np.asarray(result.fn["levels"], float)
    for ln in gs.lines:
        base = {"reference_line": ln.name, "source": ln.source, "kind": _KIND_TEXT[ln.kind], "definition": _definition(ln)}
        if ln.kind == "probability" and not ln.on_chart:
            rows.append({**base, "kind": "individual risk line",
                         "compared_with": "not assessed (riskcalc does not compute individual risk)",
                         "curve": "", "computed_per_yr": np.nan, "limit_per_yr": ln.value, "ratio": np.nan,
                         "exceeds": "", "n_lives": np.nan})
            continue
        for curve, v, fn in curves:
            afp, all_inc = float(v["afp"]), max(0.0, float(v["all_incremental"]))
            if ln.kind == "probability":
                comp, limit, ratio, n = afp, ln.value, float(check_value(ln, afp)), np.nan
                what = "AFP"
            elif ln.kind == "life_loss":
                pc = check_point(ln, afp, all_inc)
                comp, limit, ratio, n = afp, float(pc.limit), float(pc.ratio), float(pc.n)
                what = "f-N point (AFP at N = ALL_inc / AFP)"
            else:
                cc = check_fn_curve(ln, levels, np.asarray(fn, float))
                ratio, n = float(cc.max_ratio), float(cc.n_at_max)
                limit = float(evaluate_line(ln, n)) if math.isfinite(n) else np.nan
                comp = ratio * limit if math.isfinite(ratio) else np.nan
                what = "F-N curve (largest ratio)"
            rows.append({**base, "compared_with": what, "curve": curve, "computed_per_yr": comp,
                         "limit_per_yr": limit, "ratio": ratio,
                         "exceeds": "" if not math.isfinite(ratio) else ("yes" if ratio > 1 else "no"),
                         "n_lives": n})
    return pd.DataFrame(rows, columns=["reference_line", "source", "kind", "definition", "compared_with", "curve",
                                       "computed_per_yr", "limit_per_yr", "ratio", "exceeds", "n_lives"])


def write_memo(result, outdir) -> list[Path]:
    """Write ``memo.md`` and ``memo.html`` for a run whose summary, tables and figures are in ``outdir``.

    Adds ``tables/tolerable_risk.csv`` (and ``memo_sections.json`` when
    ``result.extras["memo_sections"]`` holds sections), then renders the memo
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
        clean = [{"title": str(s.get("title", "")), "markdown": str(s.get("markdown", "")),
                  "html": str(s.get("html", "")), "figures": [str(f) for f in s.get("figures", []) or []]}
                 for s in extra]
        write_json(outdir / MEMO_SECTIONS_FILE, clean)
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
        raise InputError("summary.json not found; expected the output directory of a finished `riskcalc run`",
                         outdir)
    try:
        summary = json.loads(sp.read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"is not valid JSON ({exc})", sp) from None
    for key, *_ in HEADLINE_ROWS:
        if not isinstance(summary.get(key), dict):
            raise InputError("missing headline figure; expected a summary.json written by `riskcalc run`", sp,
                             key=key)
    extra = []
    xp = outdir / MEMO_SECTIONS_FILE
    if xp.exists():
        try:
            extra = json.loads(xp.read_text(encoding="utf-8"))
        except json.JSONDecodeError as exc:
            raise InputError(f"is not valid JSON ({exc})", xp) from None
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


def memo_sections(summary: dict, tolerable: list[dict], images: dict, extra=()) -> tuple[str, str, list]:
    """The memo's title, subtitle and sections from the run's files (see :func:`rebuild_memo`)."""
    prov = summary.get("provenance", {}) or {}
    settings = prov.get("settings", {}) or {}
    units = summary.get("units", {}) or {}
    cur = str(units.get("currency", "")).upper()
    var = settings.get("hazard_variable", "discharge")
    var_unit = _UNITS.get(units.get("discharge" if var == "discharge" else "stage"), "")
    stage_unit = _UNITS.get(units.get("stage"), "")
    title = f"Decision memo: {summary.get('title', 'untitled scenario')}"
    subtitle = (f"Run of {prov.get('date', 'unknown date')} with riskcalc {prov.get('riskcalc_version', '?')}; "
                f"scenario file {prov.get('scenario', '?')}; {settings.get('realizations', '?')} hazard realizations.")
    sections = []
    figure_no = [0]
    extra_figs = {Path(f).name for s in extra for f in s.get("figures", [])}

    def fig(stem, caption):
        figure_no[0] += 1
        return Block("figure", text=caption, figure=stem, number=figure_no[0], html=images.get(stem, ""))

    # 1. headline ------------------------------------------------------------
    rows = []
    for key, label, unit, kind in HEADLINE_ROWS:
        h = summary[key]
        e = h.get("ensemble", {}) or {}
        rows.append((f"{label} [{unit.format(cur=cur)}]", _fmt(h.get("predictive"), kind), _fmt(h.get("mode"), kind),
                     _fmt(h.get("median_curve"), kind), _fmt(e.get("p05"), kind), _fmt(e.get("p50"), kind),
                     _fmt(e.get("p95"), kind), _ratio(h.get("ratio_predictive_to_mode"))))
    blocks = [Block("caution", CAUTION),
              Block("table", header=("measure", "predictive", "mode curve", "median curve", "ensemble 5\u00a0%",
                                     "ensemble 50\u00a0%", "ensemble 95\u00a0%", "predictive / mode"),
                    rows=tuple(rows), css="headline")]
    afp = summary["annual_failure_probability"]
    r_afp = afp.get("ratio_predictive_to_mode")
    crest = (summary.get("mode_understatement", {}) or {}).get("crest_check", {}) or {}
    m = crest.get("mode", {}) or {}
    p_d, years = crest.get("design_aep"), crest.get("years")
    if r_afp is not None and math.isfinite(r_afp) and m.get("aep_on_predictive"):
        word = ("understates" if r_afp > 1.05 else "overstates" if r_afp < 0.95 else "matches, within 5 %,")
        blocks.append(Block("p", (
            f"What the ratio means: the single most likely (mode) curve {word} the annual failure probability "
            f"(predictive / mode = {_ratio(r_afp)}). A crest set at the mode curve's {_aep_text(p_d)} stage "
            f"({m.get('stage', float('nan')):.2f} {stage_unit}) is exceeded on average once in "
            f"{_once_in(m['aep_on_predictive'])} years on the predictive curve, not once in {_once_in(p_d)}: "
            f"the chance of at least one exceedance in {years} years is "
            f"{_pct(m.get('chance_in_years_predictive', 0))}, not {_pct(m.get('chance_in_years_nominal', 0))}.")))
    r_h = afp.get("ratio_hazard_only")
    if r_h is not None and r_afp is not None and abs(r_h - r_afp) > 1e-9 * abs(r_afp):
        blocks.append(Block("p", f"Of the AFP ratio {_ratio(r_afp)}, the hazard ensemble alone (nominal response) "
                                 f"gives {_ratio(r_h)}; the rest comes from the sampled uncertainty of the response "
                                 "and consequences, which the mode-curve analysis leaves out as well."))
    blocks.append(Block("p", "Linearity: the predictive result is the mean of the per-realization results (the "
                             "weighted mean over the ensemble), which is why the risk is integrated against the "
                             "predictive (mean) hazard curve and not the mode curve."))
    se = afp.get("mc_standard_error")
    if se is not None and afp.get("predictive"):
        blocks.append(Block("p", f"Monte Carlo standard error of the predictive AFP: {fmt_num(se)} per year "
                                 f"({100 * se / afp['predictive']:.1f} % of the value)."))
    sections.append(Section("Headline results", "headline", tuple(blocks), new_page=False))

    # 2. figures -------------------------------------------------------------
    from .figures import FIGURE_STEMS

    fblocks = []
    for stem in FIGURE_STEMS:
        if stem in images and stem not in extra_figs:
            cap = FIGURE_CAPTIONS[stem]
            if stem == "aep_at_design_discharge" and m.get(var) is not None:
                cap += (f" Here {var} {m[var]:,.0f} {var_unit}: mean AEP {fmt_num(m.get('aep_on_predictive'))} "
                        f"against {p_d:g} on the mode curve.")
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
        sblocks = [Block("p", "Sobol indices of the outputs to the uncertain inputs: the first-order index S1 is the "
                              "share of output variance from one input alone, the total index ST includes its "
                              "interactions (Saltelli et al. 2008). Intervals are the confidence half-widths.")]
        for out_key, d in sens.items():
            if not isinstance(d, dict):
                continue
            srows = []
            for factor, s in d.items():
                s = s or {}
                srows.append((factor, _pm(s.get("S1"), s.get("S1_conf")), _pm(s.get("ST"), s.get("ST_conf"))))
            sblocks.append(Block("p", f"Output: {str(out_key).replace('_', ' ')}"))
            sblocks.append(Block("table", header=("factor", "first order S1", "total ST"), rows=tuple(srows)))
        if "sensitivity_indices" in images:
            sblocks.append(fig("sensitivity_indices", FIGURE_CAPTIONS["sensitivity_indices"]))
        sections.append(Section("Sensitivity", "sensitivity", tuple(sblocks)))

    # 5. sections from other stages (alternatives, economics, ...) ------------------
    for k, s in enumerate(extra):
        bl = [Block("raw", markdown=s.get("markdown", ""), html=s.get("html", ""))]
        for f in s.get("figures", []):
            stem = Path(f).name
            if stem in images:
                bl.append(fig(stem, f"{s.get('title', '')}: {stem.replace('_', ' ')}."))
        sections.append(Section(str(s.get("title", "")) or f"Section {k + 1}",
                                f"extra-{k + 1}-{_slug(s.get('title', ''))}", tuple(bl)))

    # 6. warnings ----------------------------------------------------------------
    warns = list(summary.get("warnings", []) or [])
    wblocks = [Block("list", items=tuple(warns))] if warns else [Block("p", "The run raised no warnings.")]
    notes = [n for n in (summary.get("notes", []) or []) if not str(n).startswith("linearity:")]
    if notes:
        wblocks += [Block("p", "Notes of the run:"), Block("list", items=tuple(notes))]
    sections.append(Section("Warnings", "warnings", tuple(wblocks)))

    # 7. provenance --------------------------------------------------------------
    prow = [("riskcalc version", str(prov.get("riskcalc_version", ""))), ("run date", str(prov.get("date", ""))),
            ("Python", str(prov.get("python", ""))), ("seed", str(prov.get("seed", ""))),
            ("scenario file", str(prov.get("scenario", "")))]
    prow += [(f"setting: {k}", _setting(v)) for k, v in sorted(settings.items())]
    hashes = tuple((str(k), str(v)) for k, v in sorted((prov.get("inputs", {}) or {}).items()))
    sections.append(Section("Provenance", "provenance", (
        Block("table", header=("item", "value"), rows=tuple(prow), css="text"),
        Block("p", "SHA-256 of every input file (a changed file gives a different digest):"),
        Block("table", header=("input file", "SHA-256"), rows=hashes, css="text hash"))))

    # 8. cautions -------------------------------------------------------------------
    sections.append(Section("Cautions and limitations", "cautions", tuple(_caution_blocks(summary, stage_unit))))

    # 9. methods --------------------------------------------------------------------
    sections.append(Section("Methods appendix", "methods", tuple(_methods_blocks(bool(sens)))))
    return title, subtitle, sections


def _pm(v, conf) -> str:
    if v is None:
        return "n/a"
    return f"{v:.2f} ± {conf:.2f}" if conf is not None else f"{v:.2f}"


def _setting(v) -> str:
    if isinstance(v, float):
        return f"{v:g}"
    return str(v)


def _tolerable_blocks(tol: list[dict]) -> list[Block]:
    blocks = [Block("p", "The computed risk against tolerable-risk reference lines. Ratio = computed / line; above "
                         "1 the result lies above the line. These lines are defaults from published guidance (or "
                         "the lines the scenario gives); the governing agency's current policy applies and decides "
                         "which lines, if any, are used for a decision. Items marked [from memory] were recalled and "
                         "have not been checked against the primary document.")]
    if not tol:
        blocks.append(Block("p", "No tolerable-risk table was found (tables/tolerable_risk.csv)."))
        return blocks
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
    n_lines = 0
    for (name, what), d in by_line.items():
        p = d.get("predictive") or d.get("-")
        mo = d.get("mode", {})
        if "-" in d:
            rows.append((f"{name} {ref[p['source']]}", p["definition"], what, "", "", "", ""))
            continue
        n_lines += 1
        for c, rr in (("predictive", p), ("mode", mo)):
            if rr and rr.get("exceeds") == "yes":
                n_exceed[c] += 1
        nl = _float(p.get("n_lives"))
        where = f" at N = {nl:.3g}" if nl is not None else ""
        rows.append((f"{name} {ref[p['source']]}", p["definition"], what + where, fmt_num(_float(p["computed_per_yr"])),
                     fmt_num(_float(p["limit_per_yr"])), _ratio(_float(p["ratio"])),
                     _ratio(_float(mo.get("ratio"))) if mo else "n/a"))
    blocks.append(Block("table", header=("reference line", "definition", "compared with", "predictive [1/yr]",
                                         "line [1/yr]", "ratio (predictive)", "ratio (mode curve)"),
                        rows=tuple(rows), css="tolerable"))
    if n_lines:
        blocks.append(Block("p", f"On the predictive curve the result lies above {n_exceed['predictive']} of "
                                 f"{n_lines} comparisons; on the mode curve above {n_exceed['mode']}. The f-N point "
                                 "uses the life loss caused by failure, ALL_inc = Σ P_f (L_breach − L_no_breach) m, "
                                 "so N = ALL_inc / AFP is the average life loss given failure."))
    blocks.append(Block("p", "Sources of the lines:"))
    blocks.append(Block("list", items=tuple(f"{ref[s]} {s}" for s in sources)))
    return blocks


def _caution_blocks(summary: dict, stage_unit: str) -> list[Block]:
    modes = list((summary.get("failure_modes") or {}).keys())
    ext = summary.get("extrapolation", {}) or {}
    tr = summary.get("truncation", {}) or {}
    b = summary.get("annual_failure_probability_bounds", {}) or {}
    items = [
        f"Failure modes not modelled are not in these numbers. Modelled: {', '.join(modes) or 'none listed'}. "
        "Any other mode (for example seismic loading, failure at normal pool, gate or operational failure, "
        "debris blockage) adds risk the memo does not show.",
        f"Failure modes are combined as independent, 1 − Π(1 − P_i). If they were fully dependent the AFP would be "
        f"{fmt_num(b.get('lower_fully_dependent'))} instead of {fmt_num(b.get('upper_independent'))} per year "
        "(unimodal bounds).",
        "Consequences are held fixed in time: population, buildings, warning and evacuation are as in the "
        "consequence table, not as they may become; they depend on peak stage only, not on duration, velocity, "
        "season, time of day or breach timing.",
        "Life-loss estimates are uncertain by a factor of several even with good data; treat ALL and the F-N "
        "curve as orders of magnitude.",
        (f"Stage above the rating (or routing) table is extrapolated: "
         f"{_pct_small(ext.get('share_of_afp_beyond_rating_table'))} of the AFP comes from floods above its top "
         f"({fmt_money(ext['rating_table_top'])})." if ext.get("rating_table_top") is not None else
         "The hazard is given as peak stage, so no rating curve is used; the stage-frequency ensemble carries "
         "any rating uncertainty itself."),
        f"The hazard ensemble carries the uncertainty of the frequency analysis only; change over time (climate, "
        f"land use, upstream works) is not included unless the ensemble includes it. The predictive AEP above the "
        f"grid is {fmt_num(tr.get('aep_above_grid'))} and is counted in the top cell, not dropped.",
        "Figures and tables are only as good as the inputs: the frequency ensemble, the rating curve, the "
        "fragility curves and the consequence curves.",
        "The results support, and never replace, the judgment of qualified, licensed engineers and the governing "
        "codes; the governing agency's current policy decides which tolerable-risk lines apply.",
    ]
    return [Block("list", items=tuple(items))]


def _pct_small(v) -> str:
    if v is None:
        return "n/a"
    return f"{100 * v:.2g} %"


def _methods_blocks(with_sensitivity: bool) -> list[Block]:
    eq = "\n".join([
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
    ])
    blocks = [Block("p", "The chain, in the order it is computed. Numbers in brackets refer to the list below."),
              Block("eq", eq),
              Block("p", "Frequency families follow Bulletin 17B/17C (log-Pearson Type III frequency factors) [3, 4]; "
                         "the Pearson Type III tail for small skew uses Temme's uniform expansion [8]. Life loss "
                         "from population at risk uses fatality rates such as those suggested by Graham [7].")]
    refs = [
        "[1] Stedinger, J.R. (1983). Design events with specified flood risk. Water Resources Research 19(2), "
        "511–522.",
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
        refs.append("[10] Saltelli, A., Ratto, M., Andres, T., Campolongo, F., Cariboni, J., Gatelli, D., Saisana, M. "
                    "and Tarantola, S. (2008). Global Sensitivity Analysis: The Primer. Wiley.")
    blocks += [Block("p", "References:"), Block("list", items=tuple(refs))]
    return blocks
