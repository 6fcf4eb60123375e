"""The risk chain as a vectorized model of the sensitivity factors, with the ensemble's masses precomputed.

With masses w[r, p] on the evaluation points x_p (:func:`riskcalc.risk.integrate.point_masses`), the
three headline outputs of one sample (realization r, response parameters theta) are

    AFP = sum_p w[r, p] Pf_p(theta),   EAD = dm sum_p w[r, p] (Dn_p + Pf_p (Db_p - Dn_p)),
    ALL = lm sum_p w[r, p] (Ln_p + Pf_p (Lb_p - Ln_p)),

evaluated by the one response chain (:meth:`riskcalc.response.chain.ChainOnPoints.risk`), which
computes each failure mode once per distinct parameter tuple in a batch: in a Saltelli design row
AB_k differs from row A in one factor only, so most rows share their parts with a neighbour. The
evaluator itself only precomputes the masses (once per run), maps unit-cube samples to
(realization, response parameters) and runs batches on threads (results do not depend on the number
of threads).
"""

from __future__ import annotations

from typing import Any

import time
from dataclasses import dataclass

import numpy as np

from ..hazard.curves import CHUNK_BYTES, row_chunks
from ..parallel import default_workers, map_in_threads
from ..response.chain import HEADLINE_OUTPUTS
from ..response.uncertain import ResponseParameters
from ..risk.integrate import cell_masses, evaluation_points, point_masses
from .salib import realization_factor_map

__all__ = ["OUTPUT_KEYS", "RiskDriver", "build_driver", "driver_for_result"]

#: Output names, in the order of the summary (the same keys as summary.json).
OUTPUT_KEYS = ("annual_failure_probability", "expected_annual_damage", "annualized_life_loss")


#: Bytes of the largest per-batch work array of the vectorized model.
BATCH_BYTES = 32 * 2**20


@dataclass(frozen=True, eq=False)
class RiskDriver:
    """The risk chain as a vectorized model of the factors, with the ensemble's masses precomputed.

    Build it with :func:`build_driver` or :func:`driver_for_result`.

    Attributes
    ----------
    chain : ResponseChain
    on : ChainOnPoints
        The chain bound to the evaluation points (stages and quadrature fixed once).
    grid : ndarray (Q,)
    rule : {"midpoint", "trapezoid"}
    masses : ndarray (R, Q)
        Masses of every realization on the evaluation points.
    weights : ndarray (R,)
        Realization weights.
    nominal : ndarray (R, 3)
        Every realization's AFP, EAD, ALL with the nominal response.
    order : ndarray (R,) of int
        Realizations from least to most severe (nominal AFP, then EAD, then ALL).
    workers : int
    precompute_seconds : float
    """

    chain: Any
    on: Any
    grid: np.ndarray
    rule: str
    masses: np.ndarray
    weights: np.ndarray
    nominal: np.ndarray
    order: np.ndarray
    workers: int
    precompute_seconds: float = 0.0

    @property
    def size(self) -> int:
        return int(self.weights.size)

    @property
    def points(self) -> np.ndarray:
        return self.on.points

    def _batch_rows(self):
        n = self.on.node_weights.size
        per_row = 8 * self.on.size * n * (len(self.chain.failure_modes) + 5)
        return max(16, int(BATCH_BYTES // per_row))

    def evaluate(self, realization, params: ResponseParameters | None = None, *, masses=None, workers=None) -> dict:
        """AFP, EAD and ALL of samples (realization index, response parameters): one row of work each.

        Parameters
        ----------
        realization : array_like of int (B,)
            Realization indices (into the ensemble); ignored when ``masses`` is given.
        params : ResponseParameters of size B, optional
            Response parameters per sample; the nominal response when None.
        masses : ndarray (M, Q), optional
            Explicit masses on the evaluation points instead of realizations (e.g. the mode curve's);
            sample b uses row ``b % M``.
        workers : int, optional

        Returns
        -------
        dict of str to ndarray (B,)
            Keyed by :data:`OUTPUT_KEYS`.
        """
        if masses is None:
            r = np.asarray(realization, np.intp).reshape(-1)
            B = r.size
        else:
            masses = np.atleast_2d(np.asarray(masses, float))
            B = params.size if params is not None else masses.shape[0]
            r = np.arange(B) % masses.shape[0]
        d = params if params is not None else self.chain.uncertain.nominal(B)
        if d.size != B:
            raise ValueError(f"{B} realizations but {d.size} response parameter sets")
        src = self.masses if masses is None else masses
        step = self._batch_rows()
        slices = [slice(a, min(B, a + step)) for a in range(0, B, step)]
        out = np.empty((3, B))

        def work(s):
            out[:, s] = self.on.risk(src[r[s]], d.take(s), HEADLINE_OUTPUTS).T

        map_in_threads(work, slices, self.workers if workers is None else workers)
        return dict(zip(OUTPUT_KEYS, out))

    # -- factors -> samples --------------------------------------------
    def params_from_unit(self, factors, X):
        """Map a unit-cube sample ``X (n, len(factors))`` to (realization indices or None, ResponseParameters)."""
        X = np.asarray(X, float)
        r = None
        names, cols = [], []
        for j, f in enumerate(factors):
            if f.is_realization:
                r = realization_factor_map(np.clip(X[:, j], 0.0, 1.0), self.weights, self.order)
            else:
                names.append(f.name)
                cols.append(j)
        return r, self.chain.uncertain.from_unit(names, X[:, cols] if cols else np.empty((X.shape[0], 0)))

    def unit_model(self, factors):
        """The model callable for :mod:`riskcalc.sensitivity.salib`: ``X (n, D) -> {output: (n,)}``."""
        factors = tuple(factors)
        if not any(f.is_realization for f in factors):
            raise ValueError("the hazard realization must be one of the factors")

        def model(X):
            r, d = self.params_from_unit(factors, X)
            return self.evaluate(r, d)

        return model


def build_driver(
    ens, chain, grid, *, rule="midpoint", log_spacing=True, workers=None, chunk_bytes=CHUNK_BYTES
) -> RiskDriver:
    """Precompute the masses of every realization on the evaluation points, and the nominal risks.

    Parameters
    ----------
    ens : HazardEnsemble
    chain : ResponseChain
    grid : ndarray (Q,)
        The quantity grid of the run (:attr:`RiskResult.grid`).
    rule : {"midpoint", "trapezoid"}
    log_spacing : bool
        Geometric cell midpoints (discharge); as :func:`riskcalc.risk.assess.assess` uses ``ens.log_scale``.
    workers : int, optional
        Threads; default :func:`riskcalc.parallel.default_workers`. Results do not depend on it.

    Returns
    -------
    RiskDriver

    Notes
    -----
    Holds the (R, Q) masses in memory (8 R Q bytes: 320 MB for 20,000 x 2,000);
    they are computed in chunks of realizations, exactly as the run computes
    them, so the per-realization risks match the run's to rounding.
    """
    t0 = time.perf_counter()
    grid = np.asarray(grid, float)
    nw = default_workers() if workers is None else max(1, int(workers))
    on = chain.on(evaluation_points(grid, log_spacing, rule))
    R = ens.size
    W = np.empty((R, grid.size))
    chunks = list(row_chunks(R, grid.size, chunk_bytes))

    def fill(rows):
        W[rows] = point_masses(cell_masses(ens.aep(grid, rows)), rule)

    map_in_threads(fill, chunks, nw)
    G = on.nominal_integrands(HEADLINE_OUTPUTS)
    nominal = np.empty((R, 3))
    for rows in chunks:
        nominal[rows] = W[rows] @ G
    order = np.lexsort((nominal[:, 2], nominal[:, 1], nominal[:, 0]))
    return RiskDriver(
        chain=chain,
        on=on,
        grid=grid,
        rule=rule,
        masses=W,
        weights=np.asarray(ens.weights, float),
        nominal=nominal,
        order=order,
        workers=nw,
        precompute_seconds=time.perf_counter() - t0,
    )


def driver_for_result(result, *, workers=None, coarse=False) -> RiskDriver:
    """A :class:`RiskDriver` on the grid and settings of a finished run.

    With ``coarse`` the driver uses the run's grid of every second node (the grid the run's grid-error
    estimate compares with, :func:`riskcalc.risk.grid_error.coarse_nodes`): half the work per sample.
    """
    from ..risk.grid_error import coarse_nodes

    sc_ = result.scenario
    grid = result.grid[coarse_nodes(result.grid.size)] if coarse else result.grid
    return build_driver(
        sc_.ensemble, sc_.model, grid, rule=sc_.grid["rule"], log_spacing=sc_.ensemble.log_scale, workers=workers
    )
