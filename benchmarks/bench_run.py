"""Whole runs of the bundled scenarios in units of one reference computation on the same machine.

The unit is one single-threaded ``scipy.special.gammaincc`` pass over a 20,000 x 2,000 array (the
cost floor of an LP3 ensemble of that size); it is measured before the first run and after every
run, and each run's ratio divides its time by the mean of the units just before and just after it
(the median over the repeats is reported). Each ``riskcalc run`` (figures, memo, sensitivity at its configured
settings, the comparison where the scenario has one) runs in a fresh process, as a user runs it,
so the ratio includes the imports. Also measured: the start-up of ``riskcalc --help`` and of
``riskcalc check``. Prints one JSON line per measurement and a last line with the ratios.

Run ``python benchmarks/bench_run.py [--repeat N] [--scenario NAME ...]``. Not part of the tests
(timings are noisy on a shared machine: repeat and read the medians).
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
#: The command line without relying on ``python -m riskcalc`` (older trees have no ``__main__``).
CLI = ["-c", "import sys; from riskcalc.cli import main; sys.argv[0] = 'riskcalc'; main()"]
SCENARIOS = ("amberlow_levee", "tarnhollow_dam", "amberlow_alternatives")


def unit_seconds(repeat: int = 3) -> float:
    """Median time of one single-threaded gammaincc over a (20,000, 2,000) array [s]."""
    from scipy import special

    # LP3 members with skew 0.1 .. 0.8 (shape 6.25 .. 400) on standardized variates spanning AEP ~0.999 .. 1e-7
    rng = np.random.default_rng(1)
    g = rng.uniform(0.1, 0.8, 20_000)
    a = (4.0 / g**2)[:, None]
    z = np.linspace(-3.0, 5.5, 2_000)[None, :]
    t = np.maximum(a + 2.0 * z / g[:, None], 0.0)
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        special.gammaincc(a, t)
        times.append(time.perf_counter() - t0)
    return float(np.median(times))


def _env(root):
    return {**os.environ, "PYTHONPATH": str(root) + os.pathsep + os.environ.get("PYTHONPATH", "")}


def timed(cmd, root=ROOT) -> float:
    t0 = time.perf_counter()
    out = subprocess.run(cmd, capture_output=True, text=True, env=_env(root), cwd=root)
    dt = time.perf_counter() - t0
    if out.returncode != 0:
        raise RuntimeError(f"{' '.join(map(str, cmd))} failed: {out.stderr[-2000:]}")
    return dt


def growth(py, root, sizes=(1000, 2000, 4000, 8000), repeat=1) -> dict:
    """Whole ``riskcalc run`` of the bundled levee with its ensemble resampled to R rows: the log-log slope."""
    import shutil

    src = root / "scenarios" / "amberlow_levee"
    times = []
    with tempfile.TemporaryDirectory(prefix="riskcalc-bench-growth-") as tmp:
        for R in sizes:
            d = Path(tmp) / f"R{R}"
            shutil.copytree(src, d)
            lines = (src / "ensemble_lp3.csv").read_text().splitlines()
            head = [ln for ln in lines if ln.startswith("#")]
            header, rows = lines[len(head)], lines[len(head) + 1 :]
            rng = np.random.default_rng(R)
            pick = rng.integers(0, len(rows), R)
            body = [",".join([str(i + 1), *rows[j].split(",")[1:]]) for i, j in enumerate(pick)]
            (d / "ensemble_lp3.csv").write_text("\n".join([*head, header, *body]) + "\n")
            cmd = [py, *CLI, "run", str(d / "scenario.toml"), "--quiet"]
            ts = [timed([*cmd, "--out", str(d / f"out{i}")], root) for i in range(repeat)]
            times.append(float(np.median(ts)))
            print(json.dumps({"case": f"growth: riskcalc run amberlow_levee, R = {R}", "seconds_median": times[-1]}))
    slope = float(np.polyfit(np.log(sizes), np.log(times), 1)[0])
    return {"sizes": list(sizes), "seconds": times, "exponent": slope}


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--scenario", action="append", choices=SCENARIOS)
    ap.add_argument("--root", type=Path, default=ROOT, help="source tree to measure (default: this one)")
    ap.add_argument("--growth", action="store_true", help="also the growth of a whole run with the ensemble size")
    args = ap.parse_args(argv)
    root = args.root.resolve()
    py = sys.executable
    names = args.scenario or SCENARIOS
    units = [unit_seconds()]
    print(json.dumps({"case": "unit: gammaincc (20000, 2000), one thread", "seconds": units[0]}), flush=True)
    startup = {}
    for label, cmd in (
        ("help", [py, *CLI, "--help"]),
        ("check", [py, *CLI, "check", str(root / "scenarios/amberlow_levee/scenario.toml")]),
    ):
        ts = [timed(cmd, root) for _ in range(max(3, args.repeat))]
        startup[label] = float(np.median(ts))
        print(json.dumps({"case": f"riskcalc {label}", "seconds_median": startup[label], "runs": ts}), flush=True)
    # each run sits between two unit measurements; its ratio is run time / mean of the two units, and the
    # median over the repeats is reported (the machine is shared: load changes between runs)
    runs, ratios = {}, {}
    u_prev = units[0]
    with tempfile.TemporaryDirectory(prefix="riskcalc-bench-run-") as tmp:
        for name in names:
            ts, rs = [], []
            for i in range(args.repeat):
                out = Path(tmp) / f"{name}-{i}"
                cmd = [py, *CLI, "run", str(root / "scenarios" / name / "scenario.toml")]
                ts.append(timed([*cmd, "--out", str(out), "--quiet"], root))
                u_next = unit_seconds(repeat=1)
                units.append(u_next)
                rs.append(ts[-1] / (0.5 * (u_prev + u_next)))
                u_prev = u_next
            memo = Path(tmp) / f"{name}-0" / "memo.html"
            runs[name] = float(np.median(ts))
            ratios[name] = float(np.median(rs))
            print(
                json.dumps(
                    {
                        "case": f"riskcalc run {name}",
                        "seconds_median": runs[name],
                        "runs": ts,
                        "ratio_median": ratios[name],
                        "ratios": rs,
                        "memo_bytes": memo.stat().st_size if memo.exists() else None,
                    }
                ),
                flush=True,
            )
    grown = growth(py, root) if args.growth else None
    units.append(unit_seconds())
    unit = float(np.median(units))
    print(
        json.dumps(
            {
                "case": "ratios (run time / unit)",
                "root": str(root),
                "unit_seconds": unit,
                "unit_runs": units,
                "ratios": ratios,
                "target": 4.0,
                "startup_seconds": startup,
                "growth": grown,
            }
        ),
        flush=True,
    )


if __name__ == "__main__":
    main()
