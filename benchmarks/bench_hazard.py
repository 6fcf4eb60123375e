"""Benchmark: predictive curve and credible band against one vectorized AEP evaluation.

20,000 LP3 realizations with varied skew on a 2,000-point grid. Each case runs
in a fresh child process, so its peak resident memory is its own. Prints one
JSON line per case. Not part of the test run:
``.venv/bin/python benchmarks/bench_hazard.py``.
"""

from __future__ import annotations

import json
import subprocess
import sys
import time

import numpy as np

R, Q, SEED = 20_000, 2_000, 1


def setup():
    from riskcalc.hazard import HazardEnsemble, quantity_grid

    rng = np.random.default_rng(SEED)
    params = {"mean": rng.normal(2.8, 0.05, R), "sd": rng.uniform(0.18, 0.32, R), "skew": rng.uniform(-0.8, 0.8, R)}
    ens = HazardEnsemble(family="lp3", weights=np.full(R, 1 / R), params=params)
    return ens, quantity_grid(ens, n=Q)


def case(name):
    import resource

    from riskcalc.hazard import hazard_curves
    from riskcalc.hazard.families import lp3_aep

    ens, grid = setup()
    cols = [ens.params[k][:, None] for k in ("mean", "sd", "skew")]
    fn = {"floor": lambda: lp3_aep(grid, *cols), "curves": lambda: hazard_curves(ens, grid)}[name]
    best = np.inf
    for _ in range(3):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(json.dumps({"case": name, "R": R, "Q": Q, "seconds": round(best, 3), "peak_rss_mb": round(peak, 1)}))


def main():
    results = {}
    for name in ("floor", "curves"):
        out = subprocess.run([sys.executable, __file__, name], capture_output=True, text=True, check=True).stdout
        print(out.strip())
        results[name] = json.loads(out)
    print(
        json.dumps(
            {
                "case": "ratio curves / floor",
                "ratio": round(results["curves"]["seconds"] / results["floor"]["seconds"], 3),
            }
        )
    )


if __name__ == "__main__":
    if len(sys.argv) > 1:
        case(sys.argv[1])
    else:
        main()
