"""Fragility curves, failure modes made of conditional nodes, and their combination.

A fragility curve gives the probability of failure (or of a node event) given
the peak stage. A failure mode is a chain of conditional node curves (for
example initiation, continuation, progression, breach) whose product is the
mode's system-response curve. Several modes combine as independent events,
with the unimodal bounds reported.

References
----------
.. [1] Ang, A.H.-S. and Tang, W.H. (1984). Probability Concepts in Engineering
   Planning and Design, Vol. II: Decision, Risk and Reliability. Wiley,
   section 6.2 (bounds on the failure probability of series systems).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import special as sc

from ..errors import InputError
from ..io import read_table

__all__ = ["FragilityCurve", "FailureMode", "combine_independent", "read_fragility_table", "FRAGILITY_KINDS"]

FRAGILITY_KINDS = ("normal", "lognormal", "table")


@dataclass(frozen=True, eq=False)
class FragilityCurve:
    """Probability of an event given peak stage.

    Parameters
    ----------
    kind : {"normal", "lognormal", "table"}
        ``normal``: Φ((h − median) / spread), ``median`` and ``spread`` in stage units.
        ``lognormal``: Φ(ln((h − datum) / median) / spread) for h > datum, else 0;
        ``median`` is the median stage above ``datum``, ``spread`` is β (log standard deviation).
        ``table``: piecewise linear through (stage, probability) points, non-decreasing, held
        constant beyond the first and last points.
    name : str
    """

    kind: str
    name: str = "fragility"
    median: float = np.nan
    spread: float = np.nan
    datum: float = 0.0
    stage: np.ndarray | None = None
    probability: np.ndarray | None = None
    source: str | None = None

    def __post_init__(self):
        if self.kind not in FRAGILITY_KINDS:
            raise ValueError(f"fragility kind '{self.kind}' is not one of {', '.join(FRAGILITY_KINDS)}")
        if self.kind in ("normal", "lognormal"):
            if not (np.isfinite(self.median) and np.isfinite(self.spread)):
                raise ValueError("a normal or lognormal fragility needs a finite median and spread")
            if self.spread <= 0:
                raise ValueError("fragility spread must be > 0")
            if self.kind == "lognormal" and self.median <= 0:
                raise ValueError("a lognormal fragility needs a median stage above datum > 0")
        else:
            s, p = np.asarray(self.stage, float), np.asarray(self.probability, float)
            if s.ndim != 1 or s.size < 2 or s.shape != p.shape:
                raise ValueError("a fragility table needs at least two (stage, probability) points")
            if np.any(np.diff(s) <= 0):
                raise ValueError("fragility stages must strictly increase")
            if np.any((p < 0) | (p > 1)) or np.any(np.diff(p) < 0):
                raise ValueError("fragility probabilities must lie in [0, 1] and not decrease")

    def prob(self, h, shift=0.0, spread=None) -> np.ndarray:
        """P(event | stage h). ``shift`` moves the curve along the stage axis (+ = to higher stages);
        ``spread`` overrides the normal/lognormal dispersion. Both broadcast against ``h``."""
        h = np.asarray(h, float)
        s = self.spread if spread is None else spread
        if self.kind == "normal":
            return sc.ndtr((h - (self.median + shift)) / s)
        if self.kind == "lognormal":
            above = h - self.datum - shift
            with np.errstate(divide="ignore", invalid="ignore"):
                z = np.log(np.where(above > 0, above, 1.0) / self.median) / s
            return np.where(above > 0, sc.ndtr(z), 0.0)
        return np.interp(h - shift, self.stage, self.probability)

    def stage_points(self):
        """Stages worth placing on the grid (table breakpoints, the median)."""
        if self.kind == "table":
            return np.asarray(self.stage, float)
        if self.kind == "lognormal":
            return np.array([self.datum + self.median])
        return np.array([self.median])


@dataclass(frozen=True, eq=False)
class FailureMode:
    """A failure mode: the product of its conditional node curves.

    Attributes
    ----------
    name : str
    nodes : tuple of FragilityCurve

    Notes
    -----
    Knowledge uncertainty of a failure mode (a shift along stage, a factor on the spreads) is
    declared in the chain's registry of uncertain inputs (:mod:`riskcalc.response.uncertain`) and
    arrives here as the ``shift`` and ``spread_factor`` arguments of :meth:`prob`.
    """

    name: str
    nodes: tuple = field(default_factory=tuple)

    @property
    def has_spread(self) -> bool:
        """True when some node has a spread a factor can act on (a normal or lognormal node)."""
        return any(n.kind != "table" for n in self.nodes)

    def prob(self, h, shift=0.0, spread_factor=1.0) -> np.ndarray:
        """P(mode | stage h): the product of the node curves, shifted by ``shift`` [stage units] with the
        normal/lognormal spreads times ``spread_factor``; all broadcast against ``h``."""
        out = np.ones(np.broadcast_shapes(np.shape(h), np.shape(shift), np.shape(spread_factor)))
        for node in self.nodes:
            sp = None if node.kind == "table" else node.spread * np.asarray(spread_factor)
            out = out * node.prob(h, shift, sp)
        return out

    def stage_points(self):
        pts = [n.stage_points() for n in self.nodes]
        return np.concatenate(pts) if pts else np.array([])


def combine_independent(p_modes) -> np.ndarray:
    """System failure probability of independent modes, 1 − Π(1 − P_i), along axis 0.

    Computed as −expm1(Σ log1p(−P_i)) to keep precision when every P_i is small.
    """
    p = np.asarray(p_modes, float)
    with np.errstate(divide="ignore"):
        return -np.expm1(np.log1p(-np.clip(p, 0, 1)).sum(axis=0))


def read_fragility_table(path, *, stage_unit=None, name="fragility", what="fragility table") -> FragilityCurve:
    """Read a (stage, probability) table: columns ``stage[_unit]`` and ``probability``."""
    table = read_table(path, what=what)
    scol = table.stage_column(what=what, stage_unit=stage_unit)
    table.require((scol, "probability"), what=what)
    h = table.numbers(scol)
    p = table.numbers("probability", lo=0.0, hi=1.0, what="a probability in [0, 1]")
    for i in range(1, len(h)):
        if not h[i] > h[i - 1]:
            raise InputError(
                f"stage {h[i]:g} is not above the previous row's {h[i - 1]:g}; the {what} must increase",
                table.path,
                row=table.rows[i],
                column=scol,
            )
        if p[i] < p[i - 1]:
            raise InputError(
                f"probability {p[i]:g} is below the previous row's {p[i - 1]:g}; a fragility curve "
                "must not decrease with stage",
                table.path,
                row=table.rows[i],
                column="probability",
            )
    if len(h) < 2:
        raise InputError(f"the {what} has one row; expected at least two", table.path, row=table.rows[0])
    return FragilityCurve("table", name=name, stage=h, probability=p, source=str(path))
