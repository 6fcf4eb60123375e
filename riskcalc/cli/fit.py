"""`riskcalc fit`: a Bayesian frequency analysis of an annual-peak record."""

from __future__ import annotations

from pathlib import Path

import typer

from ..outputs.labels import caution_line, fmt_num, fmt_quantity, fmt_return_period, unit_text


def fit(
    peaks: Path = typer.Argument(
        ..., help="Annual peaks (.csv or .xlsx): year, peak (e.g. peak_m3s), optional peak_lower and peak_upper."
    ),
    family: str = typer.Option(..., "--family", "-f", help="lp3, gev, gumbel, lognormal or normal."),
    out: Path = typer.Option(..., "--out", "-o", help="Output directory (created; replaced only with --overwrite)."),
    thresholds: Path = typer.Option(
        None, help="Perception-threshold periods (.csv or .xlsx): start_year, end_year, threshold (e.g. threshold_m3s)."
    ),
    draws: int = typer.Option(4000, help="Posterior draws to keep (100 to 1000000)."),
    seed: int = typer.Option(20240601, help="Seed of the sampler; the same seed gives the same draws."),
    shape_prior: str = typer.Option(
        "geophysical", help="GEV shape prior: geophysical (Martins and Stedinger 2000) or flat."
    ),
    regional_skew: float = typer.Option(None, help="LP3: regional skew, the mean of a normal prior on the skew."),
    regional_skew_mse: float = typer.Option(None, help="LP3: mean squared error of the regional skew."),
    quantity: str = typer.Option("discharge", help="What the peaks are: discharge or stage."),
    sheet: str = typer.Option(None, help="Sheet of an .xlsx peaks file (default: the first)."),
    overwrite: bool = typer.Option(False, help="Replace a non-empty output directory."),
):
    """Fit a frequency family to annual peaks by Bayesian MCMC, with historical information.

    Exact years, interval years (peak_lower, peak_upper) and the years of perception-threshold
    periods with no recorded flood all enter the likelihood. Example:

        riskcalc fit scenarios/wrenstow_dam_fit/peaks.csv --thresholds scenarios/wrenstow_dam_fit/thresholds.csv --family gev --out out/fit

    writes out/fit/ensemble.csv (read it with `riskcalc hazard out/fit/ensemble.csv --family gev`, or name it in a
    scenario's [hazard] table), fit.json (mode, MLE, diagnostics, prior, data summary, seed), plotting_positions.csv
    and figures/. A scenario can run the fit itself: [hazard] fit = { peaks = "peaks.csv", family = "gev" }.
    """
    from ..workflows import fit_workflow

    fitted, curves = fit_workflow(
        peaks,
        family,
        out,
        thresholds=thresholds,
        draws=draws,
        seed=seed,
        shape_prior=shape_prior,
        regional_skew=regional_skew,
        regional_skew_mse=regional_skew_mse,
        sheet=sheet,
        quantity=quantity,
        overwrite=overwrite,
    )
    rec = fitted.record
    d = fitted.diagnostics()
    info = f"{rec.n_exact} exact years"
    if rec.n_interval:
        info += f", {rec.n_interval} interval years"
    if rec.n_below:
        info += f", {rec.n_below} years below a perception threshold"
    typer.echo(f"{fitted.family} fitted to {info}; {fitted.size} posterior draws (seed {fitted.seed}).")
    width = max(len(n) for n in fitted.names)
    typer.echo(f"{'parameter':<{max(9, width)}} {'mode':>11} {'MLE':>11} {'ESS (bulk)':>11} {'R-hat':>7}")
    for n in fitted.names:
        p = d["parameters"][n]
        typer.echo(
            f"{n:<{max(9, width)}} {fmt_num(fitted.mode[n], 5):>11} {fmt_num(fitted.mle[n], 5):>11} "
            f"{p['ess_bulk']:>11.0f} {p['rank_normalized_split_rhat']:>7.3f}"
        )
    typer.echo(f"acceptance rate {d['acceptance_rate']:.2f}; {d['chains']} walkers, thinning {d['thin']}.")
    u = f" [{unit_text(rec.unit)}]" if rec.unit else ""
    typer.echo(f"{quantity}{u} at the standard AEPs:")
    typer.echo(f"{'AEP':>8} {'1 in':>7} {'mode':>12} {'predictive':>12}")
    from ..hazard import STANDARD_AEPS
    from ..hazard.curves import invert_on_paper

    aeps = STANDARD_AEPS[STANDARD_AEPS >= 1e-4]
    mode = invert_on_paper(curves.quantity_mode, curves.aeps, aeps, curves.log_scale)
    pred = invert_on_paper(curves.quantity_predictive, curves.aeps, aeps, curves.log_scale)
    for a, m, p in zip(aeps, mode, pred):
        typer.echo(
            f"{fmt_num(a):>8} {fmt_return_period(a):>7} {fmt_quantity(m, quantity):>12} {fmt_quantity(p, quantity):>12}"
        )
    for w in fitted.warnings:
        typer.echo(f"warning: {w}", err=True)
    typer.echo(f"wrote {out}/")
    from ..hazard.fit import CAUTION_FIT

    typer.echo(f"Caution: {CAUTION_FIT}")
    typer.echo(caution_line(short=True))
