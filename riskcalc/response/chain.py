"""The response chain: stage, failure modes, system P_f and consequences, as integrands on points.

For a peak quantity x (discharge, or stage when the hazard is a stage-frequency
ensemble) the chain is

    stage h(x)  ->  failure-mode probabilities P_i(h)  ->  system P_f = 1 − Π(1 − P_i)
                ->  consequences D_b(h), D_nb(h), L_b(h), L_nb(h)

and the integrands of the risk integrals are (:data:`OUTPUTS`)

    afp               P_f
    afp_lower_bound   max_i P_i                      (fully dependent failure modes)
    afp_upper_bound   min(1, Σ_i P_i)                (mutually exclusive failure modes)
    ead               P_f D_b + (1 − P_f) D_nb
    ead_incremental   P_f (D_b − D_nb)
    all               P_f L_b + (1 − P_f) L_nb
    all_incremental   P_f (L_b − L_nb)

When failure modes name their own breach consequences (``mode_consequences``), the
breach terms are shared among the modes by the proportional allocation below:
P_f D_b becomes Σ_i a_i D_b,i with a_i = P_f P_i / Σ_j P_j, each mode's breach
consequences from its own table and the no-breach consequences from the chain's
(with one table for all modes the sum is P_f D_b again).
    afp_fm:<name>     P_i of each failure mode
    afp_fm_adjusted:<name>   P_f P_i / Σ_j P_j       (proportional common-cause adjustment)

The system value 1 − Π(1 − P_i) assumes the failure modes are independent given
the stage; whatever their dependence, a series system lies between the bounds
max_i P_i and min(1, Σ_i P_i) (Ang & Tang 1984). The adjusted failure-mode
values share P_f among the modes in proportion to their probabilities, so that
they add up to the system value (the proportional common-cause adjustment, as
recalled from the USACE/USBR best-practice guidance on combining failure modes
[from memory; check the primary document]).

Natural variability of stage about the rating curve, ε ~ N(0, σ(x)), is folded
in by Gauss-Hermite quadrature over the whole integrand, g*(x) = E_ε[g(h(x) + ε)]
(failure and consequences see the same stage). Knowledge uncertainty enters as
:class:`~riskcalc.response.uncertain.ResponseParameters`, one set per draw,
derived from the chain's registry of uncertain inputs.

This is the only implementation of the chain. The Monte Carlo, the Sobol'
evaluator, the alternatives, the F-N curve and the tables all call
:meth:`ResponseChain.on`, which fixes the evaluation points once (stages at the
quadrature nodes) and evaluates rows of parameters with caching: each failure
mode is computed once per distinct (offset, shift, spread), the consequences
once per distinct offset, the consequence factors applied after the integral.
In a Saltelli design most rows share those with a neighbour, which is what makes
the Sobol' path fast; in a Monte Carlo chunk every row differs and the caching
costs one sort.

References
----------
.. [1] Abramowitz, M. and Stegun, I.A. (1964). Handbook of Mathematical
   Functions, 25.4.46 (Gauss-Hermite quadrature).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .consequences import ConsequenceCurves
from .rating import RatingCurve, StageSpread, gauss_hermite_normal
from .uncertain import ResponseParameters, UncertainInputs

__all__ = ["ResponseChain", "ChainOnPoints", "OUTPUTS", "HEADLINE_OUTPUTS", "failure_mode_output"]

#: Integrand names of every chain, in column order (per-failure-mode AFPs follow).
OUTPUTS = ("afp", "afp_lower_bound", "ead", "ead_incremental", "all", "all_incremental", "afp_upper_bound")
#: The three headline integrands.
HEADLINE_OUTPUTS = ("afp", "ead", "all")
_FM_PREFIX = "afp_fm:"
_FM_ADJ_PREFIX = "afp_fm_adjusted:"


def failure_mode_output(name: str, adjusted: bool = False) -> str:
    """The integrand (and per-draw column) name of one failure mode's AFP (or its common-cause adjusted AFP)."""
    return (_FM_ADJ_PREFIX if adjusted else _FM_PREFIX) + name


@dataclass(frozen=True, eq=False)
class ResponseChain:
    """Rating (optional), failure modes, consequences and their uncertain inputs.

    Attributes
    ----------
    failure_modes : tuple of FailureMode
    consequences : ConsequenceCurves
    rating : RatingCurve or None
        None when the hazard is already peak stage.
    natural : StageSpread or None
        Natural variability of stage (aleatory, Gauss-Hermite).
    uncertain : UncertainInputs
        The registry of knowledge-uncertain parameters.
    hermite_nodes : int
    """

    failure_modes: tuple
    consequences: ConsequenceCurves
    rating: RatingCurve | None = None
    natural: StageSpread | None = None
    uncertain: UncertainInputs | None = None
    hermite_nodes: int = 16
    mode_consequences: tuple = ()

    def __post_init__(self):
        names = [m.name for m in self.failure_modes]
        if not names:
            raise ValueError("at least one failure mode is needed")
        if len(set(names)) != len(names):
            raise ValueError("failure-mode names must be unique")
        if self.uncertain is None:
            object.__setattr__(self, "uncertain", UncertainInputs((), len(names)))
        elif self.uncertain.n_failure_modes != len(names):
            raise ValueError("the uncertain inputs describe a different number of failure modes")
        if self.mode_consequences and len(self.mode_consequences) != len(names):
            raise ValueError("mode_consequences needs one entry (or None) per failure mode")

    @property
    def own_consequences(self) -> bool:
        """True when some failure mode has its own breach consequences."""
        return any(c is not None for c in self.mode_consequences)

    def consequence_groups(self) -> list:
        """Failure modes grouped by breach consequences: [(mode indices, ConsequenceCurves of the breach)].

        The first group holds the modes with the chain's consequences (possibly none of them).
        """
        cons = self.mode_consequences or (None,) * len(self.failure_modes)
        groups = [([i for i, c in enumerate(cons) if c is None], self.consequences)]
        for i, c in enumerate(cons):
            if c is not None:
                groups.append(([i], c))
        return groups

    # -- names -------------------------------------------------------------
    @property
    def failure_mode_names(self) -> tuple:
        return tuple(m.name for m in self.failure_modes)

    def output_names(self) -> tuple:
        return (
            OUTPUTS
            + tuple(failure_mode_output(n) for n in self.failure_mode_names)
            + tuple(failure_mode_output(n, True) for n in self.failure_mode_names)
        )

    @property
    def has_knowledge_uncertainty(self) -> bool:
        return self.uncertain.active

    @property
    def natural_active(self) -> bool:
        return self.natural is not None and self.natural.active

    # -- stage ---------------------------------------------------------------
    def stage_at(self, x) -> np.ndarray:
        """Stage at quantities ``x`` from the rating (the quantity itself for a stage hazard)."""
        return np.asarray(x, float) if self.rating is None else self.rating.stage_at(x)

    def stages(self, x):
        """Stages (P, n) at the Gauss-Hermite nodes of natural variability, and the node weights (n,).

        Without natural variability: stages (P, 1) and weights [1].
        """
        x = np.asarray(x, float)
        h0 = self.stage_at(x)
        if not self.natural_active:
            return h0[:, None], np.ones(1)
        z, w = gauss_hermite_normal(self.hermite_nodes)
        sd = self.natural.at(x) if self.rating is not None else self.natural.at(np.maximum(x, 1e-300))
        return h0[:, None] + sd[:, None] * z[None, :], w

    def on(self, points) -> ChainOnPoints:
        """The chain bound to evaluation points (P,): stages and quadrature fixed once."""
        pts = np.asarray(points, float)
        h, w = self.stages(pts)
        cs = [self.consequences] + [c for c in self.mode_consequences if c is not None]
        has = {
            "damage": any(bool(np.any(c.damage_breach != 0) or np.any(c.damage_no_breach != 0)) for c in cs),
            "life_loss": any(bool(np.any(c.life_loss_breach != 0) or np.any(c.life_loss_no_breach != 0)) for c in cs),
        }
        return ChainOnPoints(chain=self, points=pts, stage=h, node_weights=w, _has=has)

    # -- convenience ------------------------------------------------------
    def integrands(self, x, params: ResponseParameters | None = None) -> np.ndarray:
        """Every integrand at quantities ``x`` (Q,): (Q, K) nominal, or (D, Q, K) for D parameter sets."""
        on = self.on(x)
        names = self.output_names()
        p = self.uncertain.nominal(1) if params is None else params
        g, inv = on.integrands(p, names)
        out = np.stack([_gather(g[k], inv) for k in names], axis=-1)  # (D, Q, K)
        if params is None:
            return out[0]
        return out


def _unique(*cols):
    """Distinct rows of the stacked columns: (values (U, k), inverse (B,))."""
    key = np.stack([np.asarray(c, float) for c in cols], axis=1)
    if key.shape[0] == 1 or np.all(key == key[:1]):
        return key[:1], np.zeros(key.shape[0], np.intp)
    u, inv = np.unique(key, axis=0, return_inverse=True)
    return u, inv.reshape(-1)


def _take(a, inv):
    """Rows ``a[inv]``, or the single row (broadcastable) when ``a`` has one."""
    return a[:1] if a.shape[0] == 1 else a[inv]


def _gather(a, inv):
    """Rows ``a[inv]`` with the full leading length."""
    return a[np.zeros(inv.size, np.intp)] if a.shape[0] == 1 else a[inv]


@dataclass(frozen=True, eq=False)
class ChainOnPoints:
    """A :class:`ResponseChain` at fixed evaluation points: stages at the quadrature nodes precomputed.

    Attributes
    ----------
    chain : ResponseChain
    points : ndarray (P,)
        Quantities where the integrands are evaluated.
    stage : ndarray (P, n)
        Stage at every point and quadrature node of natural variability.
    node_weights : ndarray (n,)
    """

    chain: ResponseChain
    points: np.ndarray
    stage: np.ndarray
    node_weights: np.ndarray
    _has: dict = field(default_factory=dict, repr=False)

    @property
    def size(self) -> int:
        return int(self.points.size)

    def _nodes(self, a):
        """Average over the quadrature nodes: (..., P, n) -> (..., P)."""
        return a[..., 0] if self.node_weights.size == 1 else a @ self.node_weights

    def integrands(self, params: ResponseParameters, outputs=HEADLINE_OUTPUTS):
        """Integrands of distinct parameter sets, consequence factors excluded.

        Parameters
        ----------
        params : ResponseParameters of B draws
        outputs : sequence of str
            Names from :meth:`ResponseChain.output_names`.

        Returns
        -------
        values : dict of str to ndarray (U, P)
            Integrands of the U distinct (offset, shifts, spreads) among the B draws, with damage and
            life-loss factors 1 (they multiply the integrals afterwards).
        inverse : ndarray (B,) of int
            Draw b uses row ``inverse[b]``.
        """
        ch, h = self.chain, self.stage
        modes = ch.failure_modes
        nm = len(modes)
        outputs = tuple(outputs)
        uj, invj = _unique(params.stage_offset, *params.fm_shift, *params.fm_spread)
        U = uj.shape[0]
        off_u, shift_u, spread_u = uj[:, 0], uj[:, 1 : 1 + nm].T, uj[:, 1 + nm :].T
        ext = (slice(None), None, None)
        want_fm = [i for i, n in enumerate(ch.failure_mode_names) if failure_mode_output(n) in outputs]
        want_adj = [i for i, n in enumerate(ch.failure_mode_names) if failure_mode_output(n, True) in outputs]
        need_bound = "afp_lower_bound" in outputs
        need_cons = any(k in outputs for k in ("ead", "ead_incremental", "all", "all_incremental"))
        own = ch.own_consequences and need_cons
        keep = set(want_adj) | (set(range(nm)) if own else set())
        need_sum = "afp_upper_bound" in outputs or bool(keep)
        need_pf = bool(keep) or need_cons or "afp" in outputs
        out = {}
        pf = bound = psum = None
        kept = {}
        for i, mode in enumerate(modes):
            u, inv = _unique(off_u, shift_u[i], spread_u[i])
            p = mode.prob(h[None] + u[:, 0][ext], u[:, 1][ext], u[:, 2][ext])  # (u_i, P, n)
            if i in want_fm:
                out[failure_mode_output(mode.name)] = self._nodes(_take(p, inv))
            if need_bound:
                pb = _take(p, inv)
                bound = pb if bound is None else np.maximum(bound, pb)
            if need_sum:
                pi = _take(p, inv)
                psum = pi.copy() if psum is None else psum + pi
                if i in keep:
                    kept[i] = pi
            if not need_pf:
                continue
            if nm == 1:
                pf = _take(p, inv)
                continue
            q = np.clip(p, 0.0, 1.0)
            np.negative(q, out=q)
            with np.errstate(divide="ignore"):  # P_i = 1 gives log 0 = -inf, hence P_f = 1 exactly
                np.log1p(q, out=q)
            li = _take(q, inv)  # independent failure modes: P_f = -expm1(sum_i log1p(-P_i))
            pf = li.copy() if pf is None else pf + li
        if need_pf and nm > 1:
            pf = -np.expm1(pf)
        if need_bound:
            out["afp_lower_bound"] = self._nodes(bound)
        if "afp_upper_bound" in outputs:
            out["afp_upper_bound"] = self._nodes(np.minimum(psum, 1.0))
        share = None
        if keep:
            with np.errstate(invalid="ignore", divide="ignore"):
                share = np.where(psum > 0, pf / np.where(psum > 0, psum, 1.0), 0.0)
            for i in want_adj:
                out[failure_mode_output(modes[i].name, True)] = self._nodes(kept[i] * share)
        if "afp" in outputs:
            out["afp"] = self._nodes(pf)
        if any(k in outputs for k in ("ead", "ead_incremental", "all", "all_incremental")):
            u, inv = _unique(off_u)
            hc = h[None] + u[:, 0][ext]
            c = ch.consequences
            for has, base, top, total, inc in (
                ("damage", c.damage_no_breach, c.damage_breach, "ead", "ead_incremental"),
                ("life_loss", c.life_loss_no_breach, c.life_loss_breach, "all", "all_incremental"),
            ):
                if total not in outputs and inc not in outputs:
                    continue
                if not self._has[has]:
                    zero = np.zeros((1, self.size))
                    for k in (total, inc):
                        if k in outputs:
                            out[k] = zero
                    continue
                # linear in stage, ends held (ConsequenceCurves.at); only the fields that are not zero
                if own:
                    part = self._allocated_breach(has, hc, inv, pf, share, kept)
                else:
                    d_inc = (
                        _take(np.interp(hc, c.stage, top - base), inv)
                        if np.any(top != base)
                        else np.zeros((1,) + h.shape)
                    )
                    part = pf * d_inc
                if inc in outputs:
                    out[inc] = self._nodes(part)
                if total in outputs:
                    out[total] = (
                        self._nodes(part + _take(np.interp(hc, c.stage, base), inv))
                        if np.any(base != 0)
                        else (out[inc] if inc in outputs else self._nodes(part))
                    )
        shape = (U, self.size)
        return {k: np.broadcast_to(out[k], shape) for k in outputs}, invj

    def _allocated_breach(self, has, hc, inv, pf, share, kept):
        """Σ_groups a_g (X_b,g − X_nb) with a_g the allocated P_f of the group's modes (X damage or life loss)."""
        ch = self.chain
        field_b, field_nb = (
            ("damage_breach", "damage_no_breach")
            if has == "damage"
            else (
                "life_loss_breach",
                "life_loss_no_breach",
            )
        )
        base = getattr(ch.consequences, field_nb)
        part = 0.0
        for idx, cg in ch.consequence_groups():
            if not idx:
                continue
            a = share * sum(kept[i] for i in idx)
            top = np.interp(hc, cg.stage, getattr(cg, field_b)) - np.interp(hc, ch.consequences.stage, base)
            part = part + a * _take(top, inv)
        return part

    def factors(self, params: ResponseParameters, outputs) -> np.ndarray:
        """Consequence factor of each output and draw: (K, B) (1 for probabilities)."""
        rows = []
        for k in outputs:
            if k in ("ead", "ead_incremental"):
                rows.append(params.damage_factor)
            elif k in ("all", "all_incremental"):
                rows.append(params.life_loss_factor)
            else:
                rows.append(np.ones(params.size))
        return np.stack(rows)

    def risk(self, masses, params: ResponseParameters, outputs=HEADLINE_OUTPUTS) -> np.ndarray:
        """Risk integrals of B draws: masses (B, P) or (P,) against their response parameters -> (B, K).

        ``sum_p masses[b, p] g_k(x_p; params_b)``, consequence factors applied after the sum.
        """
        w = np.asarray(masses, float)
        B = params.size
        if w.ndim == 1:
            w = np.broadcast_to(w, (B, w.size))
        g, inv = self.integrands(params, outputs)
        res = np.empty((len(outputs), B))
        for j, k in enumerate(outputs):
            a = g[k]
            res[j] = w @ a[0] if a.shape[0] == 1 else np.einsum("bp,bp->b", w, a[inv])
        res *= self.factors(params, outputs)
        return res.T

    def nominal_integrands(self, outputs=None) -> np.ndarray:
        """Integrands with the nominal response parameters: (P, K)."""
        outputs = self.chain.output_names() if outputs is None else tuple(outputs)
        p = self.chain.uncertain.nominal(1)
        g, _ = self.integrands(p, outputs)
        return np.stack([g[k][0] for k in outputs], axis=1) * self.factors(p, outputs)[:, 0]

    def incremental_life_loss(self, params: ResponseParameters | None = None) -> np.ndarray:
        """Incremental life loss L_b − L_nb at every point and node: (D, P, n) (nominal: D = 1).

        With several exposure scenarios or breach-consequence tables: every (table, scenario) curve
        stacked on the first axis, (G E D, P, n), for ranges; :meth:`fn_rows` keeps them apart.
        """
        p = self.chain.uncertain.nominal(1) if params is None else params
        parts = [inc for _, _, inc in self._life_loss_cases(p)]
        return parts[0] if len(parts) == 1 else np.concatenate(parts, axis=0)

    def _life_loss_cases(self, p: ResponseParameters):
        """(mode indices, exposure weight, incremental life loss (D, P, n)) per breach table and exposure scenario."""
        ch = self.chain
        h = self.stage[None] + p.stage_offset[:, None, None]
        base_c = ch.consequences
        _, _, lnb = base_c.by_exposure()
        out = []
        for idx, cg in ch.consequence_groups():
            if not idx:
                continue
            we, lb, _ = cg.by_exposure()
            if lb.shape[0] != lnb.shape[0]:
                raise ValueError("a failure mode's consequence table has a different set of exposure scenarios")
            for e in range(we.size):
                inc = np.interp(h, cg.stage, lb[e]) - np.interp(h, base_c.stage, lnb[e])
                out.append((idx, float(we[e]), inc * p.life_loss_factor[:, None, None]))
        return out

    def fn_integrand(self, levels, params: ResponseParameters | None = None) -> np.ndarray:
        """F-N integrand: E_ε[Σ_g,e π_e a_g 1[L_inc,g,e(h + ε) >= N]] at every point and level: (D, P, L).

        With ``params`` None the nominal response (D = 1). L_inc is the incremental life loss (given breach
        minus given no breach), the life loss the failure causes; g runs over the breach-consequence
        tables (a_g the P_f allocated to their modes) and e over the exposure scenarios (weights π_e).
        """
        p = self.chain.uncertain.nominal(1) if params is None else params
        lv = np.asarray(levels, float)
        out = 0.0
        for a, we, inc in self._allocated_cases(p):
            ind = inc[..., None] >= lv  # (D, P, n, L)
            out = out + we * np.einsum("dpn,dpnl,n->dpl", a, ind, self.node_weights)
        return out

    def _allocated_cases(self, p: ResponseParameters):
        """(allocated P_f (D, P, n), exposure weight, incremental life loss (D, P, n)) per case."""
        cases = self._life_loss_cases(p)
        probs = self._pf_at_nodes(p, groups=[c[0] for c in cases])
        return [(a, we, inc) for a, (_, we, inc) in zip(probs, cases)]

    def fn_rows(self, masses, params: ResponseParameters, levels) -> np.ndarray:
        """F-N of B draws: masses (B, P) against their response parameters -> F (B, L).

        F_b(N) = Σ_p w[b, p] E_ε[Σ_g,e π_e a_g 1[L_inc,g,e >= N]] with the draw's own offsets, shifts,
        spreads and life-loss factor: each (point, node, case) adds its probability to every level at or
        below its incremental life loss (a weighted histogram over the levels, summed from the top).
        """
        w = np.asarray(masses, float)
        lv = np.asarray(levels, float)
        B, L = params.size, lv.size
        hist = np.zeros(B * (L + 1))
        for a, we, inc in self._allocated_cases(params):
            prob = we * w[:, :, None] * a * self.node_weights[None, None, :]
            k = np.searchsorted(lv, inc, side="right")  # levels at or below the life loss: F(N_l) for l < k
            flat = (np.arange(B)[:, None, None] * (L + 1) + k).ravel()
            hist += np.bincount(flat, weights=prob.ravel(), minlength=B * (L + 1))
        hist = hist.reshape(B, L + 1)
        return np.cumsum(hist[:, :0:-1], axis=1)[:, ::-1]

    def _pf_at_nodes(self, p: ResponseParameters, groups=None):
        """System P_f at every draw, point and node, not yet averaged: (D, P, n).

        With ``groups`` (lists of mode indices): the P_f allocated to each group, a_g = P_f Σ_{i∈g} P_i / Σ_j P_j,
        as a list of (D, P, n) arrays.
        """
        h = self.stage[None] + p.stage_offset[:, None, None]
        lp = np.zeros(np.broadcast_shapes(h.shape))
        probs = []
        for i, mode in enumerate(self.chain.failure_modes):
            q = np.clip(mode.prob(h, p.fm_shift[i][:, None, None], p.fm_spread[i][:, None, None]), 0.0, 1.0)
            q = np.broadcast_to(q, lp.shape)
            probs.append(q)
            with np.errstate(divide="ignore"):
                lp += np.log1p(-q)
        pf = -np.expm1(lp)
        if groups is None:
            return pf
        if len(groups) == 1 and len(groups[0]) == len(probs):
            return [pf]
        total = sum(probs)
        with np.errstate(invalid="ignore", divide="ignore"):
            share = np.where(total > 0, pf / np.where(total > 0, total, 1.0), 0.0)
        return [share * sum(probs[i] for i in g) for g in groups]

    def max_incremental_life_loss(self) -> float:
        """Largest nominal incremental life loss at the points (over the quadrature nodes)."""
        return float(np.max(self.incremental_life_loss(), initial=0.0))

    def curves(self) -> dict:
        """Nominal stage, P_f, failure-mode probabilities and consequences at the points, without natural
        variability (for tables and figures): dict of (P,) arrays."""
        ch = self.chain
        bare = (
            ch.on(self.points)
            if not ch.natural_active
            else ChainOnPoints(
                chain=ch,
                points=self.points,
                stage=ch.stage_at(self.points)[:, None],
                node_weights=np.ones(1),
                _has=self._has,
            )
        )
        names = ch.output_names()
        G = bare.nominal_integrands(names)
        vals = {k: G[:, j] for j, k in enumerate(names)}
        h = bare.stage[:, 0]
        nominal = ch.uncertain.nominal(1)
        dmul, lmul = float(nominal.damage_factor[0]), float(nominal.life_loss_factor[0])
        db, dn, lb, ln = ch.consequences.at(h)
        db, dn, lb, ln = db * dmul, dn * dmul, lb * lmul, ln * lmul
        vals.update(stage=h, damage_breach=db, damage_no_breach=dn, life_loss_breach=lb, life_loss_no_breach=ln)
        return vals
