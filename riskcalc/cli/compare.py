"""`riskcalc compare`: alternatives against the without-project condition on the shared hazard."""

from __future__ import annotations

from pathlib import Path

import typer

from ..outputs.labels import caution_line, currency_text, fmt_money, fmt_num, fmt_ratio


def _year(y) -> str:
    return "base year" if y is None else str(y)


def ranking_lines(comparison) -> list[str]:
    """The short ranking table printed after a comparison: economic only, with each alternative's life-loss
    reduction per condition year (not discounted) beside the money."""
    cur = currency_text(comparison.scenario.units["currency"])
    years = [_year(y) for y in comparison.settings.years]
    red = "".join(f"{f'ALL red. {y}':>16}" for y in years)
    lines = [
        "Ranking by net benefit: economic only; it does not rank life safety (see the reference lines below).",
        f"{'rank':>4}  {'alternative':30}{f'net benefit [{cur}/yr]':>24}{'BCR':>7}{'BCR 5-95 %':>14}"
        f"{'BCR mode':>10}{'rank mode':>11}{red}",
    ]
    r = comparison.ranking
    for i, n in enumerate(r["predictive"], start=1):
        f = comparison.figures[n]
        b = f["benefit_cost_ratio"]
        band = f"{fmt_ratio(b['ensemble']['p05'])}-{fmt_ratio(b['ensemble']['p95'])}"
        reds = "".join(f"{fmt_num(y['all_reduction_lives_per_yr']['predictive']):>16}" for y in f["condition_years"])
        lines.append(
            f"{i:>4}  {n[:30]:30}{fmt_money(f['net_benefit_per_yr']['predictive']):>24}"
            f"{fmt_ratio(b['predictive']):>7}{band:>14}{fmt_ratio(b['mode']):>10}{r['mode'].index(n) + 1:>11}"
            f"{reds}"
        )
    lines.append("ALL red. = reduction in annualized life loss [lives/yr] in that condition year, not discounted.")
    if r["changes_between_predictive_and_mode"]:
        lines.append("The ranking CHANGES on the mode curve: " + ", ".join(r["mode"]))
    else:
        lines.append("The ranking is the same on the mode curve.")
    if r["justified_predictive"] != r["justified_mode"]:
        lines.append(
            f"Positive net benefit: {', '.join(r['justified_predictive']) or 'none'} (predictive); "
            f"{', '.join(r['justified_mode']) or 'none'} (mode curve)."
        )
    return lines


def reference_line_lines(comparison) -> list[str]:
    """Each plan's position against the reference lines, per condition year (not discounted)."""
    from ..outputs.comparison import _by_year, _lines_note, position_text

    lines = [
        "Reference lines per condition year (AFP and life loss not discounted; share = weighted share of the "
        "draws above the line):",
        _lines_note(comparison),
    ]
    for y, name in _by_year(comparison):
        cnt = y["reference_lines_counts"]
        head = (
            f"  {name}, {_year(y['year'])}: AFP {fmt_num(y['afp_per_yr']['predictive'])} per year, "
            f"ALL {fmt_num(y['all_lives_per_yr']['predictive'])} lives/yr"
        )
        if "all_reduction_lives_per_yr" in y:
            head += f" (reduction {fmt_num(y['all_reduction_lives_per_yr']['predictive'])})"
        head += (
            f"; above {cnt['predictive']['above']} of {cnt['lines_assessed']} lines (mode curve: "
            f"{cnt['mode']['above']})"
        )
        lines.append(head)
        for k in y["reference_lines"]:
            if k["kind"] != "individual_risk":
                lines.append(f"      {k['line']}: {position_text(k)}")
    lines.append("Individual risk is not assessed for the alternatives (see the run's [[individual_risk]] groups).")
    return lines


def compare(
    scenario: Path = typer.Argument(..., help="Scenario file (.toml) with [[alternatives]] and [economics]."),
    out: Path = typer.Option(..., "--out", "-o", help="Output directory (created; replaced only with --overwrite)."),
    overwrite: bool = typer.Option(False, help="Replace a non-empty output directory."),
    workers: int = typer.Option(0, help="Threads for the Monte Carlo (0: the machine's cores, at most 4)."),
):
    """Compare alternatives with the without-project condition: benefits, costs, BCR, mean versus mode.

    Example:

        riskcalc compare scenarios/amberlow_alternatives/scenario.toml --out out/alternatives

    writes out/alternatives/comparison.json, comparison.md, tables/alternatives.csv,
    tables/paired_differences.csv and figures/benefit_distributions.png|svg, and prints the ranking.
    """
    from ..workflows import compare_workflow

    sc, c = compare_workflow(scenario, out, overwrite=overwrite, workers=workers or None)
    typer.echo(sc.title)
    for line in ranking_lines(c):
        typer.echo(line)
    for line in reference_line_lines(c):
        typer.echo(line)
    for note in c.notes:
        typer.echo(f"note: {note}")
    typer.echo(caution_line())
    typer.echo(f"results: {out}/")
