"""`riskcalc hazard`: the hazard step on its own."""

from __future__ import annotations

from pathlib import Path

import typer

from ..errors import InputError
from . import CAUTION, _fmt, app


@app.command()
def hazard(
    ensemble: Path = typer.Argument(..., help="Ensemble table (.csv or .xlsx): parameter sets, or a long curve table."),
    family: str = typer.Option(..., "--family", "-f",
                               help="lp3, gev, gumbel, lognormal, normal; or 'table' for a curve table."),
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

    writes out/hazard/hazard_by_discharge.csv, hazard_by_aep.csv and
    figures/hazard_ensemble.png|svg, and prints the standard-AEP table.
    """
    from ..workflows import hazard_step

    if quantity not in ("discharge", "stage"):
        raise InputError(f"--quantity '{quantity}' is not known; expected discharge or stage", key="--quantity")
    curves, table = hazard_step(ensemble, family, out, quantity=quantity, unit=unit, level=level,
                                aep_max=aep_max, aep_min=aep_min, n_grid=grid, overwrite=overwrite)
    typer.echo(curves.mode_note)
    lo, hi = curves.band_names
    head = f"{'AEP':>8} {'1 in':>7} {'mode':>12} {'median':>12} {'predictive':>12} {lo:>12} {hi:>12}"
    typer.echo(head)
    for row in table.itertuples(index=False):
        typer.echo(f"{row[0]:>8g} {row[1]:>7,.0f} " + " ".join(f"{_fmt(v):>12}" for v in row[2:]))
    typer.echo(f"wrote {out}/")
    typer.echo(CAUTION)


