"""Whole runs of the bundled scenarios in units of one reference computation on the same machine.

The unit is one single-threaded ``scipy.special.gammaincc`` pass over a 20,000 x 2,000 array (the
cost floor of an LP3 ensemble of that size); it is measured just before and just after the runs
and its median is the divisor. Each ``riskcalc run`` (figures, memo, sensitivity at its configured
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


def _env():
    return {**os.environ, "PYTHONPATH": str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", "")}


def timed(cmd) -> float:
    t0 = time.perf_counter()
    out = subprocess.run(cmd, capture_output=True, text=True, env=_env(), cwd=ROOT)
    dt = time.perf_counter() - t0
    if out.returncode != 0:
        raise RuntimeError(f"{' '.join(map(str, cmd))} failed: {out.stderr[-2000:]}")
    return dt


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--scenario", action="append", choices=SCENARIOS)
    args = ap.parse_args(argv)
    py = sys.executable
    names = args.scenario or SCENARIOS
    units = [unit_seconds()]
    print(json.dumps({"case": "unit: gammaincc (20000, 2000), one thread", "seconds": units[0]}), flush=True)
    startup = {}
    for label, cmd in (
        ("help", [py, "-m", "riskcalc", "--help"]),
        ("check", [py, "-m", "riskcalc", "check", str(ROOT / "scenarios/amberlow_levee/scenario.toml")]),
    ):
        ts = [timed(cmd) for _ in range(max(3, args.repeat))]
        startup[label] = float(np.median(ts))
        print(json.dumps({"case": f"riskcalc {label}", "seconds_median": startup[label], "runs": ts}), flush=True)
    runs = {}
    with tempfile.TemporaryDirectory(prefix="riskcalc-bench-run-") as tmp:
        for name in names:
            ts = []
            for i in range(args.repeat):
                out = Path(tmp) / f"{name}-{i}"
                cmd = [py, "-m", "riskcalc", "run", str(ROOT / "scenarios" / name / "scenario.toml")]
                ts.append(timed([*cmd, "--out", str(out), "--quiet"]))
            memo = Path(tmp) / f"{name}-0" / "memo.html"
            runs[name] = float(np.median(ts))
            print(
                json.dumps(
                    {
                        "case": f"riskcalc run {name}",
                        "seconds_median": runs[name],
                        "runs": ts,
                        "memo_bytes": memo.stat().st_size if memo.exists() else None,
                    }
                ),
                flush=True,
            )
    units.append(unit_seconds())
    unit = float(np.median(units))
    print(
        json.dumps(
            {
                "case": "ratios (run time / unit)",
                "unit_seconds": unit,
                "unit_runs": units,
                "ratios": {k: v / unit for k, v in runs.items()},
                "target": 4.0,
                "startup_seconds": startup,
            }
        ),
        flush=True,
    )


if __name__ == "__main__":
    main()
