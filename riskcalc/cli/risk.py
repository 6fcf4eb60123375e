"""`riskcalc check` and `riskcalc run`: the whole risk chain on a scenario."""

from __future__ import annotations

from pathlib import Path

import typer

from . import CAUTION, app


def _num(v, kind):
    if v is None:
        return "n/a"
    if kind == "currency per year":
        return f"{v:,.0f}"
    return f"{v:.3g}"


def headline_lines(summary: dict) -> list[str]:
    """The headline table printed at the end of a run (also used by `riskcalc memo`)."""
    cur = summary["units"]["currency"]
    rows = [("annual failure probability [1/yr]", "annual_failure_probability", "per year"),
            (f"expected annual damage [{cur}/yr]", "expected_annual_damage", "currency per year"),
            ("annualized life loss [lives/yr]", "annualized_life_loss", "lives per year")]
    lines = [f"{'':36}{'predictive':>13}{'mode':>13}{'median':>13}{'5-95 % of ensemble':>26}{'pred/mode':>11}"]
    for label, key, kind in rows:
        h = summary[key]
        e = h["ensemble"]
        band = f"{_num(e['p05'], kind)} to {_num(e['p95'], kind)}"
        ratio = h["ratio_predictive_to_mode"]
        lines.append(f"{label:36}{_num(h['predictive'], kind):>13}{_num(h['mode'], kind):>13}"
                     f"{_num(h['median_curve'], kind):>13}{band:>26}{'' if ratio is None else f'{ratio:.2f}':>11}")
    h = summary["annual_failure_probability"]
    if h.get("ratio_hazard_only") is not None and h["ratio_predictive_to_mode"] is not None and \
            abs(h["ratio_hazard_only"] - h["ratio_predictive_to_mode"]) > 1e-9 * abs(h["ratio_predictive_to_mode"]):
        lines.append(f"AFP pred/mode with the hazard ensemble alone (nominal response): {h['ratio_hazard_only']:.2f}")
    c = summary["mode_understatement"]["crest_check"]
    m = c["mode"]
    if m["aep_on_predictive"]:
        lines.append(
            f"A crest set at the mode curve's {c['design_aep']:g}-AEP stage ({m['stage']:.2f}) would be exceeded with AEP "
            f"{m['aep_on_predictive']:.3g} on the predictive curve (about once in {1 / m['aep_on_predictive']:,.0f} "
            f"years, not once in {1 / c['design_aep']:,.0f}); chance of at least one exceedance in {c['years']} years: "
            f"{100 * m['chance_in_years_predictive']:.0f} %, not {100 * m['chance_in_years_nominal']:.0f} %.")
    return lines


@app.command()
def check(scenario: Path = typer.Argument(..., help="Scenario file (.toml).")):
    """Validate a scenario and every table it names, without computing.

    Example:

        riskcalc check scenarios/amberlow_levee/scenario.toml
    """
    from ..config.scenario import load_scenario

    sc = load_scenario(scenario)
    typer.echo(f"{scenario}: valid. {sc.ensemble.size} realizations ({sc.ensemble.family}, {sc.ensemble.quantity}), "
               f"{len(sc.model.failure_modes)} failure mode(s): {', '.join(sc.model.failure_mode_names)}; "
               f"{len(sc.files)} input file(s).")


@app.command()
def run(
    scenario: Path = typer.Argument(..., help="Scenario file (.toml)."),
    out: Path = typer.Option(..., "--out", "-o", help="Output directory (created; replaced only with --overwrite)."),
    overwrite: bool = typer.Option(False, help="Replace a non-empty output directory."),
    workers: int = typer.Option(0, help="Threads for the Monte Carlo (0: the machine's cores, at most 4)."),
    quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress bar; print only the output path."),
):
    """Run the whole risk chain on a scenario: AFP, EAD, ALL, F-N, mean versus mode.

    Example:

        riskcalc run scenarios/amberlow_levee/scenario.toml --out out/amberlow

    writes out/amberlow/summary.json, tables/*.csv, figures/*.png|svg and the memo, and prints the
    headline table with the caution.
    """
    from ..progress import progress_bar
    from ..workflows import run_scenario

    with progress_bar("Monte Carlo chunks", enabled=not quiet) as update:
        result = run_scenario(scenario, out, overwrite=overwrite, workers=workers or None, progress=update)
    s = result.summary()
    if not quiet:
        typer.echo(s["title"])
        for line in headline_lines(s):
            typer.echo(line)
        for w in s["warnings"]:
            typer.echo(f"warning: {w}")
        typer.echo(CAUTION)
    memo = Path(out) / "memo.html"
    typer.echo(f"results: {out}/" + (f"  memo: {memo}" if memo.exists() else ""))


