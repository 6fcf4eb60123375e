"""Portfolios: many scenarios in one run, serial or on a dask.distributed cluster.

Each scenario runs exactly as ``riskcalc run`` would (its own outputs in a
sub-folder), and the portfolio table has one row a scenario. A scenario that
fails is reported in the table with its error and does not stop the others.
Every scenario's Monte Carlo draws its random streams from
``numpy.random.SeedSequence(seed).spawn`` per chunk, so a scenario gives the
same numbers serially and on any number of workers.
"""

from __future__ import annotations

import re
from pathlib import Path

import pandas as pd

from .errors import InputError
from .io import atomic_output_dir, write_csv

__all__ = ["collect_scenarios", "run_portfolio", "run_one", "PORTFOLIO_COLUMNS"]

PORTFOLIO_COLUMNS = (
    "scenario", "path", "status", "error", "afp_predictive_per_yr", "afp_mode_per_yr", "afp_ratio",
    "ead_predictive_per_yr", "ead_mode_per_yr", "ead_ratio", "all_predictive_lives_per_yr", "all_mode_lives_per_yr",
    "all_ratio", "truncation_aep_above_grid", "currency", "warnings")


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
                    q = (p.parent / line)
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
    from .workflows import run_scenario

    row = {c: None for c in PORTFOLIO_COLUMNS}
    row.update(scenario=name, path=str(path))
    try:
        res = run_scenario(path, outdir, overwrite=True, workers=threads)
        s = res.summary()
        for short, key in (("afp", "annual_failure_probability"), ("ead", "expected_annual_damage"),
                           ("all", "annualized_life_loss")):
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
        cluster = LocalCluster(n_workers=int(workers), threads_per_worker=1, processes=True, dashboard_address=None,
                               silence_logs=logging.ERROR)
        client = Client(cluster)
    try:
        futures = [client.submit(run_one, *job, pure=False, key=f"riskcalc-{i}-{job[2]}")
                   for i, job in enumerate(jobs)]
        for done, _ in enumerate(as_completed(futures), start=1):
            if progress:
                progress(done, len(futures))
        return client.gather(futures)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
