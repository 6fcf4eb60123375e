"""The epistemic Monte Carlo: every realization of the hazard through the chain, in chunks.

Each realization r contributes ``k = draws_per_realization`` draws of weight
w_r / k. Without knowledge uncertainty in the response, one draw per
realization is exact and the risks are one matrix product per chunk,
masses (c, Q) @ integrands (Q, K). With knowledge uncertainty each draw has its
own response parameters, sampled from the chain's registry of uncertain inputs
(:meth:`~riskcalc.response.uncertain.UncertainInputs.sample`) with a per-chunk
random stream (``numpy.random.SeedSequence(seed).spawn``), so results do not
depend on the number of worker threads, and evaluated by the one response
chain (:meth:`~riskcalc.response.chain.ChainOnPoints.risk`).

Memory stays bounded: no array larger than a chunk of the (R, Q) masses is
held, whatever R is.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..hazard.curves import CHUNK_BYTES
from ..parallel import default_workers, map_in_threads
from .integrate import cell_masses, evaluation_points, point_masses

__all__ = ["Propagation", "propagate", "chunk_rows_for", "default_workers"]


@dataclass(frozen=True, eq=False)
class Propagation:
    """Per-draw results and the predictive masses.

    Attributes
    ----------
    names : tuple of str
        Output names (columns of ``values``).
    values : ndarray (D, K)
        Risk of every draw.
    weights : ndarray (D,)
    realization : ndarray (D,) of int
        The hazard realization of each draw (0-based index into the ensemble).
    aep_predictive : ndarray (Q,)
        p̄ at the grid nodes.
    masses_predictive : ndarray (Q,)
        Predictive cell masses (the last the tail above the grid).
    points : ndarray (Q,)
        Evaluation points of the integrands (:func:`~riskcalc.risk.integrate.evaluation_points`).
    rule : {"midpoint", "trapezoid"}
    integrands : ndarray (Q, K)
        Nominal integrands at the evaluation points.
    fn_levels : ndarray (L,)
    fn_per_realization : ndarray (R, L) or None
        F-N of every realization (nominal response), when it fits in memory.
    fn_per_draw : ndarray (D, L) or None
        F-N of every draw with its own response parameters (aligned with ``weights``), when it fits in
        memory; without knowledge uncertainty it is ``fn_per_realization``.
    nominal_values : ndarray (R, K)
        Risk of every realization with the nominal response (equals ``values`` without knowledge
        uncertainty); the linearity identity holds for these.
    n_chunks : int
    draws_per_realization : int
    """

    names: tuple
    values: np.ndarray
    weights: np.ndarray
    realization: np.ndarray
    aep_predictive: np.ndarray
    masses_predictive: np.ndarray
    points: np.ndarray
    rule: str
    integrands: np.ndarray
    fn_levels: np.ndarray
    fn_per_realization: np.ndarray | None
    n_chunks: int
    draws_per_realization: int
    nominal_values: np.ndarray | None = None
    fn_per_draw: np.ndarray | None = None

    def column(self, name):
        return self.values[:, self.names.index(name)]

    @property
    def point_masses_predictive(self) -> np.ndarray:
        """Predictive masses on the evaluation points (:func:`~riskcalc.risk.integrate.point_masses`)."""
        return point_masses(self.masses_predictive, self.rule)

    def on_measure(self, cell_masses_) -> np.ndarray:
        """Risks (K,) with the nominal response on any measure given as cell masses (Q,) (mode, median curve)."""
        return point_masses(cell_masses_, self.rule) @ self.integrands


def chunk_rows_for(chain, n_grid, chunk_bytes=CHUNK_BYTES) -> int:
    """Realizations per chunk that keep one chunk's work arrays within ``chunk_bytes``."""
    k = len(chain.output_names())
    nodes = chain.hermite_nodes if chain.natural_active else 1
    per_row = n_grid * (1 + (k * nodes * 2 if chain.has_knowledge_uncertainty else 0))
    return max(1, int(chunk_bytes // (8 * per_row)))


def propagate(
    ens,
    chain,
    grid,
    *,
    seed=None,
    draws_per_realization=1,
    rule="midpoint",
    log_spacing=True,
    workers=None,
    chunk_bytes=CHUNK_BYTES,
    chunk_rows=None,
    fn_levels=None,
    progress=None,
) -> Propagation:
    """Run every realization (and its response draws) through the chain.

    Parameters
    ----------
    ens : HazardEnsemble
    chain : ResponseChain
    grid : ndarray (Q,)
    seed : None, int or numpy.random.SeedSequence
        Seeds the response draws (unused without knowledge uncertainty).
    draws_per_realization : int
        Response draws per realization (k); each draw weighs w_r / k.
    rule : {"midpoint", "trapezoid"}
    workers : int, optional
        Threads for chunks (scipy's special functions release the GIL); default
        :func:`default_workers`. Results are identical for any number.
    chunk_rows : int, optional
        Realizations per chunk (overrides ``chunk_bytes``); runs that must share random streams
        (paired alternatives) pass the same value.
    fn_levels : ndarray (L,), optional
        Life-loss levels of the per-realization F-N table.
    progress : callable, optional
        Called with (chunks done, chunks total).
    """
    grid = np.asarray(grid, float)
    Q = grid.size
    k = int(draws_per_realization)
    if k < 1:
        raise ValueError("draws_per_realization must be at least 1")
    names = chain.output_names()
    K = len(names)
    pts = evaluation_points(grid, log_spacing, rule)
    on = chain.on(pts)
    G = on.nominal_integrands(names)
    knowledge = chain.has_knowledge_uncertainty
    step = int(chunk_rows) if chunk_rows else chunk_rows_for(chain, Q, chunk_bytes)
    R = ens.size
    chunks = [slice(a, min(R, a + step)) for a in range(0, R, step)]
    ss = seed if isinstance(seed, np.random.SeedSequence) else np.random.SeedSequence(seed)
    streams = ss.spawn(len(chunks))
    levels = np.asarray(fn_levels, float) if fn_levels is not None else None
    keep_fn = levels is not None and R * k * levels.size <= 2e7
    fn_matrix = on.fn_integrand(levels)[0] if keep_fn else None

    def work(i):
        rows = chunks[i]
        mc = cell_masses(ens.aep(grid, rows))
        mbar = ens.weights[rows] @ mc
        m = point_masses(mc, rule)
        fn = m @ fn_matrix if keep_fn else None
        nominal = m @ G  # (c, K): per-realization risks with the nominal response
        fn_draws = None
        if not knowledge:
            vals = nominal[:, None, :]  # (c, 1, K)
            fn_draws = None if fn is None else fn[:, None, :]
        else:
            rng = np.random.default_rng(streams[i])
            c = m.shape[0]
            vals = np.empty((c, k, K))
            fn_draws = np.empty((c, k, levels.size)) if keep_fn else None
            for rep in range(k):
                params = chain.uncertain.sample(rng, c)
                vals[:, rep, :] = on.risk(m, params, names)
                if keep_fn:
                    fn_draws[:, rep, :] = on.fn_rows(m, params, levels)
        return mbar, vals, fn, nominal, fn_draws

    results = map_in_threads(work, range(len(chunks)), workers, progress)
    mbar = np.zeros(Q)
    for r in results:  # summed in chunk order: the same for any number of workers
        mbar += r[0]
    vals = np.concatenate([r[1] for r in results], axis=0) if results else np.empty((0, 1, K))
    fn = np.concatenate([r[2] for r in results], axis=0) if keep_fn else None
    fn_draws = np.concatenate([r[4] for r in results], axis=0) if keep_fn else None
    nominal = np.concatenate([r[3] for r in results], axis=0) if results else np.empty((0, K))
    kk = vals.shape[1]
    values = vals.reshape(R * kk, K)
    if fn_draws is not None:
        fn_draws = fn_draws.reshape(R * kk, levels.size)
    weights = np.repeat(ens.weights / kk, kk)
    realization = np.repeat(np.arange(R), kk)
    pbar = np.cumsum(mbar[::-1])[::-1]  # p̄(x_j) = Σ_{i>=j} m̄_i
    return Propagation(
        names=names,
        values=values,
        weights=weights,
        realization=realization,
        aep_predictive=pbar,
        masses_predictive=mbar,
        points=pts,
        rule=rule,
        integrands=G,
        fn_levels=levels if levels is not None else np.array([]),
        fn_per_realization=fn,
        n_chunks=len(chunks),
        draws_per_realization=kk,
        nominal_values=nominal,
        fn_per_draw=fn_draws,
    )
