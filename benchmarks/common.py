"""Shared set-up for the benchmarks: a synthetic scenario written to a temporary folder.

The scenario is invented: an LP3 ensemble with varied skew, a rating table, two failure
modes and consequence curves, sized by R (realizations) and Q (grid points).
"""

from __future__ import annotations

import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

RATING = "discharge_m3s,stage_m\n10,1.0\n100,2.0\n1000,4.0\n10000,7.0\n100000,11.0\n1000000,15.0\n"
CONSEQ = (
    "stage_m,damage_breach_usd,damage_no_breach_usd,life_loss_breach\n"
    "2.0,0,0,0\n4.0,1.0e6,0,1\n6.0,5.0e6,1.0e6,10\n9.0,2.0e7,5.0e6,50\n15.0,5.0e7,2.0e7,200\n"
)
SCENARIO = """
title = "benchmark (invented)"
seed = 1
[hazard]
family = "lp3"
ensemble = "ensemble.csv"
[grid]
points = {Q}
[rating]
table = "rating.csv"
{rating_extra}
[[failure_modes]]
name = "overtopping"
  [[failure_modes.nodes]]
  kind = "lognormal"
  datum = 5.0
  median = 0.4
  spread = 0.5
[[failure_modes]]
name = "internal erosion"
  [[failure_modes.nodes]]
  kind = "normal"
  median = 4.5
  spread = 1.0
  [[failure_modes.nodes]]
  kind = "normal"
  median = 3.0
  spread = 2.0
[consequences]
table = "consequences.csv"
[outputs]
figures = false
memo = false
"""


def write_scenario(folder, R, Q, seed=1, rating_extra=""):
    folder = Path(folder)
    rng = np.random.default_rng(seed)
    m, s, g = rng.normal(2.8, 0.05, R), rng.uniform(0.18, 0.32, R), rng.uniform(-0.8, 0.8, R)
    with open(folder / "ensemble.csv", "w") as fh:
        fh.write("mean,sd,skew\n")
        np.savetxt(fh, np.column_stack([m, s, g]), fmt="%.8g", delimiter=",")
    (folder / "rating.csv").write_text(RATING)
    (folder / "consequences.csv").write_text(CONSEQ)
    path = folder / "scenario.toml"
    path.write_text(SCENARIO.format(Q=Q, rating_extra=rating_extra))
    return path


def best_of(fn, repeat=3):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def peak_rss_mb():
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def in_child(script, *args):
    """Run ``python script args`` and return its JSON line (each case in a fresh process)."""
    out = subprocess.run([sys.executable, str(script), *map(str, args)], capture_output=True, text=True)
    if out.returncode != 0:
        raise RuntimeError(out.stderr)
    return json.loads(out.stdout.strip().splitlines()[-1])


def tmpdir():
    return tempfile.TemporaryDirectory(prefix="riskcalc-bench-")
