"""`riskcalc run`: the whole risk chain on a scenario, and the headline table it prints."""

from __future__ import annotations

from pathlib import Path

import typer

from ..outputs.labels import (
    HEADLINE_KEYS,
    caution_line,
    fmt_aep,
    fmt_num,
    fmt_percent,
    fmt_quantity,
    fmt_ratio,
    fmt_return_period,
    output_label,
    unit_text,
)


def headline_lines(summary: dict) -> list[str]:
    """The headline table printed at the end of a run, from the summary.json structure."""
    cur = summary["units"]["currency"]
    outs = [output_label(k) for k in HEADLINE_KEYS]
    w = max(len(o.text(cur)) for o in outs) + 2
    lines = [f"{'':{w}}{'predictive':>13}{'mode':>13}{'median':>13}{'5-95 % of ensemble':>26}{'pred/mode':>11}"]
    for o in outs:
        h = summary[o.key]
        e = h["ensemble"]
        band = f"{o.fmt(e['p05'])} to {o.fmt(e['p95'])}"
        lines.append(
            f"{o.text(cur):{w}}{o.fmt(h['predictive']):>13}{o.fmt(h['mode']):>13}"
            f"{o.fmt(h['median_curve']):>13}{band:>26}{fmt_ratio(h['ratio_predictive_to_mode']):>11}"
        )
    h = summary["annual_failure_probability"]
    r, r_h = h["ratio_predictive_to_mode"], h.get("ratio_hazard_only")
    if r_h is not None and r is not None and abs(r_h - r) > 1e-9 * abs(r):
        lines.append(f"AFP pred/mode with the hazard ensemble alone (nominal response): {fmt_ratio(r_h)}")
    c = summary["mode_understatement"]["crest_check"]
    m = c["mode"]
    p = m["aep_on_predictive"]
    if p:
        lines.append(
            f"A crest set at the mode curve's {fmt_aep(c['design_aep'])} stage ({fmt_quantity(m['stage'], 'stage')} "
            f"{unit_text(summary['units'].get('stage'))}) would be exceeded with AEP {fmt_num(p)} on the predictive "
            f"curve (about once in {fmt_return_period(p)} years, not once in {fmt_return_period(c['design_aep'])}); "
            f"chance of at least one exceedance in {c['years']} years: "
            f"{fmt_percent(m['chance_in_years_predictive'])}, not {fmt_percent(m['chance_in_years_nominal'])}."
        )
    cs = summary["mode_understatement"].get("crest_stage_check")
    if cs:
        lines.append(
            f"The crest ({fmt_quantity(cs['crest_stage'], 'stage')} {unit_text(summary['units'].get('stage'))}) is "
            f"reached with AEP {fmt_num(cs['aep_predictive'])} on the predictive curve and {fmt_num(cs['aep_mode'])} "
            f"on the mode curve (ratio {fmt_ratio(cs['ratio_predictive_to_mode'])}); chance of reaching it at least once "
            f"in {cs['years']} years {fmt_percent(cs['chance_in_years_predictive'], sig=2)} (mode curve: "
            f"{fmt_percent(cs['chance_in_years_mode'], sig=2)})."
        )
    lines += loading_lines(summary)
    for x in summary.get("individual_risk") or []:
        lines.append(
            f"Individual risk, {x['name']}: {fmt_num(x['predictive'])} per year predictive, {fmt_num(x['mode'])} "
            f"on the mode curves (5-95 %: {fmt_num(x['p05'])} to {fmt_num(x['p95'])})."
        )
    return lines


def loading_lines(summary: dict) -> list[str]:
    """Where the risk comes from: the predictive figures of every loading and its share of the total."""
    loads = summary.get("loadings")
    if not loads:
        return []
    cur = summary["units"]["currency"]
    outs = [output_label(k) for k in HEADLINE_KEYS]
    w = max(len(n) for n in loads) + 2
    head = "".join(f"{o.axis(cur):>24}" for o in outs)
    lines = ["Where the risk comes from (predictive; share of the total):", f"{'loading':{w}}{head}"]
    order = list(dict.fromkeys(r["loading"] for r in summary["total"]["breakdown"])) or list(loads)
    for name in order:
        d = loads[name]
        cells = ""
        for o in outs:
            v, t = d[o.key]["predictive"], summary[o.key]["predictive"]
            share = f" ({fmt_percent(v / t)})" if t > 0 else ""
            cells += f"{o.fmt(v) + share:>24}"
        lines.append(f"{name:{w}}{cells}")
    comb = summary["total"]["annual_failure_probability_combination"]
    lines.append(
        f"Total AFP: sum over loadings {fmt_num(comb['rare_event_sum'])}; independent loadings "
        f"{fmt_num(comb['independent'])}; bounds {fmt_num(comb['lower_bound'])} to {fmt_num(comb['upper_bound'])}."
    )
    return lines


def accuracy_lines(summary: dict) -> list[str]:
    """The grid error beside the Monte Carlo standard error of each headline figure (from summary.json)."""
    g = summary.get("grid_error")
    if not g:
        return []
    parts = []
    for o in (output_label(k) for k in HEADLINE_KEYS):
        d = g.get(o.key) or {}
        mc = d.get("relative_monte_carlo_standard_error")
        parts.append(
            f"{o.short} {fmt_percent(d.get('relative_largest', 0.0), sig=2)} (MC {'n/a' if mc is None else fmt_percent(mc, sig=2)})"
        )
    how = "chosen adaptively" if g.get("choice") == "adaptive" else "as given"
    return [
        ("Accuracy of the flood loading, share" if summary.get("loadings") else "Accuracy, share")
        + f" of each figure: grid error (Richardson, {g['grid_points']} points {how}) "
        + ", ".join(parts)
        + f"; target {fmt_percent(g['target_relative'], sig=2)} of each figure."
    ]


def run(
    scenario: Path = typer.Argument(..., help="Scenario file (.toml)."),
    out: Path = typer.Option(..., "--out", "-o", help="Output directory (created; replaced only with --overwrite)."),
    overwrite: bool = typer.Option(False, help="Replace a non-empty output directory."),
    workers: int = typer.Option(0, help="Threads for the Monte Carlo (0: the machine's cores, at most 4)."),
    quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress bar; print only the output path."),
    xlsx: bool = typer.Option(
        False, "--xlsx", help="Also write results.xlsx: one sheet a table (summary, per draw, F-N, breakdowns)."
    ),
):
    """Run the whole risk chain on a scenario: AFP, EAD, ALL, F-N, mean versus mode.

    Example:

        riskcalc run scenarios/amberlow_levee/scenario.toml --out out/amberlow

    writes out/amberlow/summary.json, tables/*.csv, figures/*.png|svg and the memo, and prints the
    headline table with the caution. A scenario whose [sensitivity] table says enabled = true also gets
    the Sobol indices (as `riskcalc sensitivity`); one with [[alternatives]] and [economics] also gets
    the comparison (as `riskcalc compare`) and its memo section.
    """
    from ..progress import progress_group
    from ..workflows import run_scenario

    with progress_group(enabled=not quiet) as bar:
        result = run_scenario(
            scenario,
            out,
            overwrite=overwrite,
            workers=workers or None,
            progress=bar("Monte Carlo chunks"),
            sobol_progress=bar("Sobol model runs"),
            figure_progress=bar("figures"),
            xlsx=xlsx,
        )
    s = result.summary()
    if not quiet:
        from ..decision.reference_checks import reference_checks, summary_line

        typer.echo(s["title"])
        for line in headline_lines(s):
            typer.echo(line)
        for line in accuracy_lines(s):
            typer.echo(line)
        typer.echo(summary_line(s.get("reference_lines") or reference_checks(result)))
        for w in s["warnings"]:
            typer.echo(f"warning: {w}")
        typer.echo(caution_line())
    memo = Path(out) / "memo.html"
    typer.echo(f"results: {out}/" + (f"  memo: {memo}" if memo.exists() else ""))
