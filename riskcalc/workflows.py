"""The steps a user runs, as plain functions: read inputs, compute, write outputs.

One function a command: :func:`hazard_step` (``riskcalc hazard``), :func:`check_scenario`,
:func:`run_scenario`, :func:`sensitivity_workflow`, :func:`compare_workflow`, :func:`memo_workflow`
(with the headless-Chromium PDF, :func:`print_pdf`) and :func:`run_portfolio` (many scenarios, serial
or on dask.distributed; each scenario runs exactly as ``riskcalc run`` would, in its own sub-folder,
and a scenario that fails is reported in the table without stopping the others; every scenario draws
its random streams per chunk from ``numpy.random.SeedSequence(seed).spawn``, so it gives the same
numbers serially and on any number of workers). The CLI calls these and nothing else; a notebook can
call them too.
"""

from __future__ import annotations

import dataclasses
import re
import shutil
import subprocess
import tempfile
from pathlib import Path

from typing import TYPE_CHECKING

from .errors import InputError
from .io import atomic_output_dir, write_csv

if TYPE_CHECKING:  # pandas, the hazard curves and Matplotlib are imported where they are used
    import pandas as pd

__all__ = [
    "hazard_step",
    "check_scenario",
    "run_scenario",
    "sensitivity_workflow",
    "compare_workflow",
    "memo_workflow",
    "find_chromium",
    "print_pdf",
    "fit_workflow",
]


def _refuse_nonempty(out, overwrite):
    """Refuse a non-empty output directory before any work, unless ``overwrite``."""
    out = Path(out)
    if out.exists() and out.is_dir() and any(out.iterdir()) and not overwrite:
        raise InputError("output directory is not empty; pass --overwrite to replace it", out)
    return out


def hazard_step(
    ensemble_path,
    family,
    out,
    *,
    quantity="discharge",
    unit=None,
    level=0.9,
    aep_max=0.999,
    aep_min=1e-7,
    n_grid=2000,
    overwrite=False,
    figure=True,
    title=None,
):
    """Read an ensemble, compute its summary curves and write the hazard tables and figure.

    Returns
    -------
    curves : HazardCurves
    summary : pandas.DataFrame
        Mode, median and predictive quantities at the standard AEPs.
    """
    from .hazard import STANDARD_AEPS, hazard_curves, read_ensemble
    from .outputs.figures import plot_hazard
    from .outputs.tables import hazard_by_aep, hazard_by_quantity, standard_aep_table

    if quantity not in ("discharge", "stage"):
        raise InputError(f"--quantity '{quantity}' is not known; expected discharge or stage", key="--quantity")
    for name, v in (("aep_max", aep_max), ("aep_min", aep_min)):
        if not 0 < v < 1:
            raise InputError(f"{name} = {v} must be strictly between 0 and 1", key=name)
    if not aep_min < aep_max:
        raise InputError(f"aep_min = {aep_min} must be below aep_max = {aep_max}", key="aep_min")
    if not 0 < level < 1:
        raise InputError(f"credible level {level} must be strictly between 0 and 1", key="level")
    if n_grid < 10:
        raise InputError(f"grid size {n_grid} is too small; expected at least 10 points", key="grid")
    ens = read_ensemble(ensemble_path, family, quantity=quantity, unit=unit)
    try:
        curves = hazard_curves(ens, level=level, aep_max=aep_max, aep_min=aep_min, n_grid=n_grid)
    except ValueError as exc:
        raise InputError(str(exc), ensemble_path) from None
    std = STANDARD_AEPS[(STANDARD_AEPS <= aep_max) & (STANDARD_AEPS >= aep_min)]
    summary = standard_aep_table(curves, std)
    with atomic_output_dir(out, overwrite=overwrite) as tmp:
        write_csv(Path(tmp) / f"hazard_by_{curves.quantity}.csv", hazard_by_quantity(curves))
        write_csv(Path(tmp) / "hazard_by_aep.csv", hazard_by_aep(curves))
        if figure:
            plot_hazard(
                curves,
                ens,
                Path(tmp) / "figures" / "hazard_ensemble",
                title=title or f"Hazard ensemble ({ens.size} realizations, {ens.family})",
            )
    return curves, summary


def write_run_outputs(
    result,
    out,
    *,
    overwrite=False,
    figures=True,
    sensitivity_report=None,
    comparison=None,
    figure_progress=None,
    xlsx=False,
    fit_outputs=None,
):
    """Write summary.json, the tables and the figures of a :class:`RiskResult` into ``out`` atomically
    (and, for a scenario whose hazard is fitted, the fit's files into ``out/fit/``).

    With ``xlsx`` also ``results.xlsx``, one sheet a table (:func:`riskcalc.outputs.workbook.write_workbook`).
    """
    from .io import write_json

    sc = result.scenario
    with atomic_output_dir(out, overwrite=overwrite) as tmp:
        tmp = Path(tmp)
        if fit_outputs is not None:
            _write_scenario_fit(sc, tmp / "fit", fit_outputs, figures and sc.outputs.get("figures", True))
        summary = result.summary()
        write_json(tmp / "summary.json", summary)
        t = tmp / "tables"
        t.mkdir()
        tables = result.tables()
        for name, df in tables.items():
            write_csv(t / f"{name}.csv", df)
        if figures and sc.outputs.get("figures", True):
            from .outputs import figures as plots

            kw = {"progress": figure_progress} if figure_progress is not None else {}
            plots.run_figures(result, tmp / "figures", **kw)
        if sensitivity_report is not None:
            from .outputs.sensitivity import write_sensitivity_outputs

            # the run's figure of the indices comes from plots.run_figures (same function as the command's)
            write_sensitivity_outputs(sensitivity_report, tmp, figures=False)
        if comparison is not None:
            from .outputs.comparison import write_comparison_files

            write_comparison_files(comparison, tmp, figures=figures and sc.outputs.get("figures", True))
        if sc.outputs.get("memo", True):
            from .outputs.memo import write_memo

            write_memo(result, tmp)
        if xlsx:  # last: the sensitivity, comparison and memo steps add tables of their own
            from .outputs.workbook import workbook_tables, write_workbook

            write_workbook(tmp / "results.xlsx", summary, workbook_tables(tables, t))
    return Path(out)


def check_scenario(scenario_path):
    """``riskcalc check``: load and validate a scenario and every table it names, computing nothing.

    Returns
    -------
    Scenario
    """
    from .config.scenario import load_scenario

    return load_scenario(scenario_path)


def run_scenario(
    scenario_path,
    out,
    *,
    overwrite=False,
    workers=None,
    progress=None,
    figures=True,
    sobol_progress=None,
    figure_progress=None,
    xlsx=False,
):
    """Load, validate and assess a scenario, then write its outputs. Returns the :class:`RiskResult`.

    ``progress``, ``sobol_progress`` and ``figure_progress`` are ``callback(done, total)`` for the Monte
    Carlo chunks, the Sobol' model runs and the figures; ``xlsx`` also writes ``results.xlsx``.
    """
    from .risk.assess import assess
    from .config.scenario import load_scenario

    out = _refuse_nonempty(out, overwrite)
    sc = load_scenario(scenario_path)
    result = assess(sc, workers=workers, progress=progress)
    fit_outputs = scenario_fit_outputs(sc)
    if fit_outputs is not None:
        result = dataclasses.replace(
            result,
            provenance={**result.provenance, "hazard_fit": fit_outputs["provenance"]},
            warnings=[*result.warnings, *(f"hazard fit: {w}" for w in sc.hazard_fit.warnings)],
        )
    report = None
    from .config.settings import sensitivity_enabled
    from .sensitivity.analysis import sensitivity_for_run

    if sensitivity_enabled(sc):
        report = sensitivity_for_run(sc, result, workers=workers, progress=sobol_progress)
        result = dataclasses.replace(
            result, sensitivity=report.summary(), warnings=[*result.warnings, *report.warnings]
        )
    comparison = None
    if sc.alternatives:
        from .decision.alternatives import compare
        from .outputs.comparison import attach_memo_section

        comparison = compare(sc, workers=workers)
        attach_memo_section(result, comparison, figures=figures and sc.outputs.get("figures", True))
    write_run_outputs(
        result,
        out,
        overwrite=overwrite,
        figures=figures,
        sensitivity_report=report,
        comparison=comparison,
        fit_outputs=fit_outputs,
        figure_progress=figure_progress,
        xlsx=xlsx,
    )
    return result


# ----------------------------------------------------------------------
# riskcalc fit, and the fitted hazard of a scenario
# ----------------------------------------------------------------------
def fit_workflow(
    peaks,
    family,
    out,
    *,
    thresholds=None,
    draws=None,
    seed=None,
    shape_prior="geophysical",
    regional_skew=None,
    regional_skew_mse=None,
    sheet=None,
    quantity="discharge",
    overwrite=False,
    figures=True,
):
    """``riskcalc fit``: read and check an annual-peak record, fit a family, write the ensemble and its report.

    Writes ``out/ensemble.csv`` (readable by ``riskcalc hazard --family``), ``out/fit.json``,
    ``out/plotting_positions.csv`` and ``out/figures/``, atomically; nothing is written when the
    input is refused.

    Returns
    -------
    fit : FitResult
    curves : HazardCurves
        The fitted ensemble's curves (AEP 0.995 to 1e-4).
    """
    from .hazard.fit import DEFAULT_DRAWS, DEFAULT_SEED, fit_from_files
    from .outputs.fit_report import fit_display_curves, fit_files, write_fit_outputs

    if quantity not in ("discharge", "stage"):
        raise InputError(f"--quantity '{quantity}' is not known; expected discharge or stage", key="--quantity")
    out = _refuse_nonempty(out, overwrite)
    fit = fit_from_files(
        peaks,
        family,
        thresholds=thresholds,
        draws=DEFAULT_DRAWS if draws is None else draws,
        seed=DEFAULT_SEED if seed is None else seed,
        shape_prior=shape_prior,
        regional_skew=regional_skew,
        regional_skew_mse=regional_skew_mse,
        sheet=sheet,
    )
    curves = fit_display_curves(fit, quantity=quantity)
    files = fit_files(fit, curves)
    with atomic_output_dir(out, overwrite=overwrite) as tmp:
        write_fit_outputs(fit, tmp, figures=figures, quantity=quantity, files=files, curves=curves)
    return fit, curves


def scenario_fit_outputs(sc) -> dict | None:
    """The fit files of a scenario whose ``[hazard]`` has a ``fit`` table, with their provenance; else None."""
    fit = getattr(sc, "hazard_fit", None)
    if fit is None:
        return None
    import hashlib

    from .outputs.fit_report import fit_display_curves, fit_files

    curves = fit_display_curves(fit, quantity=sc.ensemble.quantity)
    files = fit_files(fit, curves)
    prov = {
        "folder": "fit",
        "family": fit.family,
        "seed": fit.seed,
        "draws": fit.size,
        "outputs": {f"fit/{k}": hashlib.sha256(v).hexdigest() for k, v in sorted(files.items())},
        "ess_bulk_min": fit.diagnostics()["ess_bulk_min"],
        "rank_normalized_split_rhat_max": fit.diagnostics()["rank_normalized_split_rhat_max"],
        "warnings": list(fit.warnings),
    }
    return {"files": files, "curves": curves, "provenance": prov}


def _write_scenario_fit(sc, folder, fit_outputs, figures):
    from .outputs.fit_report import write_fit_outputs

    write_fit_outputs(
        sc.hazard_fit,
        folder,
        figures=figures,
        quantity=sc.ensemble.quantity,
        files=fit_outputs["files"],
        curves=fit_outputs["curves"],
    )


def sensitivity_workflow(
    scenario_path,
    out,
    *,
    n=None,
    seed=None,
    second_order=None,
    target_width=None,
    morris=None,
    overwrite=False,
    workers=None,
    figures=True,
):
    """``riskcalc sensitivity``: load, run the chain, compute the report and write it into ``out`` atomically.

    Command-line values override the scenario's ``[sensitivity]`` table.

    Returns
    -------
    result : RiskResult
    report : SensitivityReport
    """
    from .config.scenario import load_scenario
    from .config.settings import read_settings
    from .outputs.sensitivity import write_sensitivity_outputs
    from .risk.assess import assess
    from .sensitivity.analysis import sensitivity_for_run
    from .sensitivity.factors import scenario_factors

    out = _refuse_nonempty(out, overwrite)
    sc_ = load_scenario(scenario_path)
    overrides = {
        "n": n,
        "seed": seed,
        "second_order": second_order or None,
        "target_width": target_width,
        "morris": morris or None,
    }
    settings = read_settings(
        sc_.raw.get("sensitivity"),
        sc_.path,
        default_seed=sc_.seed,
        overrides=overrides,
        factors=scenario_factors(sc_.model),
    )
    result = assess(sc_, workers=workers)
    report = sensitivity_for_run(sc_, result, settings, workers=workers)
    report = dataclasses.replace(report, provenance={**result.provenance, **report.provenance})
    with atomic_output_dir(out, overwrite=overwrite) as tmp:
        write_sensitivity_outputs(report, tmp, figures=figures, json_name="sensitivity.json")
    return result, report


def compare_workflow(scenario_path, out, *, overwrite=False, workers=None):
    """``riskcalc compare``: load a scenario with alternatives, compare them and write the comparison into ``out``.

    Returns
    -------
    scenario : Scenario
    comparison : Comparison
    """
    from .config.scenario import load_scenario
    from .decision.alternatives import compare
    from .outputs.comparison import write_comparison

    out = _refuse_nonempty(out, overwrite)
    sc = load_scenario(scenario_path)
    c = compare(sc, workers=workers)
    write_comparison(c, out, overwrite=overwrite, figures=bool(sc.outputs.get("figures", True)))
    return sc, c


# --------------------------------------------------------------------------
# The memo of a finished run, and its PDF
# --------------------------------------------------------------------------
#: Flags for a headless Chromium that makes no network requests of its own.
CHROMIUM_FLAGS = (
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
)

_NO_CHROMIUM = (
    "--pdf needs Chromium, which was not found on PATH; install it (Debian: apt-get install chromium) "
    "or open memo.html in a browser and print it"
)


def find_chromium() -> str | None:
    """Path of a Chromium executable on PATH (``chromium``, then ``chromium-browser``), or None."""
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    return None


def print_pdf(html_path, pdf_path, *, timeout=120) -> Path:
    """Print ``html_path`` to ``pdf_path`` with headless Chromium (written beside, then renamed).

    Raises
    ------
    InputError
        When Chromium is not installed or the print fails.
    """
    exe = find_chromium()
    if exe is None:
        raise InputError(_NO_CHROMIUM, html_path)
    html_path, pdf_path = Path(html_path).resolve(), Path(pdf_path).resolve()
    part = pdf_path.with_name(f".{pdf_path.name}.partial")
    with tempfile.TemporaryDirectory(prefix="riskcalc-chromium-") as profile:
        cmd = [
            exe,
            *CHROMIUM_FLAGS,
            f"--user-data-dir={profile}",
            "--no-pdf-header-footer",
            f"--print-to-pdf={part}",
            html_path.as_uri(),
        ]
        try:
            proc = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout)
        except subprocess.TimeoutExpired:
            part.unlink(missing_ok=True)
            raise InputError(f"Chromium did not finish printing within {timeout} s", html_path) from None
    if proc.returncode != 0 or not part.exists() or part.stat().st_size == 0:
        part.unlink(missing_ok=True)
        last = (proc.stderr.strip().splitlines() or ["no message"])[-1][:200]
        raise InputError(f"Chromium could not print the memo to PDF (exit {proc.returncode}: {last})", html_path)
    part.replace(pdf_path)
    return pdf_path


def memo_workflow(outdir, *, pdf=False) -> list[Path]:
    """``riskcalc memo``: rebuild memo.md and memo.html of a finished run, and with ``pdf`` print memo.pdf.

    Chromium is looked for before anything is rewritten, so a missing browser changes no file.

    Returns
    -------
    list of Path
        memo.md, memo.html and, with ``pdf``, memo.pdf.
    """
    from .outputs.memo import rebuild_memo

    if pdf and find_chromium() is None:
        raise InputError(_NO_CHROMIUM, outdir)
    paths = list(rebuild_memo(outdir))
    if pdf:
        paths.append(print_pdf(paths[1], Path(outdir) / "memo.pdf"))
    return paths


# --------------------------------------------------------------------------
# riskcalc portfolio: many scenarios, serial or on a dask.distributed cluster
# --------------------------------------------------------------------------
PORTFOLIO_COLUMNS = (
    "scenario",
    "path",
    "status",
    "error",
    "afp_predictive_per_yr",
    "afp_mode_per_yr",
    "afp_ratio",
    "ead_predictive_per_yr",
    "ead_mode_per_yr",
    "ead_ratio",
    "all_predictive_lives_per_yr",
    "all_mode_lives_per_yr",
    "all_ratio",
    "truncation_aep_above_grid",
    "currency",
    "warnings",
)


def collect_scenarios(paths) -> list[Path]:
    """Scenario files from arguments: .toml files, folders (their *.toml and */scenario.toml), or list files
    (.txt, one path a line, relative to the list file; # comments)."""
    out = []
    for p in map(Path, paths):
        if p.is_dir():
            found = sorted(set(p.glob("*.toml")) | set(p.glob("*/scenario.toml")))
            if not found:
                raise InputError("folder holds no scenario (.toml) files", p)
            out += found
        elif p.suffix.lower() == ".toml":
            if not p.exists():
                raise InputError("scenario file not found", p)
            out.append(p)
        elif p.suffix.lower() == ".txt":
            if not p.exists():
                raise InputError("list file not found", p)
            for i, line in enumerate(p.read_text(encoding="utf-8").splitlines(), start=1):
                line = line.strip()
                if line and not line.startswith("#"):
                    q = p.parent / line
                    if not q.exists():
                        raise InputError(f"scenario '{line}' not found", p, row=i)
                    out.append(q)
        else:
            raise InputError("expected a .toml scenario, a folder of them, or a .txt list of them", p)
    if not out:
        raise InputError("no scenarios given")
    return out


def _names(paths):
    names, seen = [], {}
    for p in paths:
        base = p.parent.name if p.name == "scenario.toml" else p.stem
        base = re.sub(r"[^A-Za-z0-9_.-]+", "_", base) or "scenario"
        k = seen.get(base, 0)
        seen[base] = k + 1
        names.append(base if k == 0 else f"{base}_{k + 1}")
    return names


def run_one(path, outdir, name, threads=1) -> dict:
    """Run one scenario into ``outdir`` and return its portfolio row (errors are caught and reported)."""

    row = {c: None for c in PORTFOLIO_COLUMNS}
    row.update(scenario=name, path=str(path))
    try:
        res = run_scenario(path, outdir, overwrite=True, workers=threads)
        s = res.summary()
        for short, key in (
            ("afp", "annual_failure_probability"),
            ("ead", "expected_annual_damage"),
            ("all", "annualized_life_loss"),
        ):
            unit = "lives_per_yr" if short == "all" else "per_yr"
            row[f"{short}_predictive_{unit}"] = s[key]["predictive"]
            row[f"{short}_mode_{unit}"] = s[key]["mode"]
            row[f"{short}_ratio"] = s[key]["ratio_predictive_to_mode"]
        row["truncation_aep_above_grid"] = s["truncation"]["aep_above_grid"]
        row["currency"] = s["units"]["currency"]
        row["warnings"] = " | ".join(s["warnings"])
        row["status"] = "ok"
    except InputError as exc:
        row.update(status="input error", error=str(exc))
    except Exception as exc:  # a portfolio reports every failure and goes on
        row.update(status="failed", error=f"{type(exc).__name__}: {exc}")
    return row


def run_portfolio(paths, out, *, workers=0, scheduler=None, overwrite=False, progress=None) -> pd.DataFrame:
    """Run scenarios and write ``out/portfolio.csv`` plus each scenario's outputs in ``out/<name>/``.

    Parameters
    ----------
    paths : sequence of path
        Scenario files, folders or list files (see :func:`collect_scenarios`).
    workers : int
        0 runs serially; N > 0 starts a local ``dask.distributed`` cluster of N worker processes.
    scheduler : str, optional
        Address of an existing dask scheduler to join instead.
    progress : callable, optional
        ``progress(done, total)``.
    """
    import pandas as pd

    scenarios = collect_scenarios(paths)
    names = _names(scenarios)
    with atomic_output_dir(out, overwrite=overwrite) as tmp:
        tmp = Path(tmp)
        jobs = [(str(p.resolve()), str(tmp / n), n) for p, n in zip(scenarios, names)]
        if workers or scheduler:
            rows = _run_distributed(jobs, workers, scheduler, progress)
        else:
            rows = []
            for i, job in enumerate(jobs, start=1):
                rows.append(run_one(*job))
                if progress:
                    progress(i, len(jobs))
        for r in rows:  # the rows name the final folder, not the temporary one
            r["output"] = str(Path(out) / r["scenario"]) if r["status"] == "ok" else None
        table = pd.DataFrame(rows, columns=[*PORTFOLIO_COLUMNS, "output"])
        write_csv(tmp / "portfolio.csv", table)
    return table


def _run_distributed(jobs, workers, scheduler, progress):
    try:
        import logging

        from dask.distributed import Client, LocalCluster, as_completed
    except ImportError:
        raise InputError("--workers and --scheduler need dask.distributed: pip install 'riskcalc[dask]'") from None
    cluster = None
    if scheduler:
        client = Client(scheduler)
    else:
        cluster = LocalCluster(
            n_workers=int(workers),
            threads_per_worker=1,
            processes=True,
            dashboard_address=None,
            silence_logs=logging.ERROR,
        )
        client = Client(cluster)
    try:
        futures = [client.submit(run_one, *job, pure=False, key=f"riskcalc-{i}-{job[2]}") for i, job in enumerate(jobs)]
        for done, _ in enumerate(as_completed(futures), start=1):
            if progress:
                progress(done, len(futures))
        return client.gather(futures)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
