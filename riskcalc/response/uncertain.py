"""Uncertain inputs of the response: one registry from which every sampler is derived.

Knowledge (epistemic) uncertainty of the response and consequences is a set of
:class:`UncertainParameter` entries, each a frozen ``scipy.stats``
distribution with a nominal value and the place in the chain where it acts
(:data:`TARGETS`). :class:`UncertainInputs` holds them in declaration order,
and everything that needs them is derived from it:

* the Monte Carlo draws (:meth:`UncertainInputs.sample`, ``rvs`` of each
  distribution in declaration order from one generator),
* the sensitivity factors (:meth:`UncertainInputs.from_unit`, ``ppf`` of each
  distribution at a probability in (0, 1)),
* the nominal response (:meth:`UncertainInputs.nominal`),
* the pairing signature of alternatives (:attr:`UncertainInputs.signature`).

Several parameters may act on one target: stage offsets and failure-mode
shifts add, spread and consequence factors multiply. Adding an uncertain
parameter to the chain is one :class:`UncertainParameter` in the registry;
adding a new *kind* of scenario input is one builder function below, its key
in the schema (:mod:`riskcalc.config.schema`) and one line in
:func:`riskcalc.config.build.build_model` that appends it.
"""

from __future__ import annotations

from typing import Any

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

__all__ = [
    "TARGETS",
    "UncertainParameter",
    "ResponseParameters",
    "UncertainInputs",
    "SOURCES",
    "rating_offset",
    "fragility_shift",
    "fragility_spread",
    "consequence_factor",
]

#: Where a parameter acts, and how several parameters on one target combine.
TARGETS = {
    "stage_offset": "add",  # stage units, added to the stage of every point
    "fm_shift": "add",  # stage units, moves one failure mode along the stage axis
    "fm_spread": "multiply",  # [-], multiplies the spread of one failure mode's normal/lognormal nodes
    "damage_factor": "multiply",  # [-], multiplies every damage value
    "life_loss_factor": "multiply",  # [-], multiplies every life-loss value
}
#: Sources of uncertainty a parameter belongs to (the rows of the mean-mode gap by source, after "hazard").
SOURCES = ("rating", "fragility", "consequences")
#: Neutral value of each way of combining.
_NEUTRAL = {"add": 0.0, "multiply": 1.0}
#: Probabilities are clipped to [eps, 1 - eps] before the quantile of an unbounded distribution.
U_EPS = 1e-15


@dataclass(frozen=True, eq=False)
class UncertainParameter:
    """One uncertain input of the response.

    Attributes
    ----------
    name : str
        Unique name, used for sensitivity factors and tables (e.g. ``rating_offset``,
        ``fragility_shift:overtopping``).
    source : {"rating", "fragility", "consequences"}
        The source of uncertainty (rows of the mean-mode gap by source).
    target : str
        One of :data:`TARGETS`.
    distribution : frozen scipy.stats distribution
    nominal : float
        The value used for the nominal response (mode and median curves).
    failure_mode : int or None
        The failure mode (index) of ``fm_shift`` and ``fm_spread`` targets.
    description : str
        The distribution in words, with units.
    units : str
    """

    name: str
    source: str
    target: str
    distribution: Any
    nominal: float
    failure_mode: int | None = None
    description: str = ""
    units: str = ""

    def __post_init__(self):
        if self.source not in SOURCES:
            raise ValueError(f"unknown source '{self.source}'; expected one of {', '.join(SOURCES)}")
        if self.target not in TARGETS:
            raise ValueError(f"unknown target '{self.target}'; expected one of {', '.join(TARGETS)}")
        if self.target.startswith("fm_") and self.failure_mode is None:
            raise ValueError(f"a parameter acting on '{self.target}' needs its failure mode")

    @property
    def bounded(self) -> bool:
        """True when probabilities 0 and 1 map to finite values."""
        lo, hi = self.distribution.support()
        return bool(np.isfinite(lo) and np.isfinite(hi))

    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """``n`` draws with ``rng`` (``rvs`` of the distribution)."""
        return np.asarray(self.distribution.rvs(size=n, random_state=rng), float).reshape(n)

    def quantile(self, u) -> np.ndarray:
        """The parameter's value at probabilities ``u`` (``ppf``), any shape; never infinite."""
        u = np.asarray(u, float)
        if not self.bounded:
            u = np.clip(u, U_EPS, 1 - U_EPS)
        return np.asarray(self.distribution.ppf(u), float)


@dataclass(frozen=True, eq=False)
class ResponseParameters:
    """The response parameters of D draws, resolved onto the chain's targets.

    Attributes
    ----------
    stage_offset : ndarray (D,)
        [stage units]
    fm_shift, fm_spread : ndarray (n_failure_modes, D)
        Shift [stage units] and spread factor [-] of each failure mode.
    damage_factor, life_loss_factor : ndarray (D,)
        [-]
    """

    stage_offset: np.ndarray
    fm_shift: np.ndarray
    fm_spread: np.ndarray
    damage_factor: np.ndarray
    life_loss_factor: np.ndarray

    @property
    def size(self) -> int:
        return int(self.stage_offset.size)

    def take(self, idx) -> ResponseParameters:
        """The draws ``idx`` (an index array or slice)."""
        return ResponseParameters(
            self.stage_offset[idx],
            self.fm_shift[:, idx],
            self.fm_spread[:, idx],
            self.damage_factor[idx],
            self.life_loss_factor[idx],
        )


@dataclass(frozen=True, eq=False)
class UncertainInputs:
    """The registry: every uncertain parameter of one response chain, in declaration order.

    Attributes
    ----------
    parameters : tuple of UncertainParameter
    n_failure_modes : int
    """

    parameters: tuple = ()
    n_failure_modes: int = 1
    _index: dict = field(default_factory=dict, repr=False)

    def __post_init__(self):
        names = [p.name for p in self.parameters]
        if len(set(names)) != len(names):
            raise ValueError("uncertain parameter names must be unique")
        for p in self.parameters:
            if p.failure_mode is not None and not 0 <= p.failure_mode < self.n_failure_modes:
                raise ValueError(f"parameter '{p.name}' acts on failure mode {p.failure_mode}, which does not exist")
        object.__setattr__(self, "_index", {n: i for i, n in enumerate(names)})

    @property
    def names(self) -> tuple:
        return tuple(p.name for p in self.parameters)

    @property
    def active(self) -> bool:
        """True when any parameter is uncertain (the chain then needs Monte Carlo draws)."""
        return bool(self.parameters)

    @property
    def signature(self) -> tuple:
        """The sequence of random draws :meth:`sample` makes: (name, distribution family) per parameter.

        Two registries with the same signature, given the same generator state and number of draws,
        draw the same underlying random numbers for each parameter (common random numbers), whatever the
        parameters' values.
        """
        return tuple((p.name, p.distribution.dist.name) for p in self.parameters)

    def get(self, name: str) -> UncertainParameter:
        return self.parameters[self._index[name]]

    def with_parameter(self, p: UncertainParameter) -> UncertainInputs:
        """A registry with ``p`` appended."""
        return UncertainInputs(self.parameters + (p,), self.n_failure_modes)

    def resolve(self, values: Mapping[str, np.ndarray], n: int) -> ResponseParameters:
        """Response parameters of ``n`` draws from parameter values (missing names take their nominal value)."""
        nm = self.n_failure_modes
        out = {
            "stage_offset": np.zeros(n),
            "fm_shift": np.zeros((nm, n)),
            "fm_spread": np.ones((nm, n)),
            "damage_factor": np.ones(n),
            "life_loss_factor": np.ones(n),
        }
        for p in self.parameters:
            v = np.broadcast_to(np.asarray(values.get(p.name, p.nominal), float), (n,))
            arr = out[p.target]
            row = arr[p.failure_mode] if p.failure_mode is not None else arr
            if TARGETS[p.target] == "add":
                row += v
            else:
                row *= v
        return ResponseParameters(**out)

    def sample(self, rng: np.random.Generator, n: int) -> ResponseParameters:
        """``n`` Monte Carlo draws: each parameter in declaration order from ``rng``."""
        return self.resolve({p.name: p.sample(rng, n) for p in self.parameters}, n)

    def nominal(self, n: int = 1) -> ResponseParameters:
        """The nominal response parameters, repeated ``n`` times."""
        return self.resolve({}, n)

    def from_unit(self, names, U) -> ResponseParameters:
        """Response parameters from probabilities ``U (n, len(names))`` of the named parameters (others nominal)."""
        U = np.asarray(U, float)
        n = U.shape[0]
        return self.resolve({nm: self.get(nm).quantile(U[:, j]) for j, nm in enumerate(names)}, n)


# --------------------------------------------------------------------------
# Frozen distributions, built when first used
# --------------------------------------------------------------------------
class LazyDistribution:
    """A frozen ``scipy.stats`` distribution, built on first use.

    Importing ``scipy.stats`` takes about 0.4 s, which ``riskcalc check`` and ``--help`` need not pay;
    every attribute (``rvs``, ``ppf``, ``support``, ``mean``, ``args``, ...) is the frozen distribution's.
    """

    __slots__ = ("_name", "_args", "_kwds", "_dist")

    def __init__(self, name: str, *args, **kwds):
        self._name, self._args, self._kwds, self._dist = name, args, kwds, None

    def frozen(self):
        """The frozen ``scipy.stats`` distribution itself."""
        if self._dist is None:
            from scipy import stats

            self._dist = getattr(stats, self._name)(*self._args, **self._kwds)
        return self._dist

    def __getattr__(self, attr):
        if attr.startswith("__"):
            raise AttributeError(attr)
        return getattr(self.frozen(), attr)

    def __reduce__(self):
        return (_rebuild_lazy, (self._name, self._args, self._kwds))

    def __repr__(self):
        args = ", ".join([*(repr(a) for a in self._args), *(f"{k}={v!r}" for k, v in self._kwds.items())])
        return f"{self._name}({args})"


def _rebuild_lazy(name, args, kwds):
    return LazyDistribution(name, *args, **kwds)


# --------------------------------------------------------------------------
# The kinds of uncertain input a scenario declares: one builder each
# --------------------------------------------------------------------------
def rating_offset(sd: float) -> UncertainParameter:
    """A normal stage offset of the rating curve, N(0, sd) [stage units] (knowledge uncertainty of the rating)."""
    return UncertainParameter(
        "rating_offset",
        "rating",
        "stage_offset",
        LazyDistribution("norm", 0.0, sd),
        0.0,
        description=f"stage offset of the rating, normal(0, {sd:g}) [stage units]",
        units="stage units",
    )


def fragility_shift(index: int, name: str, sd: float) -> UncertainParameter:
    """A normal shift N(0, sd) [stage units] of failure mode ``index`` along the stage axis."""
    return UncertainParameter(
        f"fragility_shift:{name}",
        "fragility",
        "fm_shift",
        LazyDistribution("norm", 0.0, sd),
        0.0,
        failure_mode=index,
        description=f"shift of '{name}' along stage, normal(0, {sd:g}) [stage units]",
        units="stage units",
    )


def fragility_spread(index: int, name: str, low: float, high: float) -> UncertainParameter:
    """A uniform factor on the spread of failure mode ``index``'s normal/lognormal nodes, nominal 1."""
    return UncertainParameter(
        f"fragility_spread:{name}",
        "fragility",
        "fm_spread",
        LazyDistribution("uniform", low, high - low),
        1.0,
        failure_mode=index,
        description=f"spread factor of '{name}', uniform({low:g}, {high:g}) [-]",
        units="-",
    )


def consequence_factor(
    kind: str, distribution: str, *, low=1.0, mode=1.0, high=1.0, median=1.0, beta=0.0
) -> UncertainParameter:
    """A random factor on every damage (``kind="damage"``) or life-loss (``"life_loss"``) value.

    ``triangular``: low <= mode <= high, nominal the mode; ``lognormal``: median·exp(β Z), nominal the median.
    """
    target = {"damage": "damage_factor", "life_loss": "life_loss_factor"}[kind]
    name = f"{kind}_multiplier"
    words = name.replace("_", " ")
    if distribution == "triangular":
        c = (mode - low) / (high - low)
        dist = LazyDistribution("triang", c, loc=low, scale=high - low)
        return UncertainParameter(
            name,
            "consequences",
            target,
            dist,
            float(mode),
            description=f"{words}, triangular({low:g}, {mode:g}, {high:g}) [-]",
            units="-",
        )
    if distribution == "lognormal":
        return UncertainParameter(
            name,
            "consequences",
            target,
            LazyDistribution("lognorm", beta, scale=median),
            float(median),
            description=f"{words}, lognormal(median {median:g}, beta {beta:g}) [-]",
            units="-",
        )
    raise ValueError(f"'{distribution}' is not triangular or lognormal")
