"""The response and consequence chain evaluated on the grid: integrands of the risk integrals.

For a peak quantity x (discharge, or stage when the hazard is a stage-frequency
ensemble) the chain is

    stage h(x)  ->  mode probabilities P_i(h)  ->  system P_f = 1 − Π(1 − P_i)
                ->  consequences D_b(h), D_nb(h), L_b(h), L_nb(h)

and the integrands are AFP g = P_f, EAD g = P_f D_b + (1 − P_f) D_nb, ALL
g = P_f L_b + (1 − P_f) L_nb, with the incremental parts P_f (D_b − D_nb) and
P_f (L_b − L_nb), and the lower unimodal bound max_i P_i.

Natural variability of stage about the rating curve, ε ~ N(0, σ(x)), is folded
in by Gauss-Hermite quadrature: g*(x) = E_ε[g(h(x) + ε)], applied to the whole
integrand (failure and consequences see the same stage). Knowledge
uncertainty (a rating offset, shifts and spreads of the failure modes, damage
and life-loss multipliers) is a set of parameters drawn once per Monte Carlo
draw; :class:`ResponseDraws` holds them.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .consequences import ConsequenceCurves
from .fragility import combine_independent
from .rating import RatingCurve, StageSpread, gauss_hermite_normal

__all__ = ["RiskModel", "ResponseDraws", "OUTPUTS"]

#: Integrand names, in column order.
OUTPUTS = ("afp", "afp_lower_bound", "ead", "ead_incremental", "all", "all_incremental")


@dataclass(frozen=True, eq=False)
class ResponseDraws:
    """Knowledge-uncertainty parameters for D draws (each array (D,); mode arrays (n_modes, D))."""

    rating_offset: np.ndarray
    mode_shift: np.ndarray
    mode_spread: np.ndarray
    damage_multiplier: np.ndarray
    life_loss_multiplier: np.ndarray

    @property
    def size(self):
        return self.rating_offset.size

    def take(self, idx):
        return ResponseDraws(self.rating_offset[idx], self.mode_shift[:, idx], self.mode_spread[:, idx],
                             self.damage_multiplier[idx], self.life_loss_multiplier[idx])


@dataclass(frozen=True, eq=False)
class RiskModel:
    """Rating (optional), failure modes and consequences.

    Attributes
    ----------
    modes : tuple of FailureMode
    consequences : ConsequenceCurves
    rating : RatingCurve or None
        None when the hazard is already peak stage.
    natural : StageSpread or None
        Natural variability of stage (aleatory, Gauss-Hermite).
    rating_offset_sd : float
        Knowledge uncertainty of the rating: sd of a stage offset drawn per draw [stage units].
    hermite_nodes : int
    """

    modes: tuple
    consequences: ConsequenceCurves
    rating: RatingCurve | None = None
    natural: StageSpread | None = None
    rating_offset_sd: float = 0.0
    hermite_nodes: int = 16
    mode_names: tuple = field(default=())

    def __post_init__(self):
        names = [m.name for m in self.modes]
        if len(set(names)) != len(names):
            raise ValueError("failure-mode names must be unique")
        if not self.modes:
            raise ValueError("at least one failure mode is needed")
        object.__setattr__(self, "mode_names", tuple(names))

    # ------------------------------------------------------------------
    @property
    def has_knowledge_uncertainty(self) -> bool:
        return bool(self.rating_offset_sd > 0
                    or any(m.shift_sd > 0 or m.spread_range is not None for m in self.modes)
                    or self.consequences.damage_multiplier.active or self.consequences.life_loss_multiplier.active)

    def stage_at(self, x):
        return np.asarray(x, float) if self.rating is None else self.rating.stage_at(x)

    def sample(self, rng, n) -> ResponseDraws:
        """Draw ``n`` sets of knowledge-uncertainty parameters with ``rng``."""
        nm = len(self.modes)
        off = rng.normal(0.0, self.rating_offset_sd, n) if self.rating_offset_sd > 0 else np.zeros(n)
        shift = np.zeros((nm, n))
        spread = np.ones((nm, n))
        for i, m in enumerate(self.modes):
            if m.shift_sd > 0:
                shift[i] = rng.normal(0.0, m.shift_sd, n)
            if m.spread_range is not None:
                spread[i] = rng.uniform(m.spread_range[0], m.spread_range[1], n)
        c = self.consequences
        return ResponseDraws(off, shift, spread, c.damage_multiplier.sample(rng, n),
                             c.life_loss_multiplier.sample(rng, n))

    def nominal(self, n=1) -> ResponseDraws:
        """The nominal parameters (no offset or shift, spread factor 1, multipliers at their nominal values)."""
        nm = len(self.modes)
        c = self.consequences
        return ResponseDraws(np.zeros(n), np.zeros((nm, n)), np.ones((nm, n)),
                             np.full(n, c.damage_multiplier.nominal), np.full(n, c.life_loss_multiplier.nominal))

    # ------------------------------------------------------------------
    def _at_stage(self, h, shift, spread, dmul, lmul):
        """Integrands at stages h; parameters broadcast against h. Returns dict of arrays shaped like h."""
        p_modes = np.stack([m.prob(h, shift[i], spread[i]) for i, m in enumerate(self.modes)])
        pf = combine_independent(p_modes)
        db, dn, lb, ln = self.consequences.at(h)
        db, dn, lb, ln = db * dmul, dn * dmul, lb * lmul, ln * lmul
        out = {
            "afp": pf,
            "afp_lower_bound": p_modes.max(axis=0),
            "ead": pf * db + (1 - pf) * dn,
            "ead_incremental": pf * (db - dn),
            "all": pf * lb + (1 - pf) * ln,
            "all_incremental": pf * (lb - ln),
        }
        for i, name in enumerate(self.mode_names):
            out[f"afp_mode:{name}"] = p_modes[i]
        return out

    def output_names(self):
        return OUTPUTS + tuple(f"afp_mode:{n}" for n in self.mode_names)

    def integrands(self, x, draws: ResponseDraws | None = None):
        """Integrands at quantities ``x`` (Q,).

        With ``draws`` None: nominal parameters, returns an array (Q, K) with K = len(output_names()).
        With D draws: returns (D, Q, K).
        """
        x = np.asarray(x, float)
        h0 = self.stage_at(x)
        single = draws is None
        d = self.nominal(1) if single else draws
        # parameters as (D, 1[, 1]) against stages (Q[, nodes])
        if self.natural is not None and self.natural.active:
            z, w = gauss_hermite_normal(self.hermite_nodes)
            sd = self.natural.at(x) if self.rating is not None else self.natural.at(np.maximum(x, 1e-300))
            h = (h0[:, None] + sd[:, None] * z[None, :])[None, :, :]  # (1, Q, n)
            expand = (slice(None), None, None)
        else:
            w = None
            h = h0[None, :]
            expand = (slice(None), None)
        h = h + d.rating_offset[expand]
        shift = d.mode_shift[(slice(None),) + expand]
        spread = d.mode_spread[(slice(None),) + expand]
        vals = self._at_stage(h, shift, spread, d.damage_multiplier[expand], d.life_loss_multiplier[expand])
        names = self.output_names()
        if w is not None:
            out = np.stack([vals[k] @ w for k in names], axis=-1)
        else:
            out = np.stack([np.broadcast_to(vals[k], h.shape) for k in names], axis=-1)
        return out[0] if single else out

    def _stages_and_weights(self, x):
        """Stages (Q, n) at the quadrature nodes of natural variability and their weights (n,)."""
        x = np.asarray(x, float)
        h0 = self.stage_at(x)
        if self.natural is not None and self.natural.active:
            z, w = gauss_hermite_normal(self.hermite_nodes)
            sd = self.natural.at(x) if self.rating is not None else self.natural.at(np.maximum(x, 1e-300))
            return h0[:, None] + sd[:, None] * z[None, :], w
        return h0[:, None], np.ones(1)

    def fn_integrand(self, x, levels) -> np.ndarray:
        """F-N integrand at quantities x (Q,) and life-loss levels N (L,), nominal response: (Q, L).

        E_ε[P_f(h + ε) 1[L_inc(h + ε) >= N]] with L_inc = life loss given breach minus given no breach
        (the life loss the failure causes), over the natural variability of stage.
        """
        h, w = self._stages_and_weights(x)
        d = self.nominal(1)
        v = self._at_stage(h, d.mode_shift[:, 0], d.mode_spread[:, 0], 1.0, 1.0)
        _, _, lb, ln = self.consequences.at(h)
        inc = (lb - ln) * self.consequences.life_loss_multiplier.nominal
        ind = inc[:, :, None] >= np.asarray(levels, float)[None, None, :]
        return np.einsum("qn,qnl,n->ql", v["afp"], ind, w)

    def max_incremental_life_loss(self, x) -> float:
        """Largest nominal incremental life loss at quantities x (over the quadrature nodes)."""
        h, _ = self._stages_and_weights(x)
        _, _, lb, ln = self.consequences.at(h)
        return float(np.max((lb - ln) * self.consequences.life_loss_multiplier.nominal, initial=0.0))

    def consequence_curves_at(self, x):
        """Nominal consequences and P_f at quantities x (for tables and figures): dict of (Q,) arrays."""
        h = self.stage_at(np.asarray(x, float))
        d = self.nominal(1)
        vals = self._at_stage(h, d.mode_shift[:, 0], d.mode_spread[:, 0], 1.0, 1.0)
        db, dn, lb, ln = self.consequences.at(h)
        vals.update(stage=h, damage_breach=db, damage_no_breach=dn, life_loss_breach=lb, life_loss_no_breach=ln)
        return vals
