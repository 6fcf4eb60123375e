"""`riskcalc portfolio`: many scenarios, serial or on dask.distributed."""

from __future__ import annotations

from pathlib import Path

import typer

from ..outputs.labels import caution_line, currency_text, fmt_money, fmt_num, fmt_ratio


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
    from ..portfolio import run_portfolio
    from ..progress import progress_bar

    with progress_bar("scenarios", enabled=not quiet) as update:
        table = run_portfolio(paths, out, workers=workers, scheduler=scheduler, overwrite=overwrite, progress=update)
    if not quiet:
        for r in table.itertuples(index=False):
            if r.status == "ok":
                typer.echo(f"{r.scenario:28} AFP {fmt_num(r.afp_predictive_per_yr)} (mode {fmt_num(r.afp_mode_per_yr)}, "
                           f"x{fmt_ratio(r.afp_ratio)})  EAD {fmt_money(r.ead_predictive_per_yr)} "
                           f"{currency_text(r.currency)}/yr  ALL {fmt_num(r.all_predictive_lives_per_yr)} lives/yr")
            else:
                typer.echo(f"{r.scenario:28} {r.status}: {r.error}")
        typer.echo(caution_line())
    failed = int((table["status"] != "ok").sum())
    typer.echo(f"portfolio: {len(table) - failed} of {len(table)} scenarios ran; table: {out}/portfolio.csv")
