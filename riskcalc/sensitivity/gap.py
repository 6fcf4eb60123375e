"""The mean-mode gap by source: each source of uncertainty switched on alone on top of the mode case.

References
----------
.. [1] Owen, A.B. (1997). Scrambled net variance for integrals of smooth
   functions. Annals of Statistics 25(4), 1541-1562. doi:10.1214/aos/1069362388"""

from __future__ import annotations

import numpy as np
import pandas as pd
from ..risk.integrate import cell_masses, point_masses
from .evaluator import OUTPUT_KEYS, RiskDriver
from .factors import SOURCES, scenario_factors


def _units(currency):
    return {
        "annual_failure_probability": "per year",
        "expected_annual_damage": f"{currency} per year",
        "annualized_life_loss": "lives per year",
    }


def _qmc_unit(d, n, seed):
    from scipy.stats import qmc

    return qmc.Sobol(d, scramble=True, seed=np.random.default_rng(seed)).random(n)


def gap_by_source(result, driver: RiskDriver, factors=None, *, seed: int = 1, samples: int = 1024) -> pd.DataFrame:
    """The mean-mode gap with each source of uncertainty switched on alone, and all together.

    Parameters
    ----------
    result : RiskResult
    driver : RiskDriver
        Built on the run's grid (:func:`driver_for_result`).
    factors : sequence of RiskFactor, optional
        Default :func:`scenario_factors` of the run's model (groups are ignored here).
    seed : int
        Seeds the scrambled Sobol' points of the response sources.
    samples : int
        Quasi-Monte Carlo points per response source (a power of two).

    Returns
    -------
    pandas.DataFrame
        Columns ``source``, ``output``, ``unit``, ``predictive``, ``mode``, ``gap``
        (predictive - mode), ``ratio`` (predictive / mode; NaN when mode is 0),
        ``share_of_total_gap`` (gap / the ``all`` row's gap).

    Notes
    -----
    ``mode`` is the run's mode result (mode curve, nominal response) in every row.
    ``hazard``: the predictive masses with the nominal response (the run's
    ``predictive_nominal_response``). A response source (``rating``,
    ``fragility``, ``consequences``): the mean over that source's factors on
    the mode curve, the others nominal, by scrambled Sobol' quasi-Monte Carlo
    (Owen 1997). ``all``: the run's predictive result. Single-source gaps need
    not add up to the total: sources interact (e.g. a wider hazard makes a
    fragility shift matter more).
    """
    factors = scenario_factors(driver.chain) if factors is None else tuple(factors)
    head = result.headline
    units = _units(result.scenario.units.get("currency", "usd"))
    aep_mode = result.curves.aep_mode
    if driver.grid.size != result.grid.size:  # a driver on the grid of every second node (a subset of the run's)
        aep_mode = result.curves.mode.aep(driver.grid)[0]
    m_mode = point_masses(cell_masses(aep_mode), driver.rule)[None, :]
    rows = []
    mode_vals = {k: head[k]["mode"] for k in OUTPUT_KEYS}
    pred = {"hazard": {k: head[k]["predictive_nominal_response"] for k in OUTPUT_KEYS}}
    for i, src in enumerate(SOURCES[1:], start=1):
        fs = [f for f in factors if f.source == src]
        if not fs:
            continue
        X = _qmc_unit(len(fs), samples, seed + i)
        _, d = driver.params_from_unit(fs, X)
        vals = driver.evaluate(None, d, masses=m_mode)
        pred[src] = {k: float(np.mean(v)) for k, v in vals.items()}
    pred["all"] = {k: head[k]["predictive"] for k in OUTPUT_KEYS}
    total = {k: pred["all"][k] - mode_vals[k] for k in OUTPUT_KEYS}
    for src, vals in pred.items():
        for k in OUTPUT_KEYS:
            p, m = float(vals[k]), float(mode_vals[k])
            gap = p - m
            rows.append(
                {
                    "source": src,
                    "output": k,
                    "unit": units[k],
                    "predictive": p,
                    "mode": m,
                    "gap": gap,
                    "ratio": p / m if m > 0 else float("nan"),
                    "share_of_total_gap": gap / total[k] if total[k] != 0 else float("nan"),
                }
            )
    return pd.DataFrame(
        rows, columns=["source", "output", "unit", "predictive", "mode", "gap", "ratio", "share_of_total_gap"]
    )
