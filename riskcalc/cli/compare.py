"""`riskcalc compare`: alternatives against the without-project condition on the shared hazard."""

from __future__ import annotations

from pathlib import Path

import typer

from ..outputs.labels import caution_line, currency_text, fmt_money, fmt_ratio


def ranking_lines(comparison) -> list[str]:
    """The short ranking table printed after a comparison."""
    cur = currency_text(comparison.scenario.units["currency"])
    lines = [f"{'rank':>4}  {'alternative':30}{f'net benefit [{cur}/yr]':>24}{'BCR':>7}{'BCR 5-95 %':>14}"
             f"{'BCR mode':>10}{'rank mode':>11}"]
    r = comparison.ranking
    for i, n in enumerate(r["predictive"], start=1):
        f = comparison.figures[n]
        b = f["benefit_cost_ratio"]
        band = f"{fmt_ratio(b['ensemble']['p05'])}-{fmt_ratio(b['ensemble']['p95'])}"
        lines.append(f"{i:>4}  {n[:30]:30}{fmt_money(f['net_benefit_per_yr']['predictive']):>24}"
                     f"{fmt_ratio(b['predictive']):>7}{band:>14}{fmt_ratio(b['mode']):>10}{r['mode'].index(n) + 1:>11}")
    if r["changes_between_predictive_and_mode"]:
        lines.append("The ranking CHANGES on the mode curve: " + ", ".join(r["mode"]))
    else:
        lines.append("The ranking is the same on the mode curve.")
    if r["justified_predictive"] != r["justified_mode"]:
        lines.append(f"Positive net benefit: {', '.join(r['justified_predictive']) or 'none'} (predictive); "
                     f"{', '.join(r['justified_mode']) or 'none'} (mode curve).")
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
    for note in c.notes:
        typer.echo(f"note: {note}")
    typer.echo(caution_line())
    typer.echo(f"results: {out}/")
