"""Benchmark: Sobol' indices of the risk chain (riskcalc.sensitivity.evaluator) on a large ensemble.

Target case: 20,000 LP3 realizations x 2,000 grid points, 8 factors (hazard
realization, rating offset, shift and spread factor of two failure modes,
damage and life-loss multipliers), N = 8192, first and total order, 100
bootstrap resamples: under 20 s on the project's 2-core machine, including the
precomputation of the masses. Each case runs in a fresh child process, so its
peak resident memory is its own. Prints one JSON line per case. Not part of the
test run: ``.venv/bin/python benchmarks/bench_sensitivity.py [case]``.
All data are invented.
"""

from __future__ import annotations

import json
import subprocess
import sys
import time

import numpy as np

R, Q, SEED = 20_000, 2_000, 1
CASES = {
    # name: (N, natural variability of stage, workers)
    "target": (8192, False, None),
    "target_1_thread": (8192, False, 1),
    "natural_variability_16_nodes": (1024, True, None),
}


def setup(natural):
    from riskcalc.hazard import HazardEnsemble, quantity_grid
    from riskcalc.response import FailureMode, FragilityCurve, RatingCurve, StageSpread
    from riskcalc.response import uncertain as unc
    from riskcalc.response.chain import ResponseChain
    from riskcalc.response.consequences import ConsequenceCurves

    rng = np.random.default_rng(SEED)
    params = {"mean": rng.normal(2.8, 0.05, R), "sd": rng.uniform(0.18, 0.32, R), "skew": rng.uniform(-0.8, 0.8, R)}
    ens = HazardEnsemble(family="lp3", weights=np.full(R, 1 / R), params=params)
    grid = quantity_grid(ens, n=Q)
    rating = RatingCurve(np.array([10.0, 100, 1000, 10000, 1e5, 1e6]), np.array([1.0, 2.0, 4.0, 7.0, 11.0, 16.0]))
    modes = (
        FailureMode("overtopping", (FragilityCurve("normal", median=7.5, spread=0.4),)),
        FailureMode("seepage", (FragilityCurve("lognormal", median=5.0, spread=0.3, datum=1.0),)),
    )
    st = np.array([2.0, 4.0, 6.0, 9.0, 12.0])
    cons = ConsequenceCurves(
        st,
        np.array([0, 1e6, 5e6, 2e7, 4e7]),
        np.array([0, 0, 1e6, 5e6, 1e7]),
        np.array([0, 1, 10, 50, 120.0]),
        np.zeros(5),
    )
    registry = unc.UncertainInputs(
        (
            unc.rating_offset(0.1),
            unc.fragility_shift(0, "overtopping", 0.2),
            unc.fragility_spread(0, "overtopping", 0.8, 1.25),
            unc.fragility_shift(1, "seepage", 0.3),
            unc.fragility_spread(1, "seepage", 0.7, 1.3),
            unc.consequence_factor("damage", "triangular", low=0.8, mode=1.0, high=1.3),
            unc.consequence_factor("life_loss", "lognormal", median=1.0, beta=0.4),
        ),
        n_failure_modes=2,
    )
    model = ResponseChain(
        failure_modes=modes,
        consequences=cons,
        rating=rating,
        natural=StageSpread(0.15) if natural else None,
        uncertain=registry,
    )
    return ens, model, grid


def case(name):
    import resource

    from riskcalc.sensitivity.evaluator import build_driver
    from riskcalc.sensitivity.factors import scenario_factors
    from riskcalc.sensitivity.salib import sobol_indices

    n, natural, workers = CASES[name]
    ens, model, grid = setup(natural)
    t0 = time.perf_counter()
    drv = build_driver(ens, model, grid, workers=workers)
    t1 = time.perf_counter()
    factors = scenario_factors(model)
    res = sobol_indices(drv.unit_model(factors), [f.salib_factor() for f in factors], n, seed=SEED, n_resamples=100)
    t2 = time.perf_counter()
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    afp = res["annual_failure_probability"]
    cpu = resource.getrusage(resource.RUSAGE_SELF)
    print(
        json.dumps(
            {
                "case": name,
                "R": R,
                "Q": Q,
                "N": n,
                "factors": len(factors),
                "model_evaluations": afp.n_evaluations,
                "workers": drv.workers,
                "precompute_seconds": round(t1 - t0, 3),
                "sobol_seconds": round(t2 - t1, 3),
                "total_seconds": round(t2 - t0, 3),
                "process_cpu_seconds": round(cpu.ru_utime + cpu.ru_stime, 2),
                "peak_rss_mb": round(peak, 1),
                "afp_ST": {f: round(float(v), 3) for f, v in zip(afp.factors, afp.ST)},
            }
        )
    )


def main(names):
    for name in names:
        out = subprocess.run(
            [sys.executable, __file__, "--case", name], capture_output=True, text=True, check=True
        ).stdout
        print(out.strip(), flush=True)


if __name__ == "__main__":
    if len(sys.argv) > 2 and sys.argv[1] == "--case":
        case(sys.argv[2])
    else:
        main(sys.argv[1:] or list(CASES))
