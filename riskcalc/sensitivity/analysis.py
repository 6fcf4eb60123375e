"""Sobol' indices and Morris screening of a finished run: the sensitivity report.

References
----------
.. [1] Saltelli, A., Annoni, P., Azzini, I., Campolongo, F., Ratto, M. and
   Tarantola, S. (2010). Variance based sensitivity analysis of model output.
   Computer Physics Communications 181(2), 259-270. doi:10.1016/j.cpc.2009.09.018
.. [2] Morris, M.D. (1991). Factorial sampling plans for preliminary
   computational experiments. Technometrics 33(2), 161-174."""

from __future__ import annotations

import time
from dataclasses import dataclass, field
import numpy as np
import pandas as pd
from ..errors import InputError
from ..io import to_plain as _plain
from .salib import WIDE_INTERVAL, max_conf_width, morris_screening, sobol_indices, sobol_until_converged
from ..config.settings import SensitivitySettings, read_settings
from .evaluator import OUTPUT_KEYS, RiskDriver, driver_for_result
from .factors import MORRIS_TAIL, scenario_factors, select_factors
from .gap import gap_by_source


_SHORT = dict(zip(OUTPUT_KEYS, ("AFP", "EAD", "ALL")))


@dataclass(frozen=True, eq=False)
class SensitivityReport:
    """Sobol' indices of AFP, EAD and ALL, the gap by source, and optionally Morris statistics.

    Attributes
    ----------
    factors : tuple of RiskFactor
    sobol : dict of str to SobolResult
        Keyed by :data:`OUTPUT_KEYS`.
    settings : SensitivitySettings
    n : int
        Base sample size of the indices (after any doubling).
    converged : bool or None
        With a target width: whether every half-width fell under it; None without one.
    history : tuple of (int, dict)
        ``(N, {output: largest half-width})`` for every N tried.
    gap : pandas.DataFrame
        :func:`gap_by_source`.
    morris : dict of str to MorrisResult or None
    warnings, notes : tuple of str
    seconds : dict
        Wall time of the steps (not written to the outputs, which stay byte-stable).
    provenance : dict
    """

    factors: tuple
    sobol: dict
    settings: SensitivitySettings
    n: int
    converged: bool | None
    history: tuple
    gap: pd.DataFrame
    morris: dict | None = None
    warnings: tuple = ()
    notes: tuple = ()
    seconds: dict = field(default_factory=dict)
    provenance: dict = field(default_factory=dict)

    def summary(self) -> dict:
        """``{output: {factor: {"S1", "S1_conf", "ST", "ST_conf"}}}`` with plain floats (for summary.json)."""
        return {k: r.as_dict() for k, r in self.sobol.items()}

    def frame(self) -> pd.DataFrame:
        """Tidy Sobol' table: output, factor, source, S1, S1_conf, ST, ST_conf, n_base_samples, conf_level."""
        src: dict = {}
        for f in self.factors:
            key = f.group or f.name
            src.setdefault(key, [])
            if f.source not in src[key]:
                src[key].append(f.source)
        frames = []
        for r in self.sobol.values():
            df = r.to_frame()
            df.insert(2, "source", ["+".join(src.get(f, [])) for f in df["factor"]])
            df["n_base_samples"] = r.n
            df["conf_level"] = r.conf_level
            frames.append(df)
        return pd.concat(frames, ignore_index=True)

    def s2_frame(self) -> pd.DataFrame:
        """Second-order indices, one row per output and pair (empty without second order)."""
        return pd.concat([r.s2_frame() for r in self.sobol.values()], ignore_index=True)

    def gap_frame(self) -> pd.DataFrame:
        """The mean-mode gap by source (:func:`gap_by_source`)."""
        return self.gap.copy()

    def morris_frame(self) -> pd.DataFrame:
        """Morris statistics, one row per output and factor (empty without Morris)."""
        cols = ["output", "factor", "mu", "mu_star", "mu_star_conf", "sigma"]
        if not self.morris:
            return pd.DataFrame(columns=cols)
        return pd.concat([m.to_frame() for m in self.morris.values()], ignore_index=True)

    def as_json(self) -> dict:
        """The sensitivity.json structure (non-finite numbers as null)."""
        from ..outputs.labels import CAUTION as CAUTION_TEXT

        s = self.settings
        out = {
            "sobol": self.summary(),
            "factors": [
                {"name": f.name, "source": f.source, "distribution": f.description, "group": f.group}
                for f in self.factors
            ],
            "settings": {
                "n": self.n,
                "n_start": s.n,
                "seed": s.seed,
                "second_order": s.second_order,
                "n_resamples": s.n_resamples,
                "conf_level": s.conf_level,
                "target_width": s.target_width,
                "n_max": s.n_max,
                "groups": {g: list(m) for g, m in s.groups},
                "estimators": (
                    "Janon et al. (2014) first order and total (one minus the closed index of the others) on "
                    "Saltelli's design (SALib sampling)"
                    if s.estimator == "janon"
                    else "Saltelli et al. (2010) first order, Jansen total order (SALib)"
                ),
                "estimator": s.estimator,
                "grow": s.grow,
                "target": s.target,
            },
            "convergence": {
                "converged": self.converged,
                "warn_above_half_width": WIDE_INTERVAL,
                "history": [{"n": n, "largest_half_width": w} for n, w in self.history],
            },
            "mean_mode_gap_by_source": self.gap.to_dict(orient="records"),
            "morris": None if not self.morris else {k: m.as_dict() for k, m in self.morris.items()},
            "warnings": list(self.warnings),
            "notes": list(self.notes),
            "provenance": self.provenance,
            "caution": CAUTION_TEXT,
        }
        if s.second_order:
            out["sobol_second_order"] = self.s2_frame().to_dict(orient="records")
        return _plain(out)


def _interval_warnings(results, limit=WIDE_INTERVAL):
    msgs = []
    for k, r in results.items():
        conf = np.r_[r.S1_conf, r.ST_conf]
        if np.all(np.isnan(conf)):
            continue
        wide = np.flatnonzero(conf > limit)
        if wide.size:
            j = int(np.nanargmax(conf))
            d = len(r.factors)
            which = ("S1" if j < d else "ST") + f" of '{r.factors[j % d]}'"
            msgs.append(
                f"{_SHORT.get(k, k)} sensitivity: {wide.size} of {conf.size} confidence half-widths exceed "
                f"{limit} at N = {r.n} (largest {conf[j]:.3f}, {which}); raise sensitivity.n or set "
                "sensitivity.target_width"
            )
    return msgs


def _coarse_ok(result, settings) -> bool:
    """True when the grid of every second node is accurate enough for the indices: its grid error, 2^p times
    the run's (the error of a rule of order p scales with h^p), is below ``settings.grid_target_error``."""
    from ..risk.grid_error import ORDER

    err = (getattr(result, "extras", None) or {}).get("grid_error")
    if err is None or result.grid.size < 2 * 50:
        return False
    return 2.0**ORDER * err.largest_relative <= settings.grid_target_error


def sensitivity_for_run(
    scenario,
    result,
    settings: SensitivitySettings | None = None,
    *,
    workers=None,
    driver: RiskDriver | None = None,
    progress=None,
) -> SensitivityReport:
    """Sobol' indices of AFP, EAD and ALL (and the gap by source) for a finished run.

    ``riskcalc run`` calls this only when the scenario's ``[sensitivity]`` table
    has ``enabled = true`` (:func:`sensitivity_enabled`); ``riskcalc sensitivity``
    always does.

    Parameters
    ----------
    scenario : Scenario
    result : RiskResult
        The run of ``scenario`` (its grid, mode curve and headline figures are used).
    settings : SensitivitySettings, optional
        Default: :func:`read_settings` of ``scenario.sensitivity``.
    workers : int, optional
    driver : RiskDriver, optional
        A driver already built on ``result`` (saves the precomputation).
    progress : callable, optional
        ``progress(model runs done, model runs at n_max)`` while the Sobol' sample grows.

    Returns
    -------
    SensitivityReport

    Raises
    ------
    InputError
        A bad ``[sensitivity]`` table, naming the key.
    """
    t0 = time.perf_counter()
    all_factors = scenario_factors(scenario.model)
    if settings is None:
        settings = read_settings(scenario.sensitivity, scenario.path, default_seed=scenario.seed)
    factors = select_factors(all_factors, settings, scenario.path)
    drv = (
        driver
        if driver is not None
        else driver_for_result(result, workers=workers, coarse=_coarse_ok(result, settings))
    )
    t1 = time.perf_counter()
    model = drv.unit_model(factors)
    sal = [f.salib_factor() for f in factors]
    notes, warns = [], []
    try:
        if settings.target is not None:
            conv = sobol_until_converged(
                model,
                sal,
                n_start=settings.n,
                target_width=settings.target,
                n_max=settings.n_max,
                seed=settings.seed,
                second_order=settings.second_order,
                n_resamples=settings.n_resamples,
                conf_level=settings.conf_level,
                estimator=settings.estimator,
                progress=progress,
            )
            sobol, n, converged, history = conv.result, conv.n, conv.converged, conv.history
            if not converged:
                warns.append(conv.warnings[-1])
        else:
            sobol = sobol_indices(
                model,
                sal,
                settings.n,
                seed=settings.seed,
                second_order=settings.second_order,
                n_resamples=settings.n_resamples,
                conf_level=settings.conf_level,
                estimator=settings.estimator,
            )
            n, converged = settings.n, None
            history = ((n, {k: max_conf_width(r) for k, r in sobol.items()}),)
    except ValueError as exc:  # group names clashing with factor names, etc.
        raise InputError(str(exc), scenario.path, key="sensitivity") from None
    warns += _interval_warnings(sobol)
    for k, r in sobol.items():
        if r.note:
            notes.append(f"{_SHORT[k]}: {r.note}")
    t2 = time.perf_counter()
    morris = None
    if settings.morris:
        mf = [f.salib_factor(morris=True) for f in factors]
        morris = morris_screening(model, mf, settings.morris_trajectories, settings.morris_levels, seed=settings.seed)
        notes.append(
            f"Morris screening: {settings.morris_trajectories} trajectories, {settings.morris_levels} "
            f"levels; unbounded factors swept over probabilities [{MORRIS_TAIL:g}, {1 - MORRIS_TAIL:g}]; the "
            "hazard realization ordered by its nominal AFP"
        )
    t3 = time.perf_counter()
    gap = gap_by_source(result, drv, all_factors, seed=settings.seed, samples=settings.gap_samples)
    notes.append(
        "factors enter as probabilities in (0, 1) mapped through their quantile functions; the hazard "
        "realization through the inverse CDF of the weights along the realizations sorted by nominal AFP"
    )
    notes.append("natural variability of stage (aleatory) is integrated in every sample and is not a factor")
    t4 = time.perf_counter()
    if drv.grid.size < result.grid.size:
        notes.append(
            f"indices computed on the grid of every second node ({drv.grid.size} of {result.grid.size} points), "
            f"whose grid error is below {100 * settings.grid_target_error:g} % of every headline figure"
        )
    prov = {
        "seed": settings.seed,
        "realizations": drv.size,
        "grid_points": int(drv.grid.size),
        "model_evaluations": int(next(iter(sobol.values())).n_evaluations),
    }
    return SensitivityReport(
        factors=factors,
        sobol=sobol,
        settings=settings,
        n=n,
        converged=converged,
        history=tuple(history),
        gap=gap,
        morris=morris,
        warnings=tuple(warns),
        notes=tuple(notes),
        provenance=prov,
        seconds={"precompute": t1 - t0, "sobol": t2 - t1, "morris": t3 - t2, "gap": t4 - t3},
    )
