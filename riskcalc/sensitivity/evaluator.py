"""What drives the risk: Sobol' indices and Morris screening of the risk model, and the mean-mode gap by source.

This module is the risk-model-specific layer over :mod:`riskcalc.sensitivity`
(which knows nothing about hazards or levees). It

1. derives the uncertain **factors** from a scenario (:func:`scenario_factors`):
   the hazard realization, the rating offset, each failure mode's shift and
   spread factor, the damage and life-loss multipliers, as far as they are
   present; the ``[sensitivity]`` table of a scenario may group, include or
   exclude them (:func:`read_settings`);
2. builds a **vectorized model** of the risk chain (:class:`RiskDriver`): the
   interval masses of the whole ensemble are computed once, and each sample
   then costs one row of work, ``risk = m[r(u)] . g(theta)``;
3. runs Sobol' indices (with the convergence check) and, on request, Morris
   screening on it (:func:`sensitivity_for_run`);
4. splits the **mean-mode gap** (predictive minus mode result) by source
   (:func:`gap_by_source`);
5. writes the tables and the figure (:func:`write_sensitivity_outputs`).

Factors on the unit cube
------------------------
Every factor enters the design as a probability u in (0, 1) and is mapped to
its value through its quantile function (for the realization: the inverse CDF
of the weights, along the realizations sorted by severity). Sobol' indices are
invariant under such a one-to-one change of variable of each input, so they
are those of the factors themselves. For Morris screening, whose grid includes
u = 0 and u = 1, the unbounded factors (normal and lognormal) are swept over
the probabilities [0.001, 0.999] (:data:`MORRIS_TAIL`).

The fast model
--------------
With masses w[r, p] on the evaluation points x_p (the cell midpoints; for the
trapezoid rule the grid nodes, with each cell's mass split between its two
ends, which is the same sum rearranged), the three outputs of one sample are

    AFP = sum_p w[r, p] Pf_p,
    EAD = dm sum_p w[r, p] (Dn_p + Pf_p (Db_p - Dn_p)),
    ALL = lm sum_p w[r, p] (Ln_p + Pf_p (Lb_p - Ln_p)),

with ``Pf = 1 - prod_i (1 - P_i)`` over the failure modes. Mode i depends only
on (rating offset, its shift, its spread factor), the consequences only on the
rating offset, and the multipliers dm, lm are scalars. In a Saltelli design
most rows share those few parameters with a neighbouring row (row AB_k differs
from row A in one factor only), so each part is computed once per distinct
parameter tuple in a batch and gathered; the remaining per-row work is a few
array operations and three dot products of length P. Batches run on threads
(NumPy and scipy.special release the GIL); results do not depend on the number
of threads. Natural variability of stage (Gauss-Hermite nodes) multiplies the
per-sample work by the number of nodes.

Mean-mode gap by source
-----------------------
The gap is ``predictive - mode``. Each source of uncertainty is switched on
alone on top of the mode case (mode curve, nominal response): the hazard
ensemble alone gives the predictive result with the nominal response; a
response source alone gives the expected result on the mode curve over that
source's factors (scrambled Sobol' quasi-Monte Carlo). The ``all`` row is the
run's own predictive and mode results.

References
----------
.. [1] Saltelli, A., Annoni, P., Azzini, I., Campolongo, F., Ratto, M. and
   Tarantola, S. (2010). Variance based sensitivity analysis of model output.
   Design and estimator for the total sensitivity index. Computer Physics
   Communications 181(2), 259-270. doi:10.1016/j.cpc.2009.09.018
.. [2] Morris, M.D. (1991). Factorial sampling plans for preliminary
   computational experiments. Technometrics 33(2), 161-174.
   doi:10.1080/00401706.1991.10484804
.. [3] Owen, A.B. (1997). Scrambled net variance for integrals of smooth
   functions. Annals of Statistics 25(4), 1541-1562. doi:10.1214/aos/1069362388
.. [4] Herman, J. and Usher, W. (2017). SALib: An open-source Python library
   for sensitivity analysis. Journal of Open Source Software 2(9), 97.
   doi:10.21105/joss.00097
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field, replace
import numpy as np
from ..hazard.curves import CHUNK_BYTES, row_chunks
from ..risk.integrate import cell_masses, cell_points
from ..response.chain import ResponseDraws
from ..parallel import default_workers, map_in_threads
from ..response import gauss_hermite_normal
from .salib import (realization_factor_map)


#: Output names, in the order of the summary (the same keys as summary.json).
OUTPUT_KEYS = ("annual_failure_probability", "expected_annual_damage", "annualized_life_loss")


#: Bytes of the largest per-batch work array of the vectorized model.
BATCH_BYTES = 32 * 2**20


def node_masses(m, rule: str) -> np.ndarray:
    """Masses on the evaluation points from cell masses: (..., Q) -> (..., Q).

    For ``midpoint`` the points are the cell midpoints and the masses are ``m``
    unchanged. For ``trapezoid`` the points are the grid nodes: cell j < J
    gives half its mass to each of its ends x_j and x_{j+1}, the tail cell
    J its whole mass to x_J, so that ``sum_i w_i g(x_i)`` equals
    ``sum_j m_j (g(lo_j) + g(hi_j)) / 2`` (the same sum rearranged).
    """
    m = np.asarray(m, float)
    if rule == "midpoint":
        return m
    if rule != "trapezoid":
        raise ValueError(f"integration rule '{rule}' is not midpoint or trapezoid")
    w = np.zeros_like(m)
    w[..., :-1] += 0.5 * m[..., :-1]  # lower end of cell j < J
    w[..., 1:] += 0.5 * m[..., :-1]  # upper end of cell j < J
    w[..., -1] += m[..., -1]  # the tail cell, evaluated at x_J
    return w


def _unique(*cols):
    """Distinct rows of the stacked columns: (values (U, k), inverse (B,))."""
    key = np.stack([np.asarray(c, float) for c in cols], axis=1)
    if key.shape[0] == 1 or np.all(key == key[:1]):
        return key[:1], np.zeros(key.shape[0], np.intp)
    u, inv = np.unique(key, axis=0, return_inverse=True)
    return u, inv.reshape(-1)


def _take(a, inv):
    """Rows ``a[inv]``, or the single row (broadcastable) when ``a`` has one."""
    return a[0] if a.shape[0] == 1 else a[inv]


@dataclass(frozen=True, eq=False)
class RiskDriver:
    """The risk chain as a vectorized model of the factors, with the ensemble's masses precomputed.

    Build it with :func:`build_driver` or :func:`driver_for_result`.

    Attributes
    ----------
    model : RiskModel
    grid : ndarray (Q,)
    rule : {"midpoint", "trapezoid"}
    points : ndarray (P,)
        Where the integrands are evaluated (cell midpoints, or the grid nodes for the trapezoid rule).
    masses : ndarray (R, P)
        Masses of every realization on the points (:func:`node_masses`).
    weights : ndarray (R,)
        Realization weights.
    stage : ndarray (P,) or (P, n)
        Stage at the points (with the Gauss-Hermite nodes of natural variability: (P, n)).
    node_weights : ndarray (n,) or None
    nominal : ndarray (R, 3)
        Every realization's AFP, EAD, ALL with the nominal response.
    order : ndarray (R,) of int
        Realizations from least to most severe (nominal AFP, then EAD, then ALL).
    workers : int
    precompute_seconds : float
    """

    model: object
    grid: np.ndarray
    rule: str
    points: np.ndarray
    masses: np.ndarray
    weights: np.ndarray
    stage: np.ndarray
    node_weights: np.ndarray | None
    nominal: np.ndarray
    order: np.ndarray
    workers: int
    precompute_seconds: float = 0.0
    _has: dict = field(default_factory=dict)

    @property
    def size(self) -> int:
        return int(self.weights.size)

    # -- integrands per row --------------------------------------------
    def integrands(self, off, shift, spread):
        """Cell integrands of AFP, EAD and ALL (multipliers 1) for B response parameter sets.

        Parameters
        ----------
        off : ndarray (B,)
            Rating offsets [stage units].
        shift, spread : ndarray (n_modes, B)
            Mode shifts [stage units] and spread factors [-].

        Returns
        -------
        (afp, ead, all) : three ndarrays (U, P)
            Integrands of the U distinct parameter sets among the B.
        inverse : ndarray (B,) of int
            Row b's parameter set is ``inverse[b]``.

        Notes
        -----
        Work is done once per distinct tuple: the system on distinct (offset, shifts,
        spreads), each mode on its own distinct (offset, shift, spread), the
        consequences on distinct offsets; natural variability is averaged over its
        nodes before any row is gathered.
        """
        model, h = self.model, self.stage
        nm = len(model.modes)
        uj, invj = _unique(off, *shift, *spread)
        U = uj.shape[0]
        off_u, shift_u, spread_u = uj[:, 0], uj[:, 1:1 + nm].T, uj[:, 1 + nm:].T
        ext = (slice(None),) + (None,) * h.ndim
        pf = None
        for i, mode in enumerate(model.modes):
            u, inv = _unique(off_u, shift_u[i], spread_u[i])
            p = mode.prob(h[None] + u[:, 0][ext], u[:, 1][ext], u[:, 2][ext])
            if nm == 1:
                pf = _take(p, inv)
                break
            np.clip(p, 0.0, 1.0, out=p)
            np.negative(p, out=p)
            with np.errstate(divide="ignore"):  # P_i = 1 gives log 0 = -inf, hence P_f = 1 exactly
                np.log1p(p, out=p)
            li = _take(p, inv)  # independent modes: P_f = -expm1(sum_i log1p(-P_i))
            if pf is None:
                pf = li.copy()
            elif pf.shape == np.broadcast_shapes(pf.shape, li.shape):
                pf += li
            else:
                pf = pf + li
        if nm > 1:
            pf = -np.expm1(pf)
        u, inv = _unique(off_u)
        hc = h[None] + u[:, 0][ext]
        c = model.consequences
        parts = []
        for has, base, top in (("damage", c.damage_no_breach, c.damage_breach),
                               ("life_loss", c.life_loss_no_breach, c.life_loss_breach)):
            if not self._has[has]:
                parts.append(np.zeros(h.shape))
                continue
            # linear in stage, ends held (ConsequenceCurves.at); only the fields that are not zero
            inc = _take(np.interp(hc, c.stage, top - base) if np.any(top != base) else np.zeros(hc.shape), inv)
            part = pf * inc
            if np.any(base != 0):
                part = part + _take(np.interp(hc, c.stage, base), inv)
            parts.append(part)
        out = [pf, *parts]
        if self.node_weights is not None:
            out = [o @ self.node_weights for o in out]
        shape = (U, self.points.size)
        return tuple(np.broadcast_to(o, shape) for o in out), invj

    def _risk_rows(self, w, off, shift, spread, dmul, lmul):
        g, inv = self.integrands(off, shift, spread)
        res = np.empty((3, w.shape[0]))
        for k in range(3):
            res[k] = w @ g[k][0] if g[k].shape[0] == 1 else np.einsum("bp,bp->b", w, g[k][inv])
        res[1] *= dmul
        res[2] *= lmul
        return res

    def _batch_rows(self):
        n = 1 if self.node_weights is None else self.node_weights.size
        per_row = 8 * self.points.size * n * (len(self.model.modes) + 5)
        return max(16, int(BATCH_BYTES // per_row))

    def evaluate(self, realization, draws: ResponseDraws | None = None, *, masses=None, workers=None) -> dict:
        """AFP, EAD and ALL of samples (realization index, response draw): one row of work each.

        Parameters
        ----------
        realization : array_like of int (B,)
            Realization indices (into the ensemble); ignored when ``masses`` is given.
        draws : ResponseDraws of size B, optional
            Response parameters per sample; the nominal response when None.
        masses : ndarray (M, P), optional
            Explicit masses on the points instead of realizations (e.g. the mode curve's);
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
            B = draws.size if draws is not None else masses.shape[0]
            r = np.arange(B) % masses.shape[0]
        d = draws if draws is not None else self.model.nominal(B)
        if d.size != B:
            raise ValueError(f"{B} realizations but {d.size} response draws")
        src = self.masses if masses is None else masses
        step = self._batch_rows()
        slices = [slice(a, min(B, a + step)) for a in range(0, B, step)]
        out = np.empty((3, B))

        def work(s):
            out[:, s] = self._risk_rows(src[r[s]], d.rating_offset[s], d.mode_shift[:, s], d.mode_spread[:, s],
                                        d.damage_multiplier[s], d.life_loss_multiplier[s])

        map_in_threads(work, slices, self.workers if workers is None else workers)
        return dict(zip(OUTPUT_KEYS, out))

    # -- factors -> samples --------------------------------------------
    def draws_from_unit(self, factors, X, *, nominal_for_missing=True):
        """Map a unit-cube sample ``X (n, len(factors))`` to (realization indices, ResponseDraws)."""
        X = np.asarray(X, float)
        n = X.shape[0]
        d = self.model.nominal(n)
        off, shift, spread = d.rating_offset.copy(), d.mode_shift.copy(), d.mode_spread.copy()
        dmul, lmul = d.damage_multiplier.copy(), d.life_loss_multiplier.copy()
        r = None
        for j, f in enumerate(factors):
            u = X[:, j]
            if f.kind == "realization":
                r = realization_factor_map(np.clip(u, 0.0, 1.0), self.weights, self.order)
            elif f.kind == "offset":
                off = f.values(u)
            elif f.kind == "shift":
                shift[f.mode_index] = f.values(u)
            elif f.kind == "spread":
                spread[f.mode_index] = f.values(u)
            elif f.kind == "damage":
                dmul = f.values(u)
            elif f.kind == "life_loss":
                lmul = f.values(u)
        return r, ResponseDraws(off, shift, spread, dmul, lmul)

    def unit_model(self, factors):
        """The model callable for :mod:`riskcalc.sensitivity`: ``X (n, D) -> {output: (n,)}``."""
        factors = tuple(factors)
        if not any(f.kind == "realization" for f in factors):
            raise ValueError("the hazard realization must be one of the factors")

        def model(X):
            r, d = self.draws_from_unit(factors, X)
            return self.evaluate(r, d)

        return model


def build_driver(ens, model, grid, *, rule="midpoint", log_spacing=True, workers=None,
                 chunk_bytes=CHUNK_BYTES) -> RiskDriver:
    """Precompute the masses of every realization on the evaluation points, and the nominal risks.

    Parameters
    ----------
    ens : HazardEnsemble
    model : RiskModel
    grid : ndarray (Q,)
        The quantity grid of the run (:attr:`RiskResult.grid`).
    rule : {"midpoint", "trapezoid"}
    log_spacing : bool
        Geometric cell midpoints (discharge); as :func:`riskcalc.assess.assess` uses ``ens.log_scale``.
    workers : int, optional
        Threads; default :func:`riskcalc.propagate.default_workers`. Results do not depend on it.

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
    # the trapezoid rule is evaluated at the grid nodes with the masses split (node_masses)
    pts = grid.copy() if rule == "trapezoid" else cell_points(grid, log_spacing, "midpoint")
    R = ens.size
    W = np.empty((R, grid.size))
    chunks = list(row_chunks(R, grid.size, chunk_bytes))

    def fill(rows):
        W[rows] = node_masses(cell_masses(ens.aep(grid, rows)), rule)

    map_in_threads(fill, chunks, nw)
    h0 = model.stage_at(pts)
    node_w = None
    if model.natural is not None and model.natural.active:
        z, node_w = gauss_hermite_normal(model.hermite_nodes)
        sd = model.natural.at(pts) if model.rating is not None else model.natural.at(np.maximum(pts, 1e-300))
        h0 = h0[:, None] + sd[:, None] * z[None, :]
    c = model.consequences
    has = {"damage": bool(np.any(c.damage_breach != 0) or np.any(c.damage_no_breach != 0)),
           "life_loss": bool(np.any(c.life_loss_breach != 0) or np.any(c.life_loss_no_breach != 0))}
    drv = RiskDriver(model=model, grid=grid, rule=rule, points=pts, masses=W, weights=np.asarray(ens.weights, float),
                     stage=h0, node_weights=node_w, nominal=np.empty((R, 3)), order=np.arange(R), workers=nw,
                     _has=has)
    d = model.nominal(1)
    g, _ = drv.integrands(d.rating_offset, d.mode_shift, d.mode_spread)
    G = np.stack([x[0] for x in g], axis=1)
    G = G * np.array([1.0, c.damage_multiplier.nominal, c.life_loss_multiplier.nominal])
    nominal = np.empty((R, 3))
    for rows in chunks:
        nominal[rows] = W[rows] @ G
    order = np.lexsort((nominal[:, 2], nominal[:, 1], nominal[:, 0]))
    return replace(drv, nominal=nominal, order=order, precompute_seconds=time.perf_counter() - t0)


def driver_for_result(result, *, workers=None) -> RiskDriver:
    """A :class:`RiskDriver` on the grid and settings of a finished run."""
    sc_ = result.scenario
    return build_driver(sc_.ensemble, sc_.model, result.grid, rule=sc_.grid["rule"],
                        log_spacing=sc_.ensemble.log_scale, workers=workers)
