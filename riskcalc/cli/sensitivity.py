"""`riskcalc sensitivity`: which uncertainty drives the risk, and the mean-mode gap by source."""

from __future__ import annotations

from pathlib import Path

import typer

from ..outputs.labels import caution_line, fmt_ratio, output_label


def sensitivity(
    scenario: Path = typer.Argument(..., help="Scenario file (.toml)."),
    out: Path = typer.Option(..., "--out", "-o", help="Output directory (created; replaced only with --overwrite)."),
    n: int = typer.Option(
        None,
        "--n",
        help="First base sample size N, a power of two (default: [sensitivity].n or 1024); it doubles until every "
        "half-width is below the target unless [sensitivity].grow = false.",
    ),
    seed: int = typer.Option(None, "--seed", help="Positive seed (default: [sensitivity].seed or the scenario's)."),
    second_order: bool = typer.Option(False, "--second-order", help="Also estimate second-order indices."),
    target_width: float = typer.Option(
        None, "--target-width", help="Double N until every interval half-width is below this (default 0.1, e.g. 0.05)."
    ),
    morris: bool = typer.Option(False, "--morris", help="Also run Morris screening."),
    overwrite: bool = typer.Option(False, help="Replace a non-empty output directory."),
    workers: int = typer.Option(0, help="Worker threads (0: the machine's cores, at most 4)."),
):
    """Sobol' indices of AFP, EAD and ALL, and the mean-mode gap by source of uncertainty.

    Example:

        riskcalc sensitivity scenarios/amberlow_levee/scenario.toml --out out/amberlow_sens --n 1024

    writes out/amberlow_sens/sensitivity.json, tables/sobol_indices.csv,
    tables/mean_mode_gap_by_source.csv and figures/sensitivity_indices.png|svg, and prints the
    ranked indices. Settings come from the scenario's [sensitivity] table; the options here override it.
    """
    from ..workflows import sensitivity_workflow

    result, report = sensitivity_workflow(
        scenario,
        out,
        n=n,
        seed=seed,
        second_order=second_order,
        target_width=target_width,
        morris=morris,
        overwrite=overwrite,
        workers=workers or None,
    )
    cur = result.scenario.units["currency"]
    for key, r in report.sobol.items():
        typer.echo(f"{output_label(key).short} (N = {r.n}, {r.n_evaluations:,} model runs)")
        if r.note:
            typer.echo(f"  {r.note}")
            continue
        typer.echo(f"  {'factor':40}{'S1':>8}{'+/-':>8}{'ST':>8}{'+/-':>8}")
        order = sorted(range(len(r.factors)), key=lambda i: -(r.ST[i] if r.ST[i] == r.ST[i] else -1))
        for i in order:
            typer.echo(
                f"  {r.factors[i][:40]:40}{fmt_ratio(r.S1[i]):>8}{fmt_ratio(r.S1_conf[i]):>8}"
                f"{fmt_ratio(r.ST[i]):>8}{fmt_ratio(r.ST_conf[i]):>8}"
            )
    typer.echo("mean-mode gap by source (predictive - mode):")
    for row in report.gap.itertuples(index=False):
        o = output_label(row.output)
        typer.echo(
            f"  {row.source:13}{o.short:>4} {o.fmt(row.gap):>12} {o.unit_text(cur):<10} ratio {fmt_ratio(row.ratio)}"
        )
    for w in report.warnings:
        typer.echo(f"warning: {w}")
    typer.echo(f"results: {out}/")
    typer.echo(caution_line())
