"""Benchmark suite for the risk chain: floor, full chain, a plain loop, memory, growth, a smarter grid.

Run ``.venv/bin/python benchmarks/bench_chain.py`` (add ``--quick`` for small sizes). Each case
runs in a fresh child process and prints one JSON line; the last lines give the ratios.
Not part of the test run.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from common import best_of, in_child, peak_rss_mb, tmpdir, write_scenario  # noqa: E402


def case_floor(R, Q):
    from riskcalc.hazard.families import lp3_aep
    from riskcalc.config.scenario import load_scenario
    from riskcalc.risk.assess import assess  # noqa: F401

    with tmpdir() as d:
        sc = load_scenario(write_scenario(d, R, Q))
    from riskcalc.hazard.curves import quantity_grid

    grid = quantity_grid(sc.ensemble, n=Q)
    cols = [sc.ensemble.params[k][:, None] for k in ("mean", "sd", "skew")]
    t = best_of(lambda: lp3_aep(grid, *cols))
    return {
        "case": "floor: one vectorized AEP evaluation (R, Q), one thread",
        "R": R,
        "Q": Q,
        "seconds": t,
        "peak_rss_mb": peak_rss_mb(),
    }


def case_chain(R, Q, workers=None):
    from riskcalc.risk.assess import assess
    from riskcalc.config.scenario import load_scenario

    with tmpdir() as d:
        sc = load_scenario(write_scenario(d, R, Q))
        t = best_of(lambda: assess(sc, workers=workers), repeat=2 if R * Q > 1e8 else 3)
    return {
        "case": f"riskcalc full chain (assess, 2 failure modes), workers={workers or 'default'}",
        "R": R,
        "Q": Q,
        "seconds": t,
        "peak_rss_mb": peak_rss_mb(),
    }


def case_loop(R, Q, subset=2000):
    """The loop an analyst would write: per realization, scipy.stats sf, np.interp, a trapezoid."""
    from scipy import stats

    from riskcalc.hazard.curves import quantity_grid
    from riskcalc.config.scenario import load_scenario

    with tmpdir() as d:
        sc = load_scenario(write_scenario(d, R, Q))
    ens, model = sc.ensemble, sc.model
    grid = quantity_grid(ens, n=Q)
    n = min(R, subset)

    def loop():
        out = []
        rq, rh = model.rating.discharge, model.rating.stage
        cs = model.consequences
        for r in range(n):
            p = stats.pearson3.sf(
                np.log10(grid), ens.params["skew"][r], loc=ens.params["mean"][r], scale=ens.params["sd"][r]
            )
            h = np.interp(np.log10(grid), np.log10(rq), rh)
            p1 = stats.lognorm.cdf(np.maximum(h - 5.0, 1e-12), 0.5, scale=0.4)
            p2 = stats.norm.cdf(h, 4.5, 1.0) * stats.norm.cdf(h, 3.0, 2.0)
            pf = 1 - (1 - p1) * (1 - p2)
            db = np.interp(h, cs.stage, cs.damage_breach)
            dn = np.interp(h, cs.stage, cs.damage_no_breach)
            lb = np.interp(h, cs.stage, cs.life_loss_breach)
            afp = np.trapezoid(pf, 1 - p)
            ead = np.trapezoid(pf * db + (1 - pf) * dn, 1 - p)
            all_ = np.trapezoid(pf * lb, 1 - p)
            out.append((afp, ead, all_))
        return out

    t = best_of(loop, repeat=1) * (R / n)
    return {
        "case": f"plain loop (scipy.stats per realization; timed on {n}, scaled to R)",
        "R": R,
        "Q": Q,
        "seconds": t,
        "peak_rss_mb": peak_rss_mb(),
    }


def case_memory(R, Q):
    from riskcalc.risk.assess import assess
    from riskcalc.config.scenario import load_scenario

    import time

    with tmpdir() as d:
        sc = load_scenario(write_scenario(d, R, Q))
        t0 = time.perf_counter()
        assess(sc)
    return {
        "case": "peak memory, chunked full chain",
        "R": R,
        "Q": Q,
        "seconds": time.perf_counter() - t0,
        "peak_rss_mb": peak_rss_mb(),
    }


def case_grid(R, Q):
    """AFP and EAD on a coarser grid against a 20,000-point reference."""
    from riskcalc.risk.assess import assess
    from riskcalc.config.scenario import load_scenario

    d = tmpdir()
    sc = load_scenario(write_scenario(d.name, R, Q))
    ref = assess(sc, grid_points=20000).headline
    out = {"case": "smaller grid accuracy", "R": R, "reference_Q": 20000, "points": {}}
    for q in (250, 500, 1000, 2000):
        h = assess(sc, grid_points=q).headline
        t = best_of(lambda q=q: assess(sc, grid_points=q), repeat=2)
        out["points"][q] = {
            "seconds": t,
            "afp_rel_error": abs(
                h["annual_failure_probability"]["predictive"] / ref["annual_failure_probability"]["predictive"] - 1
            ),
            "ead_rel_error": abs(
                h["expected_annual_damage"]["predictive"] / ref["expected_annual_damage"]["predictive"] - 1
            ),
        }
    return out


def case_propagate(R, Q):
    """The Q-dependent core alone: the chunked Monte Carlo over a fixed grid (no band, no grid search)."""
    from riskcalc.hazard.curves import quantity_grid
    from riskcalc.risk.propagate import propagate
    from riskcalc.config.scenario import load_scenario

    with tmpdir() as d:
        sc = load_scenario(write_scenario(d, R, Q))
    grid = quantity_grid(sc.ensemble, n=Q)
    t = best_of(lambda: propagate(sc.ensemble, sc.model, grid, seed=1))
    return {"case": "propagation only", "R": R, "Q": Q, "seconds": t, "peak_rss_mb": peak_rss_mb()}


CASES = {
    "propagate": case_propagate,
    "floor": case_floor,
    "chain": case_chain,
    "chain1": lambda R, Q: case_chain(R, Q, workers=1),
    "loop": case_loop,
    "memory": case_memory,
    "grid": case_grid,
}


def fit_exponent(x, t):
    return float(np.polyfit(np.log(x), np.log(t), 1)[0])


def growth():
    """Times against R and Q, whole chain and propagation alone, with log-log exponents."""
    Rs, Qs = [1000, 3000, 10000, 30000, 100000], [500, 1000, 2000, 4000, 8000]
    for case, label in (("chain", "whole chain"), ("propagate", "propagation only")):
        tR = [in_child(__file__, case, r, 2000)["seconds"] for r in Rs]
        tQ = [in_child(__file__, case, 10000, q)["seconds"] for q in Qs]
        print(
            json.dumps(
                {"case": f"growth in R (Q = 2000), {label}", "R": Rs, "seconds": tR, "exponent": fit_exponent(Rs, tR)}
            )
        )
        print(
            json.dumps(
                {"case": f"growth in Q (R = 10000), {label}", "Q": Qs, "seconds": tQ, "exponent": fit_exponent(Qs, tQ)}
            )
        )


def main(quick=False):
    R, Q = (4000, 1000) if quick else (20000, 2000)
    res = {}
    for name in ("floor", "chain", "chain1", "loop"):
        res[name] = in_child(__file__, name, R, Q)
        print(json.dumps(res[name]))
    mem = in_child(__file__, "memory", 100_000 if quick else 1_000_000, 500 if quick else 1000)
    print(json.dumps(mem))
    grid = in_child(__file__, "grid", 2000 if quick else 5000, 2000)
    print(json.dumps(grid))
    small = in_child(__file__, "chain", R, 250)
    print(json.dumps({**small, "case": "riskcalc full chain on a 250-point grid (AFP, EAD within 0.1 % of 20,000)"}))
    if not quick:
        growth()
    print(
        json.dumps(
            {
                "case": "ratios",
                "chain_over_floor": res["chain"]["seconds"] / res["floor"]["seconds"],
                "chain_one_thread_over_floor": res["chain1"]["seconds"] / res["floor"]["seconds"],
                "loop_over_chain": res["loop"]["seconds"] / res["chain"]["seconds"],
                "loop_over_chain_250_point_grid": res["loop"]["seconds"] / small["seconds"],
                "memory_R": mem["R"],
                "memory_peak_mb": mem["peak_rss_mb"],
            }
        )
    )


if __name__ == "__main__":
    args = sys.argv[1:]
    if args and args[0] in CASES:
        print(json.dumps(CASES[args[0]](int(args[1]), int(args[2]))))
    elif "--growth" in args:
        growth()
    else:
        main(quick="--quick" in args)
