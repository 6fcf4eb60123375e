"""`riskcalc portfolio`: many scenarios, serial or on dask.distributed."""

from __future__ import annotations

from pathlib import Path

import typer

from ..outputs.labels import caution_line, fmt_ratio, output_label


def portfolio(
    paths: list[Path] = typer.Argument(..., help="Scenario files, folders of them, or .txt lists of them."),
    out: Path = typer.Option(..., "--out", "-o", help="Output directory: portfolio.csv and one folder a scenario."),
    workers: int = typer.Option(0, help="Start a local dask.distributed cluster of N processes (0: serial)."),
    scheduler: str = typer.Option(None, help="Join an existing dask scheduler at this address instead."),
    overwrite: bool = typer.Option(False, help="Replace a non-empty output directory."),
    quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress bar and no table."),
):
    """Run many scenarios and write one combined table.

    Example:

        riskcalc portfolio scenarios/ --out out/portfolio --workers 2

    writes out/portfolio/portfolio.csv (one row a scenario: AFP, EAD, ALL on the predictive and mode
    curves, their ratios, truncation, status and error) and each scenario's outputs in its own folder.
    A scenario that fails is listed with its error; the others still run.
    """
    from ..workflows import run_portfolio
    from ..progress import progress_bar

    with progress_bar("scenarios", enabled=not quiet) as update:
        table = run_portfolio(paths, out, workers=workers, scheduler=scheduler, overwrite=overwrite, progress=update)
    if not quiet:
        afp, ead, all_ = (output_label(k) for k in ("afp", "ead", "all"))
        for r in table.itertuples(index=False):
            if r.status == "ok":
                typer.echo(
                    f"{r.scenario:28} {afp.short} {afp.fmt(r.afp_predictive_per_yr)} "
                    f"(mode {afp.fmt(r.afp_mode_per_yr)}, x{fmt_ratio(r.afp_ratio)})  "
                    f"{ead.short} {ead.fmt(r.ead_predictive_per_yr)} {ead.unit_text(r.currency)}  "
                    f"{all_.short} {all_.fmt(r.all_predictive_lives_per_yr)} {all_.unit_text()}"
                )
            else:
                typer.echo(f"{r.scenario:28} {r.status}: {r.error}")
        typer.echo(caution_line())
    failed = int((table["status"] != "ok").sum())
    typer.echo(f"portfolio: {len(table) - failed} of {len(table)} scenarios ran; table: {out}/portfolio.csv")
