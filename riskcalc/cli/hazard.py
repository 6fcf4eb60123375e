"""`riskcalc hazard`: the hazard step on its own."""

from __future__ import annotations

from pathlib import Path

import typer

from ..outputs.labels import caution_line, fmt_num, fmt_quantity, fmt_return_period, unit_text


def hazard(
    ensemble: Path = typer.Argument(..., help="Ensemble table (.csv or .xlsx): parameter sets, or a long curve table."),
    family: str = typer.Option(
        ..., "--family", "-f", help="lp3, gev, gumbel, lognormal, normal; or 'table' for a curve table."
    ),
    out: Path = typer.Option(..., "--out", "-o", help="Output directory (created; replaced only with --overwrite)."),
    quantity: str = typer.Option("discharge", help="What the ensemble describes: discharge or stage."),
    unit: str = typer.Option(None, help="Unit code of the quantity for column names: m3s, cfs, m, ft."),
    level: float = typer.Option(0.9, help="Central credible level of the band (0.9 gives p05 and p95)."),
    aep_max: float = typer.Option(0.999, help="Most frequent AEP the grid must reach."),
    aep_min: float = typer.Option(1e-7, help="Rarest AEP the grid must reach."),
    grid: int = typer.Option(2000, help="Number of grid points."),
    overwrite: bool = typer.Option(False, help="Replace a non-empty output directory."),
):
    """Predictive, mode and median frequency curves and the credible band of an ensemble.

    Example:

        riskcalc hazard scenarios/amberlow_levee/ensemble_lp3.csv --family lp3 --unit m3s --out out/hazard

    writes out/hazard/hazard_by_discharge.csv, hazard_by_aep.csv and figures/hazard_ensemble.png|svg,
    and prints the standard-AEP table. The same step runs inside `riskcalc run` from the scenario's
    [hazard] table.
    """
    from ..workflows import hazard_step

    curves, table = hazard_step(
        ensemble,
        family,
        out,
        quantity=quantity,
        unit=unit,
        level=level,
        aep_max=aep_max,
        aep_min=aep_min,
        n_grid=grid,
        overwrite=overwrite,
    )
    typer.echo(curves.mode_note)
    lo, hi = curves.band_names
    if curves.unit:
        typer.echo(f"{curves.quantity} [{unit_text(curves.unit)}] at the standard AEPs:")
    typer.echo(f"{'AEP':>8} {'1 in':>7} {'mode':>12} {'median':>12} {'predictive':>12} {lo:>12} {hi:>12}")
    for row in table.itertuples(index=False):
        typer.echo(
            f"{fmt_num(row[0]):>8} {fmt_return_period(row[0]):>7} "
            + " ".join(f"{fmt_quantity(v, curves.quantity):>12}" for v in row[2:])
        )
    typer.echo(f"wrote {out}/")
    typer.echo(caution_line(short=True))
