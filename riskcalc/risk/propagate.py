"""The epistemic Monte Carlo: every realization of the hazard through the chain, in chunks.

Each realization r contributes ``k = draws_per_realization`` draws of weight
w_r / k. Without knowledge uncertainty in the response, one draw per
realization is exact and the risks are one matrix product per chunk,
masses (c, Q) @ integrands (Q, K). With knowledge uncertainty each draw has its
own response parameters, sampled from a per-chunk random stream
(``numpy.random.SeedSequence(seed).spawn``), so results do not depend on the
number of worker threads.

Memory stays bounded: no array larger than a chunk of the (R, Q) masses is
held, whatever R is.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..hazard.curves import CHUNK_BYTES
from .integrate import cell_masses, cell_points
from ..parallel import default_workers, map_in_threads

__all__ = ["Propagation", "propagate", "cell_integrands", "cell_fn_matrix", "chunk_rows_for", "default_workers"]


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
        The hazard realization of each draw.
    aep_predictive : ndarray (Q,)
        p̄ at the grid nodes.
    masses_predictive : ndarray (Q,)
    integrands : ndarray (Q, K)
        Nominal cell integrands.
    fn_levels : ndarray (L,)
    fn_per_realization : ndarray (R, L) or None
        F-N of every realization (nominal response), when it fits in memory.
    nominal_values : ndarray (R, K)
        Risk of every realization with the nominal response (equals ``values`` without knowledge
        uncertainty); the linearity identity holds for these.
    n_chunks : int
    """

    names: tuple
    values: np.ndarray
    weights: np.ndarray
    realization: np.ndarray
    aep_predictive: np.ndarray
    masses_predictive: np.ndarray
    integrands: np.ndarray
    fn_levels: np.ndarray
    fn_per_realization: np.ndarray | None
    n_chunks: int
    draws_per_realization: int
    nominal_values: np.ndarray | None = None

    def column(self, name):
        return self.values[:, self.names.index(name)]


def chunk_rows_for(model, n_grid, chunk_bytes=CHUNK_BYTES) -> int:
    """Realizations per chunk that keep one chunk's work arrays within ``chunk_bytes``."""
    k = len(model.output_names())
    nodes = model.hermite_nodes if (model.natural is not None and model.natural.active) else 1
    per_row = n_grid * (1 + (k * nodes * 2 if model.has_knowledge_uncertainty else 0))
    return max(1, int(chunk_bytes // (8 * per_row)))


def cell_integrands(model, grid, rule="midpoint", log_spacing=True, draws=None):
    """Integrands per cell: (Q, K) nominal, or (D, Q, K) for ``draws``."""
    pts = cell_points(grid, log_spacing, rule)
    if rule == "midpoint":
        return model.integrands(pts, draws)
    lo, hi = pts
    return 0.5 * (model.integrands(lo, draws) + model.integrands(hi, draws))


def propagate(ens, model, grid, *, seed=None, draws_per_realization=1, rule="midpoint", log_spacing=True,
              workers=None, chunk_bytes=CHUNK_BYTES, chunk_rows=None, fn_levels=None, progress=None) -> Propagation:
    """Run every realization (and its response draws) through the chain.

    Parameters
    ----------
    ens : HazardEnsemble
    model : RiskModel
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
    names = model.output_names()
    K = len(names)
    G = cell_integrands(model, grid, rule, log_spacing)
    knowledge = model.has_knowledge_uncertainty
    step = int(chunk_rows) if chunk_rows else chunk_rows_for(model, Q, chunk_bytes)
    R = ens.size
    chunks = [slice(a, min(R, a + step)) for a in range(0, R, step)]
    ss = seed if isinstance(seed, np.random.SeedSequence) else np.random.SeedSequence(seed)
    streams = ss.spawn(len(chunks))
    levels = np.asarray(fn_levels, float) if fn_levels is not None else None
    keep_fn = levels is not None and R * levels.size <= 2e7
    fn_matrix = cell_fn_matrix(model, grid, levels, rule, log_spacing) if keep_fn else None

    def work(i):
        rows = chunks[i]
        m = cell_masses(ens.aep(grid, rows))
        mbar = ens.weights[rows] @ m
        fn = m @ fn_matrix if keep_fn else None
        nominal = m @ G  # (c, K): per-realization risks with the nominal response
        if not knowledge:
            vals = nominal[:, None, :]  # (c, 1, K)
        else:
            rng = np.random.default_rng(streams[i])
            c = m.shape[0]
            vals = np.empty((c, k, K))
            for rep in range(k):
                draws = model.sample(rng, c)
                Gd = cell_integrands(model, grid, rule, log_spacing, draws)  # (c, Q, K)
                vals[:, rep, :] = np.einsum("cq,cqk->ck", m, Gd)
        return mbar, vals, fn, nominal

    results = map_in_threads(work, range(len(chunks)), workers, progress)
    mbar = np.zeros(Q)
    for r in results:  # summed in chunk order: the same for any number of workers
        mbar += r[0]
    vals = np.concatenate([r[1] for r in results], axis=0) if results else np.empty((0, 1, K))
    fn = np.concatenate([r[2] for r in results], axis=0) if keep_fn else None
    nominal = np.concatenate([r[3] for r in results], axis=0) if results else np.empty((0, K))
    kk = vals.shape[1]
    values = vals.reshape(R * kk, K)
    weights = np.repeat(ens.weights / kk, kk)
    realization = np.repeat(np.arange(R), kk)
    pbar = np.cumsum(mbar[::-1])[::-1]  # p̄(x_j) = Σ_{i>=j} m̄_i
    return Propagation(names=names, values=values, weights=weights, realization=realization, aep_predictive=pbar,
                       masses_predictive=mbar, integrands=G, fn_levels=levels if levels is not None else np.array([]),
                       fn_per_realization=fn, n_chunks=len(chunks), draws_per_realization=kk,
                       nominal_values=nominal)


def cell_fn_matrix(model, grid, levels, rule="midpoint", log_spacing=True) -> np.ndarray:
    """F-N integrand per cell (Q, L): nominal response, incremental life loss, natural variability folded in."""
    pts = cell_points(grid, log_spacing, rule)
    if rule == "midpoint":
        return model.fn_integrand(pts, levels)
    return 0.5 * (model.fn_integrand(pts[0], levels) + model.fn_integrand(pts[1], levels))
