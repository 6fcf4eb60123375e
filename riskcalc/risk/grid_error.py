"""How accurate the grid is: a Richardson-style estimate of the discretization error, and the grid it chooses.

Every headline figure is a sum over the grid's cells, ``I_h = sum_p w_p g(x_p)``. Computed again on
the grid that keeps every second node (the cells merged in pairs, the first and last nodes kept), the
same integral gives ``I_2h``. The masses of the coarse grid are differences of the same nodal AEPs, so
no new AEP evaluation is needed; only the response is evaluated at the coarse cells' points. For a rule
of order p (error ~ C h^p) Richardson's argument gives the error of the fine value

    e_h ~ F_s |I_2h - I_h| / (2^p - 1),

with p = 2 for the midpoint and trapezoid rules on a smooth integrand and the safety factor
F_s = 1.25 of Roache's grid convergence index [2]_. A tabulated fragility or consequence curve has
kinks, where the local order falls; the grid places nodes at the table breakpoints. Against a
32,000-point reference on the bundled scenarios the unscaled estimate was 0.95 to 1.2 times the true
error from 1,000 points up and never below 0.9 times it from 500 points up (it can be far above it
where errors of opposite sign cancel in the fine value); see ``docs/performance.md``. The tests check
that the estimate with F_s is not below 0.8 times the true error at the chosen grids.

The predictive figure with knowledge uncertainty is the mean over draws of response parameters,
which are sampled independently of the hazard realization. The risk is linear in the masses, so
that mean equals the mean over parameter draws of the risk on the predictive masses; its grid error
is estimated on :data:`SAMPLE_DRAWS` seeded parameter draws on the predictive masses, the same draws
on both grids (paired, so the Monte Carlo noise of the draws cancels in the difference).

:func:`choose_points` picks the default grid: the smallest of ``min_points`` times 2^k (at most
``max_points``) whose estimated grid error is below the target share of every headline figure on the
predictive and mode curves.

References
----------
.. [1] Richardson, L.F. (1911). The approximate arithmetical solution by finite differences of physical
   problems involving differential equations. Phil. Trans. R. Soc. A 210, 307-357.
.. [2] Roache, P.J. (1994). Perspective: a method for uniform reporting of grid refinement studies.
   J. Fluids Eng. 116(3), 405-413 (the grid convergence index, the same estimate with a safety factor).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .integrate import cell_masses, evaluation_points, point_masses

__all__ = [
    "ORDER",
    "SAFETY",
    "TARGET",
    "MIN_POINTS",
    "MAX_POINTS",
    "SAMPLE_DRAWS",
    "GridError",
    "coarse_nodes",
    "estimate",
    "choose_points",
    "points_given",
    "predictive_aep",
    "with_monte_carlo",
    "grid_error_warnings",
]

#: Order of the integration rule assumed by the estimate (midpoint and trapezoid: 2).
ORDER = 2.0
#: Safety factor on the Richardson estimate (Roache 1994, for a study of three or more grids).
SAFETY = 1.25
#: Default target: the grid error of every headline figure below this share of the figure.
TARGET = 1e-3
#: First and largest grid sizes tried by :func:`choose_points`.
MIN_POINTS = 250
MAX_POINTS = 16_000
#: Response-parameter draws for the grid error of a predictive figure with knowledge uncertainty.
SAMPLE_DRAWS = 256
#: Draws for the trial grids of :func:`choose_points` (paired on both grids, so few are needed).
PILOT_DRAWS = 64
#: Ratio of successive trial grid sizes. Doubling keeps the trial grids nested in the way the estimate
#: was checked; with sqrt(2) steps the levee's 370-point grid had its EAD error underestimated by half
#: (the decimated grid loses table breakpoints unevenly), so the finer steps were not adopted.
GROWTH = 2.0

#: Headline outputs of the chain and their summary.json keys.
_KEYS = (("afp", "annual_failure_probability"), ("ead", "expected_annual_damage"), ("all", "annualized_life_loss"))


def coarse_nodes(n: int) -> np.ndarray:
    """Indices of every second node of an ``n``-node grid, the first and the last always kept."""
    if n < 3:
        raise ValueError(f"a grid of {n} nodes has no coarser grid inside it")
    idx = np.arange(0, n, 2)
    if idx[-1] != n - 1:
        idx = np.append(idx, n - 1)
    return idx


@dataclass(frozen=True)
class GridError:
    """Estimated discretization error of the headline figures (the ``grid_error`` table of summary.json).

    Attributes
    ----------
    grid_points, coarse_points : int
        Nodes of the run's grid and of the grid of every second node.
    order : float
        Order p of the rule assumed in ``|I_2h - I_h| / (2^p - 1)``.
    target : float
        Target share of each headline figure.
    choice : str
        ``"given"`` (``[grid] points`` in the scenario) or ``"adaptive"`` (:func:`choose_points`).
    tried : tuple of (int, float)
        For an adaptive grid: every size tried and its largest relative error estimate.
    figures : dict
        ``{summary key: {"predictive": e, "mode": e, "median_curve": e, "relative_predictive": e / |I|,
        "relative_largest": largest share over the three curves, "predictive_coarse_grid": I_2h}}``
        (errors in the figure's units).
    sample_draws : int
        Response-parameter draws behind the predictive estimate (0: the nominal response).
    """

    grid_points: int
    coarse_points: int
    order: float
    target: float
    choice: str
    figures: dict
    sample_draws: int
    tried: tuple = field(default=())

    @property
    def largest_relative(self) -> float:
        vals = [v["relative_largest"] for v in self.figures.values() if np.isfinite(v["relative_largest"])]
        return float(max(vals)) if vals else 0.0

    @property
    def within_target(self) -> bool:
        return self.largest_relative <= self.target

    def as_dict(self) -> dict:
        return {
            "method": "Richardson: the same integrals on every second grid node, F_s |I_2h - I_h| / (2^p - 1)",
            "order": self.order,
            "safety_factor": SAFETY,
            "grid_points": self.grid_points,
            "coarse_points": self.coarse_points,
            "choice": self.choice,
            "target_relative": self.target,
            "largest_relative": self.largest_relative,
            "within_target": self.within_target,
            "sample_draws": self.sample_draws,
            "tried": [{"grid_points": q, "largest_relative": e} for q, e in self.tried],
            **{k: dict(v) for k, v in self.figures.items()},
        }


def _rel(e, v):
    return abs(e) / abs(v) if v != 0 else (0.0 if e == 0 else float("inf"))


def _pair(chain, grid, log_spacing, rule):
    idx = coarse_nodes(grid.size)
    on_f = chain.on(evaluation_points(grid, log_spacing, rule))
    on_c = chain.on(evaluation_points(grid[idx], log_spacing, rule))
    return idx, on_f, on_c


def _integrals(on, masses, params):
    """Headline integrals (3,) on one measure: nominal response, or the mean over ``params``."""
    from ..response.chain import HEADLINE_OUTPUTS

    if params is None:
        return masses @ on.nominal_integrands(HEADLINE_OUTPUTS)
    return on.risk(masses, params, HEADLINE_OUTPUTS).mean(axis=0)


def estimate(
    chain,
    grid,
    aeps: dict,
    *,
    rule="midpoint",
    log_spacing=True,
    seed=1,
    draws=SAMPLE_DRAWS,
    target=TARGET,
    choice="given",
    tried=(),
) -> GridError:
    """Grid error of the headline figures on each curve, from the same integrals on every second node.

    Parameters
    ----------
    chain : ResponseChain
    grid : ndarray (Q,)
    aeps : dict of str to ndarray (Q,)
        AEP at the grid nodes of each curve: ``"predictive"`` (required), ``"mode"``, ``"median_curve"``.
    rule : {"midpoint", "trapezoid"}
    log_spacing : bool
    seed : int
        Seeds the response-parameter draws (used only with knowledge uncertainty).
    draws : int
        Number of response-parameter draws for the predictive figure.
    target : float
        Target share; reported, and used by :func:`choose_points`.

    Returns
    -------
    GridError
    """
    grid = np.asarray(grid, float)
    idx, on_f, on_c = _pair(chain, grid, log_spacing, rule)
    params = None
    if chain.has_knowledge_uncertainty and draws > 0:
        params = chain.uncertain.sample(np.random.default_rng(seed), int(draws))
    div = (2.0**ORDER - 1.0) / SAFETY
    per_curve = {}
    for name, p in aeps.items():
        if p is None:
            continue
        p = np.asarray(p, float)
        mf = point_masses(cell_masses(p), rule)
        mc = point_masses(cell_masses(p[idx]), rule)
        prm = params if name == "predictive" else None
        fine, coarse = _integrals(on_f, mf, prm), _integrals(on_c, mc, prm)
        per_curve[name] = (fine, coarse, np.abs(coarse - fine) / div)
    figures = {}
    for i, (_, key) in enumerate(_KEYS):
        d: dict = {}
        rel = []
        for name, (fine, coarse, err) in per_curve.items():
            d[name] = float(err[i])
            rel.append(_rel(err[i], fine[i]))
            if name == "predictive":
                d["relative_predictive"] = rel[-1]
                d["predictive_coarse_grid"] = float(coarse[i])
        d["relative_largest"] = float(max(rel)) if rel else 0.0
        figures[key] = d
    return GridError(
        grid_points=int(grid.size),
        coarse_points=int(idx.size),
        order=ORDER,
        target=float(target),
        choice=choice,
        figures=figures,
        sample_draws=int(params.size) if params is not None else 0,
        tried=tuple(tried),
    )


def points_given(scenario) -> bool:
    """True when the scenario's ``[grid]`` table (or its base) sets ``points``: the grid is then fixed."""
    raw = getattr(scenario, "raw", None) or {}
    g = raw.get("grid") or {}
    return isinstance(g, dict) and g.get("points") is not None


def _grid_settings(scenario):
    g = scenario.grid
    return (
        float(g.get("target_error") or TARGET),
        int(g.get("min_points") or MIN_POINTS),
        int(g.get("max_points") or MAX_POINTS),
    )


def predictive_aep(ens, grid, workers=None) -> np.ndarray:
    """The predictive AEP at the grid nodes, Σ_r w_r p_r(x), in chunks of realizations on threads (Q,)."""
    from ..hazard.curves import CHUNK_BYTES, row_chunks
    from ..parallel import map_in_threads

    chunks = list(row_chunks(ens.size, grid.size, CHUNK_BYTES))
    parts = map_in_threads(lambda rows: ens.weights[rows] @ ens.aep(grid, rows), chunks, workers)
    return np.sum(parts, axis=0)


def choose_points(scenario, chains=None, *, workers=None) -> tuple[int, tuple]:
    """The smallest grid size whose grid error is below the target on the predictive and mode curves.

    Sizes ``min_points * 2^k`` are tried up to ``max_points`` (``[grid] min_points``, ``max_points``,
    ``target_error``; defaults :data:`MIN_POINTS`, :data:`MAX_POINTS`, :data:`TARGET`); each costs one AEP
    evaluation of the ensemble on that grid and the response at its points. With several chains (the
    plans of a comparison) the largest error over the chains decides.

    Returns
    -------
    points : int
        The size to pass to :func:`riskcalc.risk.assess.build_grid` (its grid adds the breakpoints).
    tried : tuple of (int, float)
        Each size tried with its largest relative error estimate.
    """
    from ..hazard.curves import mode_curve
    from .assess import build_grid

    ens = scenario.ensemble
    chains = tuple(chains) if chains else (scenario.model,)
    target, q, q_max = _grid_settings(scenario)
    mode_one, _ = mode_curve(ens, scenario.mode_params or None)
    tried = []
    q0, k = q, 0
    while True:
        grid = build_grid(ens, chains, scenario.grid, scenario.mode_params, points=q)
        aeps = {"predictive": predictive_aep(ens, grid, workers), "mode": mode_one.aep(grid)[0]}
        worst = 0.0
        for chain in chains:
            est = estimate(
                chain,
                grid,
                aeps,
                rule=scenario.grid["rule"],
                log_spacing=ens.log_scale,
                seed=scenario.seed or 1,
                draws=PILOT_DRAWS,
            )
            worst = max(worst, est.largest_relative)
        tried.append((int(grid.size), worst))
        k += 1
        nxt = int(round(q0 * GROWTH**k))
        if worst <= target or nxt > q_max:
            return q, tuple(tried)
        q = nxt


def with_monte_carlo(err: GridError, headline: dict) -> GridError:
    """``err`` with each figure's Monte Carlo standard error beside its grid error (same units)."""
    import dataclasses

    figures = {}
    for key, d in err.figures.items():
        h = headline.get(key)
        se = None if h is None else h.mc_standard_error
        pv = None if h is None else h.predictive
        figures[key] = {
            **d,
            "monte_carlo_standard_error": se,
            "relative_monte_carlo_standard_error": None if se is None or not pv else abs(se) / abs(pv),
        }
    return dataclasses.replace(err, figures=figures)


def grid_error_warnings(err: GridError) -> list[str]:
    """One warning when a headline figure's grid error estimate is above the target share."""
    if err.within_target:
        return []
    worst = max(err.figures, key=lambda k: err.figures[k]["relative_largest"])
    how = "raise [grid] points" if err.choice == "given" else "raise [grid] max_points"
    return [
        f"grid error of {worst.replace('_', ' ')} is {100 * err.figures[worst]['relative_largest']:.2g} % of the "
        f"figure on {err.grid_points} grid points, above the target {100 * err.target:g} %; {how}"
    ]
