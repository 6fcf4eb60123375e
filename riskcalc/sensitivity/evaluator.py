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

import math
import time
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import pandas as pd
from scipy import special as sc

from ..errors import InputError
from ..io import to_plain as _plain
from ..hazard.curves import CHUNK_BYTES, row_chunks
from ..risk.integrate import cell_masses, cell_points
from ..response.chain import ResponseDraws
from ..parallel import default_workers, map_in_threads
from ..response import gauss_hermite_normal
from .salib import (WIDE_INTERVAL, Factor, max_conf_width, morris_screening, realization_factor_map,
                          sobol_indices, sobol_until_converged)

__all__ = [
    "OUTPUT_KEYS", "SOURCES", "MORRIS_TAIL", "RiskFactor", "scenario_factors", "SensitivitySettings",
    "read_settings", "sensitivity_enabled", "RiskDriver", "build_driver", "driver_for_result", "node_masses",
    "gap_by_source", "SensitivityReport", "sensitivity_for_run", "plot_indices", "write_sensitivity_outputs",
    "sensitivity_workflow",
]

#: Output names, in the order of the summary (the same keys as summary.json).
OUTPUT_KEYS = ("annual_failure_probability", "expected_annual_damage", "annualized_life_loss")
_SHORT = dict(zip(OUTPUT_KEYS, ("AFP", "EAD", "ALL")))
#: Sources of uncertainty, in the order of the gap table.
SOURCES = ("hazard", "rating", "fragility", "consequences")
#: Morris sweeps an unbounded factor over the probabilities [MORRIS_TAIL, 1 - MORRIS_TAIL].
MORRIS_TAIL = 1e-3
#: Bytes of the largest per-batch work array of the vectorized model.
BATCH_BYTES = 32 * 2**20
_U_EPS = 1e-15  # u is clipped to [eps, 1 - eps] before a normal quantile (never infinite)


# --------------------------------------------------------------------------
# factors
# --------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class RiskFactor:
    """One uncertain input of the risk model, entered as a probability u in (0, 1).

    Attributes
    ----------
    name : str
        ``hazard_realization``, ``rating_offset``, ``fragility_shift:<mode>``,
        ``fragility_spread:<mode>``, ``damage_multiplier``, ``life_loss_multiplier``.
    source : {"hazard", "rating", "fragility", "consequences"}
    kind : {"realization", "offset", "shift", "spread", "damage", "life_loss"}
    description : str
        The distribution in words, with units.
    units : str
    sd : float
        Standard deviation of the normal kinds (offset, shift) [stage units].
    low, high : float
        Range of the uniform spread factor [-].
    multiplier : Multiplier or None
        The consequence multiplier (damage, life_loss kinds).
    mode_index : int or None
        The failure mode of a shift or spread factor.
    group : str or None
        A user group (``[sensitivity].groups``).
    """

    name: str
    source: str
    kind: str
    description: str
    units: str = ""
    sd: float = 0.0
    low: float = 1.0
    high: float = 1.0
    multiplier: object = None
    mode_index: int | None = None
    group: str | None = None

    @property
    def bounded(self) -> bool:
        """True when u = 0 and u = 1 map to finite values."""
        if self.kind in ("offset", "shift"):
            return False
        if self.kind in ("damage", "life_loss"):
            return self.multiplier.distribution != "lognormal"
        return True

    def values(self, u) -> np.ndarray:
        """The factor's value at probabilities ``u`` (quantile function), any shape.

        Not for the realization factor, which :class:`RiskDriver` maps through the weights.
        """
        u = np.asarray(u, float)
        if self.kind in ("offset", "shift"):
            return self.sd * sc.ndtri(np.clip(u, _U_EPS, 1 - _U_EPS))
        if self.kind == "spread":
            return self.low + u * (self.high - self.low)
        if self.kind in ("damage", "life_loss"):
            if self.multiplier.distribution == "lognormal":
                u = np.clip(u, _U_EPS, 1 - _U_EPS)
            return np.asarray(self.multiplier.from_unit(u), float)
        raise ValueError(f"factor '{self.name}' is mapped by the realization weights, not by values()")

    def salib_factor(self, morris: bool = False) -> Factor:
        """The factor on the unit cube for :mod:`riskcalc.sensitivity` (probability units)."""
        lo, hi = (MORRIS_TAIL, 1 - MORRIS_TAIL) if (morris and not self.bounded) else (0.0, 1.0)
        return Factor(self.name, "uniform", lo, hi, group=self.group, units="probability")


def scenario_factors(model) -> tuple[RiskFactor, ...]:
    """The active uncertain factors of a :class:`~riskcalc.model.RiskModel`, hazard realization first.

    Factors with no spread (a zero standard deviation, an empty range, a lognormal multiplier with
    β = 0, a fixed multiplier) are left out: they cannot move any output.
    """
    out = [RiskFactor("hazard_realization", "hazard", "realization",
                      "the hazard realization, drawn with its weight (sorted by severity)")]
    if model.rating_offset_sd > 0:
        out.append(RiskFactor("rating_offset", "rating", "offset",
                              f"stage offset of the rating, normal(0, {model.rating_offset_sd:g}) [stage units]",
                              "stage units", sd=float(model.rating_offset_sd)))
    for i, m in enumerate(model.modes):
        if m.shift_sd > 0:
            out.append(RiskFactor(f"fragility_shift:{m.name}", "fragility", "shift",
                                  f"shift of '{m.name}' along stage, normal(0, {m.shift_sd:g}) [stage units]",
                                  "stage units", sd=float(m.shift_sd), mode_index=i))
        if m.spread_range is not None and m.spread_range[1] > m.spread_range[0] and any(
                n.kind != "table" for n in m.nodes):
            lo, hi = (float(v) for v in m.spread_range)
            out.append(RiskFactor(f"fragility_spread:{m.name}", "fragility", "spread",
                                  f"spread factor of '{m.name}', uniform({lo:g}, {hi:g}) [-]", "-", low=lo, high=hi,
                                  mode_index=i))
    c = model.consequences
    for kind, name, mul in (("damage", "damage_multiplier", c.damage_multiplier),
                            ("life_loss", "life_loss_multiplier", c.life_loss_multiplier)):
        if not mul.active or (mul.distribution == "lognormal" and mul.beta == 0):
            continue
        desc = (f"triangular({mul.low:g}, {mul.mode:g}, {mul.high:g})" if mul.distribution == "triangular"
                else f"lognormal(median {mul.median:g}, beta {mul.beta:g})")
        out.append(RiskFactor(name, "consequences", kind, f"{name.replace('_', ' ')}, {desc} [-]", "-",
                              multiplier=mul))
    return tuple(out)


# --------------------------------------------------------------------------
# the [sensitivity] table
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class SensitivitySettings:
    """Validated settings of a sensitivity analysis (see :func:`read_settings` for the keys)."""

    enabled: bool = False
    n: int = 1024
    seed: int = 1
    second_order: bool = False
    target_width: float | None = None
    n_max: int = 16384
    n_resamples: int = 100
    conf_level: float = 0.95
    groups: tuple = ()
    include: tuple = ()
    exclude: tuple = ()
    morris: bool = False
    morris_trajectories: int = 20
    morris_levels: int = 4
    gap_samples: int = 1024


#: key -> (type, what is expected)
_SETTINGS = {
    "enabled": (bool, "true or false"),
    "n": (int, "a power of two >= 16, e.g. 1024"),
    "seed": (int, "an integer >= 1"),
    "second_order": (bool, "true or false"),
    "target_width": (float, "a confidence half-width in (0, 1), e.g. 0.05"),
    "n_max": (int, "a power of two >= n"),
    "n_resamples": (int, "an integer from 10 to 10000"),
    "conf_level": (float, "a level in (0, 1), e.g. 0.95"),
    "groups": (dict, "a table of group = [factor names]"),
    "include": (list, "a list of factor names"),
    "exclude": (list, "a list of factor names"),
    "morris": (bool, "true or false"),
    "morris_trajectories": (int, "an integer from 4 to 1000"),
    "morris_levels": (int, "an even integer from 2 to 20"),
    "gap_samples": (int, "a power of two from 64 to 65536"),
}


def _pow2(v):
    return v >= 2 and not v & (v - 1)


def read_settings(raw, file=None, *, default_seed: int = 1, factors=None, overrides=None) -> SensitivitySettings:
    """Validate a scenario's ``[sensitivity]`` table.

    Parameters
    ----------
    raw : dict
        The table as read from TOML (``scenario.sensitivity``); empty for defaults.
    file : path, optional
        The scenario file, for messages.
    default_seed : int
        Seed when the table gives none (the scenario's seed; 0 becomes 1, since
        SALib treats seed 0 as no seed).
    factors : sequence of RiskFactor, optional
        When given, names in ``groups``, ``include`` and ``exclude`` are checked against them.
    overrides : dict, optional
        Values from the command line (keys as in the table, checked the same way, named ``--key``).

    Keys
    ----
    enabled (false), n (1024), seed, second_order (false), target_width (none: no doubling),
    n_max (16384), n_resamples (100), conf_level (0.95), groups ({}), include ([]), exclude ([]),
    morris (false), morris_trajectories (20), morris_levels (4), gap_samples (1024).

    Raises
    ------
    InputError
        Naming the file and the key ``sensitivity.<key>`` and what was expected.
    """
    raw = {} if raw is None else raw
    if not isinstance(raw, dict):
        raise InputError("expected a table of settings", file, key="sensitivity")
    vals = {}
    sources = [(raw, lambda k: f"sensitivity.{k}")]
    if overrides:
        sources.append(({k: v for k, v in overrides.items() if v is not None},
                        lambda k: f"--{k.replace('_', '-')}"))
    for d, keyname in sources:
        for k, v in d.items():
            if k not in _SETTINGS:
                raise InputError(f"unknown key; expected one of {', '.join(sorted(_SETTINGS))}", file, key=keyname(k))
            typ, what = _SETTINGS[k]
            if typ is float and isinstance(v, int) and not isinstance(v, bool):
                v = float(v)
            if (typ is int and isinstance(v, bool)) or not isinstance(v, typ):
                raise InputError(f"got {v!r}; expected {what}"[:160], file, key=keyname(k))
            _check_value(k, v, what, file, keyname(k))
            vals[k] = (v, keyname(k))
    get = {k: v for k, (v, _) in vals.items()}
    seed = get.get("seed", default_seed if default_seed and default_seed > 0 else 1)
    n = get.get("n", 1024)
    n_max = get.get("n_max", max(16384, n))
    if n_max < n:
        raise InputError(f"{n_max} is below n = {n}; expected a power of two >= n", file,
                         key=vals["n_max"][1] if "n_max" in vals else "sensitivity.n_max")
    groups = get.get("groups", {})
    gkey = vals["groups"][1] if "groups" in vals else "sensitivity.groups"
    gtuple, seen = [], {}
    for g, members in groups.items():
        if not isinstance(members, list) or not members or not all(isinstance(m, str) for m in members):
            raise InputError("expected a non-empty list of factor names", file, key=f"{gkey}.{g}")
        for m in members:
            if m in seen:
                raise InputError(f"factor '{m}' is already in group '{seen[m]}'; a factor belongs to one group",
                                 file, key=f"{gkey}.{g}")
            seen[m] = g
        gtuple.append((str(g), tuple(members)))
    lists = {}
    for k in ("include", "exclude"):
        items = get.get(k, [])
        if not all(isinstance(m, str) for m in items):
            raise InputError("expected a list of factor names (text)", file,
                             key=vals[k][1] if k in vals else f"sensitivity.{k}")
        lists[k] = tuple(items)
    s = SensitivitySettings(
        enabled=get.get("enabled", False), n=n, seed=seed, second_order=get.get("second_order", False),
        target_width=get.get("target_width"), n_max=n_max, n_resamples=get.get("n_resamples", 100),
        conf_level=get.get("conf_level", 0.95), groups=tuple(gtuple), include=lists["include"],
        exclude=lists["exclude"], morris=get.get("morris", False),
        morris_trajectories=get.get("morris_trajectories", 20), morris_levels=get.get("morris_levels", 4),
        gap_samples=get.get("gap_samples", 1024))
    if factors is not None:
        select_factors(factors, s, file, keys={k: v[1] for k, v in vals.items()})
    return s


def _check_value(k, v, what, file, key):
    ok = True
    if k == "n":
        ok = _pow2(v) and v >= 16
    elif k == "n_max":
        ok = _pow2(v) and v >= 16
    elif k == "seed":
        ok = v >= 1
    elif k == "target_width":
        ok = math.isfinite(v) and 0 < v < 1
    elif k == "conf_level":
        ok = 0 < v < 1
    elif k == "n_resamples":
        ok = 10 <= v <= 10000
    elif k == "morris_trajectories":
        ok = 4 <= v <= 1000
    elif k == "morris_levels":
        ok = 2 <= v <= 20 and v % 2 == 0
    elif k == "gap_samples":
        ok = _pow2(v) and 64 <= v <= 65536
    if not ok:
        raise InputError(f"got {v!r}; expected {what}", file, key=key)


def select_factors(factors, settings: SensitivitySettings, file=None, keys=None) -> tuple[RiskFactor, ...]:
    """Apply ``include``, ``exclude`` and ``groups`` to the derived factors.

    Raises
    ------
    InputError
        A name that is not one of the scenario's active factors, the hazard realization excluded
        (it is always a factor), or a group name equal to a factor name.
    """
    keys = {k: keys.get(k, f"sensitivity.{k}") for k in ("include", "exclude", "groups")} if keys else {
        k: f"sensitivity.{k}" for k in ("include", "exclude", "groups")}
    names = [f.name for f in factors]
    avail = ", ".join(names)

    def unknown(name, key):
        raise InputError(f"'{name}' is not an active factor of this scenario; expected one of {avail}", file,
                         key=key)

    for k in ("include", "exclude"):
        for m in getattr(settings, k):
            if m not in names:
                unknown(m, keys[k])
    if "hazard_realization" in settings.exclude:
        raise InputError("the hazard realization is always a factor; remove it from the list", file,
                         key=keys["exclude"])
    keep = set(settings.include) | {"hazard_realization"} if settings.include else set(names)
    keep -= set(settings.exclude)
    group_of = {}
    for g, members in settings.groups:
        if g in names and tuple(members) != (g,):
            raise InputError(f"group name '{g}' is also a factor name; rename the group", file,
                             key=f"{keys['groups']}.{g}")
        for m in members:
            if m not in names:
                unknown(m, f"{keys['groups']}.{g}")
            group_of[m] = g
    return tuple(replace(f, group=group_of.get(f.name)) for f in factors if f.name in keep)


def sensitivity_enabled(scenario) -> bool:
    """True when the scenario's ``[sensitivity]`` table says ``enabled = true`` (the run then adds indices)."""
    s = getattr(scenario, "sensitivity", None) or {}
    return isinstance(s, dict) and s.get("enabled") is True


# --------------------------------------------------------------------------
# the vectorized model
# --------------------------------------------------------------------------
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


# --------------------------------------------------------------------------
# the mean-mode gap by source
# --------------------------------------------------------------------------
def _units(currency):
    return {"annual_failure_probability": "per year", "expected_annual_damage": f"{currency} per year",
            "annualized_life_loss": "lives per year"}


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
    factors = scenario_factors(driver.model) if factors is None else tuple(factors)
    head = result.headline
    units = _units(result.scenario.units.get("currency", "usd"))
    m_mode = node_masses(cell_masses(result.curves.aep_mode), driver.rule)[None, :]
    rows = []
    mode_vals = {k: head[k]["mode"] for k in OUTPUT_KEYS}
    pred = {"hazard": {k: head[k]["predictive_nominal_response"] for k in OUTPUT_KEYS}}
    for i, src in enumerate(SOURCES[1:], start=1):
        fs = [f for f in factors if f.source == src]
        if not fs:
            continue
        X = _qmc_unit(len(fs), samples, seed + i)
        _, d = driver.draws_from_unit(fs, X)
        vals = driver.evaluate(None, d, masses=m_mode)
        pred[src] = {k: float(np.mean(v)) for k, v in vals.items()}
    pred["all"] = {k: head[k]["predictive"] for k in OUTPUT_KEYS}
    total = {k: pred["all"][k] - mode_vals[k] for k in OUTPUT_KEYS}
    for src, vals in pred.items():
        for k in OUTPUT_KEYS:
            p, m = float(vals[k]), float(mode_vals[k])
            gap = p - m
            rows.append({"source": src, "output": k, "unit": units[k], "predictive": p, "mode": m, "gap": gap,
                         "ratio": p / m if m > 0 else float("nan"),
                         "share_of_total_gap": gap / total[k] if total[k] != 0 else float("nan")})
    return pd.DataFrame(rows, columns=["source", "output", "unit", "predictive", "mode", "gap", "ratio",
                                       "share_of_total_gap"])


# --------------------------------------------------------------------------
# the report
# --------------------------------------------------------------------------
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
        src = {}
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
        from ..risk.assess import CAUTION_TEXT

        s = self.settings
        out = {
            "sobol": self.summary(),
            "factors": [{"name": f.name, "source": f.source, "distribution": f.description, "group": f.group}
                        for f in self.factors],
            "settings": {"n": self.n, "n_start": s.n, "seed": s.seed, "second_order": s.second_order,
                         "n_resamples": s.n_resamples, "conf_level": s.conf_level, "target_width": s.target_width,
                         "n_max": s.n_max, "groups": {g: list(m) for g, m in s.groups},
                         "estimators": "Saltelli et al. (2010) first order, Jansen total order (SALib)"},
            "convergence": {"converged": self.converged, "warn_above_half_width": WIDE_INTERVAL,
                            "history": [{"n": n, "largest_half_width": w} for n, w in self.history]},
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
            msgs.append(f"{_SHORT.get(k, k)} sensitivity: {wide.size} of {conf.size} confidence half-widths exceed "
                        f"{limit} at N = {r.n} (largest {conf[j]:.3f}, {which}); raise sensitivity.n or set "
                        "sensitivity.target_width")
    return msgs


def sensitivity_for_run(scenario, result, settings: SensitivitySettings | None = None, *, workers=None,
                        driver: RiskDriver | None = None) -> SensitivityReport:
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
    drv = driver if driver is not None else driver_for_result(result, workers=workers)
    t1 = time.perf_counter()
    model = drv.unit_model(factors)
    sal = [f.salib_factor() for f in factors]
    notes, warns = [], []
    try:
        if settings.target_width is not None:
            conv = sobol_until_converged(model, sal, n_start=settings.n, target_width=settings.target_width,
                                         n_max=settings.n_max, seed=settings.seed,
                                         second_order=settings.second_order, n_resamples=settings.n_resamples,
                                         conf_level=settings.conf_level)
            sobol, n, converged, history = conv.result, conv.n, conv.converged, conv.history
            if not converged:
                warns.append(conv.warnings[-1])
        else:
            sobol = sobol_indices(model, sal, settings.n, seed=settings.seed, second_order=settings.second_order,
                                  n_resamples=settings.n_resamples, conf_level=settings.conf_level)
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
        notes.append(f"Morris screening: {settings.morris_trajectories} trajectories, {settings.morris_levels} "
                     f"levels; unbounded factors swept over probabilities [{MORRIS_TAIL:g}, {1 - MORRIS_TAIL:g}]; the "
                     "hazard realization ordered by its nominal AFP")
    t3 = time.perf_counter()
    gap = gap_by_source(result, drv, all_factors, seed=settings.seed, samples=settings.gap_samples)
    notes.append("factors enter as probabilities in (0, 1) mapped through their quantile functions; the hazard "
                 "realization through the inverse CDF of the weights along the realizations sorted by nominal AFP")
    notes.append("natural variability of stage (aleatory) is integrated in every sample and is not a factor")
    t4 = time.perf_counter()
    prov = {"seed": settings.seed, "realizations": drv.size, "grid_points": int(drv.grid.size),
            "model_evaluations": int(next(iter(sobol.values())).n_evaluations)}
    return SensitivityReport(factors=factors, sobol=sobol, settings=settings, n=n, converged=converged,
                             history=tuple(history), gap=gap, morris=morris, warnings=tuple(warns),
                             notes=tuple(notes), provenance=prov,
                             seconds={"precompute": t1 - t0, "sobol": t2 - t1, "morris": t3 - t2, "gap": t4 - t3})


# --------------------------------------------------------------------------
# outputs
# --------------------------------------------------------------------------
def plot_indices(report: SensitivityReport, path_stem=None, *, top: int = 12):
    """Ranked total and first-order indices with their intervals, one panel per output
    (:func:`riskcalc.plots.plot_sensitivity` with each panel's sample size and level).

    Returns the figure when ``path_stem`` is None, else the written paths (PNG and SVG).
    """
    from ..outputs.figures import plot_sensitivity

    notes = {k: f"N = {r.n}, {round(100 * r.conf_level)} % intervals" for k, r in report.sobol.items()}
    return plot_sensitivity(report.summary(), path_stem, panel_notes=notes, top=top)


def write_sensitivity_outputs(report: SensitivityReport, folder, *, figures: bool = True, json_name=None):
    """Write the tables (and the figure) of a report into an existing folder (e.g. a run's temporary folder).

    Writes ``tables/sobol_indices.csv``, ``tables/mean_mode_gap_by_source.csv``, with second order
    ``tables/sobol_second_order.csv``, with Morris ``tables/morris_screening.csv``,
    ``figures/sensitivity_indices.png|svg``, and with ``json_name`` that JSON file.
    """
    from ..io import write_csv, write_json

    folder = Path(folder)
    t = folder / "tables"
    t.mkdir(parents=True, exist_ok=True)
    write_csv(t / "sobol_indices.csv", report.frame())
    write_csv(t / "mean_mode_gap_by_source.csv", report.gap_frame())
    if report.settings.second_order:
        write_csv(t / "sobol_second_order.csv", report.s2_frame())
    if report.morris:
        write_csv(t / "morris_screening.csv", report.morris_frame())
    if figures:
        plot_indices(report, folder / "figures" / "sensitivity_indices")
    if json_name:
        write_json(folder / json_name, report.as_json())


def sensitivity_workflow(scenario_path, out, *, n=None, seed=None, second_order=None, target_width=None,
                         morris=None, overwrite=False, workers=None, figures=True):
    """``riskcalc sensitivity``: load, run the chain, compute the report and write it into ``out`` atomically.

    Command-line values override the scenario's ``[sensitivity]`` table.

    Returns
    -------
    result : RiskResult
    report : SensitivityReport
    """
    from ..risk.assess import assess
    from ..io import atomic_output_dir
    from ..config.scenario import load_scenario

    out = Path(out)
    if out.exists() and out.is_dir() and any(out.iterdir()) and not overwrite:
        raise InputError("output directory is not empty; pass --overwrite to replace it", out)
    sc_ = load_scenario(scenario_path)
    overrides = {"n": n, "seed": seed, "second_order": second_order or None, "target_width": target_width,
                 "morris": morris or None}
    settings = read_settings(sc_.sensitivity, sc_.path, default_seed=sc_.seed, overrides=overrides,
                             factors=scenario_factors(sc_.model))
    result = assess(sc_, workers=workers)
    report = sensitivity_for_run(sc_, result, settings, workers=workers)
    report = replace(report, provenance={**result.provenance, **report.provenance})
    with atomic_output_dir(out, overwrite=overwrite) as tmp:
        write_sensitivity_outputs(report, tmp, figures=figures, json_name="sensitivity.json")
    return result, report
