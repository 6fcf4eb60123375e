"""Variance-based sensitivity and screening: the generic layer over SALib.

A risk model is handed to this module as a plain callable on a sample matrix:
``model(X) -> y`` with ``X (n_samples, n_factors)`` and ``y (n_samples,)``, or
``model(X) -> {name: y}`` for several outputs at once (AFP, EAD, ALL, ...).
The factors are described by :class:`Factor`; :func:`problem` turns them into
SALib's problem description. :func:`sobol_indices` gives first-order and total
Sobol' indices with bootstrap confidence intervals, :func:`sobol_until_converged`
doubles the base sample until the intervals are narrow enough, and
:func:`morris_screening` gives Morris elementary-effect statistics for many
factors at a fraction of the cost. :func:`realization_factor_map` turns a
U(0, 1) factor into the index of a hazard realization through the inverse CDF
of the realization weights.

Model-callable contract
-----------------------
- ``X`` holds one row per model run and one column per factor, in the order of
  ``factors``, in the factor's own units (already transformed from the unit
  hypercube by the factor's distribution). ``X`` is passed read-only.
- Each row's output must depend on that row only (no state carried between
  rows, no dependence on the row order): the estimators pair rows of the
  Saltelli design, and :func:`sobol_until_converged` evaluates only the new rows
  when it doubles the sample.
- The model is called once on the whole sample matrix per analysis (once per
  doubling in :func:`sobol_until_converged`). It returns a float array of shape
  ``(n_samples,)``, or a mapping from output name to such an array.
- Every output value must be finite. A non-finite value raises
  :class:`ModelOutputError` naming the output and the count, because SALib does
  not check and returns meaningless indices (often zeros) for NaN input.

Conventions
-----------
Seeds
    ``seed`` is required, keyword-only and must be a positive ``int``. It seeds
    both the scrambled Sobol' sequence and the bootstrap of the confidence
    intervals, so a seed reproduces the indices and their intervals exactly.
    Seed 0 is refused: SALib 1.6 ``analyze.sobol`` tests ``if seed:`` and, for
    0, draws its bootstrap from NumPy's global random state, so results with
    seed 0 would not be reproducible. Negative seeds are refused by NumPy.
Constant outputs
    An output with zero variance (for example an AFP that is exactly 0 in every
    run) has no variance to apportion; its Sobol' indices are undefined. They
    are returned as NaN, with the reason in the result's ``note``; nothing is
    raised, so the other outputs of the same run are still analysed. Morris
    statistics of a constant output are exactly 0, which is their correct value.
Confidence intervals
    ``*_conf`` are half-widths of the ``conf_level`` bootstrap interval, as
    SALib reports them: the interval is ``S1 +/- S1_conf``.
Groups
    Factors that share a ``group`` are analysed together; the indices are then
    per group, and the result's ``factors`` are the group names (ungrouped
    factors form a group of their own, named after the factor).

References
----------
.. [1] Saltelli, A., Annoni, P., Azzini, I., Campolongo, F., Ratto, M. and
   Tarantola, S. (2010). Variance based sensitivity analysis of model output.
   Design and estimator for the total sensitivity index. Computer Physics
   Communications 181(2), 259-270. doi:10.1016/j.cpc.2009.09.018
.. [2] Sobol', I.M. (2001). Global sensitivity indices for nonlinear
   mathematical models and their Monte Carlo estimates. Mathematics and
   Computers in Simulation 55(1-3), 271-280. doi:10.1016/S0378-4754(00)00270-6
.. [3] Saltelli, A. (2002). Making best use of model evaluations to compute
   sensitivity indices. Computer Physics Communications 145(2), 280-297.
   doi:10.1016/S0010-4655(02)00280-1
.. [4] Morris, M.D. (1991). Factorial sampling plans for preliminary
   computational experiments. Technometrics 33(2), 161-174.
   doi:10.1080/00401706.1991.10484804
.. [5] Campolongo, F., Cariboni, J. and Saltelli, A. (2007). An effective
   screening design for sensitivity analysis of large models. Environmental
   Modelling & Software 22(10), 1509-1518. doi:10.1016/j.envsoft.2006.10.004
.. [7] Janon, A., Klein, T., Lagnoux, A., Nodet, M. and Prieur, C. (2014).
   Asymptotic normality and efficiency of two Sobol index estimators. ESAIM:
   Probability and Statistics 18, 342-364. doi:10.1051/ps/2013040
.. [6] Herman, J. and Usher, W. (2017). SALib: An open-source Python library
   for sensitivity analysis. Journal of Open Source Software 2(9), 97.
   doi:10.21105/joss.00097
"""

from __future__ import annotations

from typing import Any

import math
import operator
import warnings
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    import pandas as pd

# pandas and SALib is imported inside the functions that use it, so that reading and checking a scenario (which
# builds Factor records) does not load it.

__all__ = [
    "KINDS",
    "DEFAULT_OUTPUT",
    "WIDE_INTERVAL",
    "Factor",
    "ModelOutputError",
    "SobolResult",
    "ConvergenceResult",
    "MorrisResult",
    "problem",
    "sobol_indices",
    "sobol_frame",
    "max_conf_width",
    "sobol_until_converged",
    "janon_indices",
    "ESTIMATORS",
    "morris_screening",
    "realization_factor_map",
]

#: Factor distributions: kind -> (SALib ``dists`` code, required fields).
KINDS = {
    "uniform": ("unif", ("low", "high")),
    "loguniform": ("logunif", ("low", "high")),
    "triangular": ("triang", ("low", "mode", "high")),
    "normal": ("norm", ("mean", "sd")),
    "lognormal": ("lognorm", ("mean", "sd")),
}

#: Kinds with finite support; Morris needs them (its grid includes levels 0 and 1).
BOUNDED_KINDS = ("uniform", "loguniform", "triangular")

#: Name given to the single output of a model that returns an array.
DEFAULT_OUTPUT = "y"

#: A confidence half-width above this is reported as a warning.
WIDE_INTERVAL = 0.1

_FIELDS = ("low", "high", "mode", "mean", "sd")


class ModelOutputError(ValueError):
    """The model returned something that cannot be analysed (shape, non-finite values)."""


# --------------------------------------------------------------------------
# factors and the problem description
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class Factor:
    """One uncertain input of the risk model and its distribution.

    Parameters
    ----------
    name : str
        Unique factor name; it labels the column of ``X`` and the result rows.
    kind : {"uniform", "loguniform", "triangular", "normal", "lognormal"}
        Distribution. Required fields per kind (see :data:`KINDS`):

        - ``uniform``: ``low < high``;
        - ``loguniform``: ``0 < low < high`` (uniform in log X);
        - ``triangular``: ``low <= mode < high`` (SALib 1.6 refuses a peak at
          the upper end, ``mode == high``);
        - ``normal``: ``mean``, ``sd > 0``;
        - ``lognormal``: ``mean`` and ``sd > 0`` of the natural log of X.
    low, high : float, optional
        Support of the bounded kinds, in the factor's units.
    mode : float, optional
        Peak of the triangular distribution.
    mean, sd : float, optional
        Location and scale of the normal kinds.
    group : str, optional
        Factors sharing a group are analysed as one (their indices are joint).
    units : str, optional
        Units of the factor, for display only.

    Examples
    --------
    >>> Factor("rating_offset", "uniform", -0.3, 0.3, units="m")  # doctest: +ELLIPSIS
    Factor(name='rating_offset', kind='uniform', low=-0.3, high=0.3, ...)
    >>> Factor("fragility_median", "normal", mean=12.0, sd=0.5).dist
    'norm'
    """

    name: str
    kind: str = "uniform"
    low: float | None = None
    high: float | None = None
    mode: float | None = None
    mean: float | None = None
    sd: float | None = None
    group: str | None = None
    units: str = ""

    def __post_init__(self):
        if not isinstance(self.name, str) or not self.name.strip():
            raise ValueError(f"factor name must be a non-empty string, got {self.name!r}")
        if self.kind not in KINDS:
            raise ValueError(f"factor '{self.name}': unknown kind {self.kind!r}; expected one of {', '.join(KINDS)}")
        if self.group is not None and (not isinstance(self.group, str) or not self.group.strip()):
            raise ValueError(f"factor '{self.name}': group must be a non-empty string or None")
        required = KINDS[self.kind][1]
        for f in _FIELDS:
            v = getattr(self, f)
            if f in required:
                if v is None:
                    raise ValueError(
                        f"factor '{self.name}': kind '{self.kind}' needs {', '.join(required)}; '{f}' is missing"
                    )
                v = float(v)
                if not math.isfinite(v):
                    raise ValueError(f"factor '{self.name}': '{f}' must be finite, got {v}")
                object.__setattr__(self, f, v)
            elif v is not None:
                raise ValueError(f"factor '{self.name}': kind '{self.kind}' takes {', '.join(required)}, not '{f}'")
        k = self.kind
        if k in ("uniform", "loguniform", "triangular") and not self.low < self.high:
            raise ValueError(f"factor '{self.name}': need low < high, got low={self.low}, high={self.high}")
        if k == "loguniform" and self.low <= 0:
            raise ValueError(f"factor '{self.name}': loguniform needs low > 0, got {self.low}")
        if k == "triangular" and not self.low <= self.mode < self.high:
            raise ValueError(
                f"factor '{self.name}': triangular needs low <= mode < high, got "
                f"low={self.low}, mode={self.mode}, high={self.high}"
            )
        if k in ("normal", "lognormal") and not self.sd > 0:
            raise ValueError(f"factor '{self.name}': sd must be > 0, got {self.sd}")

    @property
    def dist(self) -> str:
        """SALib ``dists`` code of the distribution."""
        return KINDS[self.kind][0]

    @property
    def bounds(self) -> list[float]:
        """SALib ``bounds`` entry: ``[low, high]``, ``[low, high, peak fraction]`` or ``[mean, sd]``."""
        if self.kind in ("uniform", "loguniform"):
            return [self.low, self.high]
        if self.kind == "triangular":
            # SALib 1.6: [start, end, c] with the peak as a fraction c of the width
            return [self.low, self.high, (self.mode - self.low) / (self.high - self.low)]
        return [self.mean, self.sd]

    @property
    def bounded(self) -> bool:
        """True when the support is finite."""
        return self.kind in BOUNDED_KINDS


def _check_factors(factors) -> tuple[Factor, ...]:
    factors = tuple(factors)
    if not factors:
        raise ValueError("at least one factor is needed")
    for f in factors:
        if not isinstance(f, Factor):
            raise TypeError(f"factors must be Factor instances, got {type(f).__name__}")
    names = [f.name for f in factors]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        raise ValueError(f"factor names must be unique; repeated: {', '.join(dup)}")
    declared = {f.group for f in factors if f.group is not None}
    clash = sorted(f.name for f in factors if f.group is None and f.name in declared)
    if clash:
        raise ValueError(
            f"ungrouped factor name(s) {', '.join(clash)} equal a group name; rename the factor or the group"
        )
    return factors


def problem(factors: Sequence[Factor]) -> dict:
    """SALib problem description for ``factors``.

    Parameters
    ----------
    factors : sequence of Factor

    Returns
    -------
    dict
        ``num_vars``, ``names``, ``bounds``, ``dists`` and, when any factor has a
        group, ``groups`` (an ungrouped factor is its own group, named after it).
    """
    factors = _check_factors(factors)
    out = {
        "num_vars": len(factors),
        "names": [f.name for f in factors],
        "bounds": [f.bounds for f in factors],
        "dists": [f.dist for f in factors],
    }
    if any(f.group is not None for f in factors):
        out["groups"] = [f.group if f.group is not None else f.name for f in factors]
    return out


def _labels(prob: dict) -> tuple[str, ...]:
    """Names the indices are reported for: the groups in first-seen order, or the factors."""
    keys = prob.get("groups") or prob["names"]
    return tuple(dict.fromkeys(keys))


# --------------------------------------------------------------------------
# argument checks and model evaluation
# --------------------------------------------------------------------------
def _check_seed(seed) -> int:
    if seed is None or isinstance(seed, bool):
        raise ValueError(f"seed must be a positive int, got {seed!r}")
    try:
        s = operator.index(seed)
    except TypeError:
        raise ValueError(f"seed must be a positive int, got {seed!r}") from None
    if s == 0:
        raise ValueError(
            "seed 0 is refused: SALib's Sobol analysis treats seed 0 as 'no seed' and its "
            "bootstrap intervals would not be reproducible; use a positive int"
        )
    if s < 0:
        raise ValueError(f"seed must be a positive int, got {s}")
    return int(s)


def _check_power_of_two(n, what="n") -> int:
    if isinstance(n, bool):
        raise ValueError(f"{what} must be a power of two (e.g. 1024), got {n!r}")
    try:
        n = operator.index(n)
    except TypeError:
        raise ValueError(f"{what} must be an int power of two (e.g. 1024), got {n!r}") from None
    if n < 2 or n & (n - 1):
        lo = 1 << max(1, n.bit_length() - 1) if n >= 2 else 2
        hint = f"; nearest are {lo} and {lo * 2}" if n > 2 else ""
        raise ValueError(
            f"{what} must be a power of two >= 2 for the Sobol' sequence to keep its balance, got {n}{hint}"
        )
    return int(n)


def _check_conf(conf_level, n_resamples):
    conf_level = float(conf_level)
    if not 0.0 < conf_level < 1.0:
        raise ValueError(f"conf_level must be in (0, 1), got {conf_level}")
    n_resamples = operator.index(n_resamples)
    if n_resamples < 2:
        raise ValueError(f"n_resamples must be >= 2, got {n_resamples}")
    return conf_level, int(n_resamples)


def _select(outputs):
    if outputs is None:
        return None
    if isinstance(outputs, str):
        return (outputs,)
    sel = tuple(outputs)
    if not sel or not all(isinstance(s, str) for s in sel):
        raise ValueError(f"outputs must be a name or a non-empty sequence of names, got {outputs!r}")
    return sel


def _evaluate(model: Callable, X: np.ndarray, outputs) -> tuple[dict[str, np.ndarray], bool]:
    """Call ``model`` once on ``X``; return ``({name: y}, model_returned_mapping)``, validated."""
    X = np.array(X, dtype=float)
    X.flags.writeable = False
    raw = model(X)
    n = X.shape[0]
    sel = _select(outputs)
    if isinstance(raw, Mapping):
        is_map = True
        if not raw:
            raise ModelOutputError("the model returned an empty mapping; expected {name: array of shape (n_samples,)}")
        if sel is None:
            sel = tuple(raw)
        missing = [s for s in sel if s not in raw]
        if missing:
            raise ModelOutputError(
                f"output(s) {', '.join(map(repr, missing))} not returned by the model; it returned "
                f"{', '.join(map(repr, raw))}"
            )
        items = [(str(s), raw[s]) for s in sel]
    else:
        is_map = False
        if sel is not None and len(sel) != 1:
            raise ModelOutputError(
                f"the model returned one array but {len(sel)} outputs were asked for; "
                "return a mapping {name: array} for several outputs"
            )
        items = [(sel[0] if sel else DEFAULT_OUTPUT, raw)]
    Y = {}
    for name, y in items:
        y = np.asarray(y, dtype=float)
        if y.shape != (n,):
            raise ModelOutputError(f"output '{name}': expected shape ({n},), one value per row of X, got {y.shape}")
        bad = int(np.count_nonzero(~np.isfinite(y)))
        if bad:
            raise ModelOutputError(
                f"output '{name}': {bad} of {n} model values are not finite (NaN or inf); "
                "sensitivity indices cannot be computed; fix the model or the factor ranges"
            )
        Y[name] = y
    return Y, is_map


def _is_constant(y: np.ndarray) -> bool:
    """Zero variance up to rounding: range within a few ulps of the largest magnitude."""
    scale = float(np.max(np.abs(y)))
    return float(np.ptp(y)) <= 16.0 * np.finfo(float).eps * scale


def _frozen(a) -> np.ndarray:
    a = np.array(a, dtype=float)
    a.flags.writeable = False
    return a


#: Estimators of the first-order and total indices: ``"janon"`` (the default of a run) or ``"saltelli"``
#: (SALib's ``analyze.sobol``: Saltelli et al. 2010 first order, Jansen total).
ESTIMATORS = ("janon", "saltelli")


def _janon(u: np.ndarray, v: np.ndarray) -> np.ndarray:
    """Janon et al.'s (2014) [7]_ estimator of Cov(U, V) / Var for pairs sharing some factors, along axis 0.

    With m = mean((u + v) / 2): ``(mean(u v) - m^2) / (mean((u^2 + v^2) / 2) - m^2)``.
    """
    m = 0.5 * (u + v).mean(axis=0)
    num = (u * v).mean(axis=0) - m * m
    den = (0.5 * (u * u + v * v)).mean(axis=0) - m * m
    with np.errstate(invalid="ignore", divide="ignore"):
        return num / den


def janon_indices(y: np.ndarray, d: int, n: int, *, second_order=False, n_resamples=100, conf_level=0.95, seed=1):
    """First-order and total Sobol' indices from a Saltelli design by Janon et al.'s estimator, with bootstrap.

    Parameters
    ----------
    y : ndarray (n (d + 2),) or (n (2 d + 2),)
        Model outputs in SALib's layout: for each base point, the rows A, AB_1..AB_d, [BA_1..BA_d,] B.
    d : int
        Number of factors (or groups).
    n : int
        Base sample size.
    second_order : bool
        The design holds the BA rows (they are not used here).
    n_resamples, conf_level, seed
        Bootstrap over the n base points (seeded); half-widths are z_{(1 + level)/2} times the standard
        deviation of the resampled estimates, as SALib reports them.

    Returns
    -------
    S1, S1_conf, ST, ST_conf : ndarray (d,)

    Notes
    -----
    First order: pairs (f(B), f(AB_i)), which share factor i only: S1_i = Cov / Var by Janon's estimator
    [7]_ (eq. 6), asymptotically efficient among estimators of this design. Total: pairs (f(A), f(AB_i)),
    which share every factor but i, give the closed index of the others, S_~i, and ST_i = 1 - S_~i
    (Homma and Saltelli 1996). For a factor that dominates a heavy-tailed output the two estimators'
    errors do not grow with the output's fourth moment as the Saltelli (2010) first-order and Jansen
    total estimators' do, which is what makes the intervals of the hazard realization narrow.
    """
    from scipy.special import ndtri

    step = 2 * d + 2 if second_order else d + 2
    Y = np.asarray(y, float).reshape(n, step)
    scale = np.std(np.r_[Y[:, 0], Y[:, -1]])
    Y = (Y - 0.5 * (Y[:, 0].mean() + Y[:, -1].mean())) / (scale if scale > 0 else 1.0)
    A, B, AB = Y[:, 0], Y[:, -1], Y[:, 1 : d + 1]

    # a factor whose every AB_i row equals its A row has no effect at all: both indices are exactly 0
    # (Janon's first-order estimate would otherwise show the noise of two independent samples)
    inert = np.all(AB == A[:, None], axis=0)

    def est(rows):
        a, b, ab = A[rows, None], B[rows, None], AB[rows]
        s1, st = _janon(b, ab), 1.0 - _janon(a, ab)
        return np.where(inert, 0.0, s1), np.where(inert, 0.0, st)

    s1, st = est(slice(None))
    rng = np.random.default_rng(seed)
    boot1, boott = np.empty((n_resamples, d)), np.empty((n_resamples, d))
    for k in range(n_resamples):
        boot1[k], boott[k] = est(rng.integers(0, n, n))
    z = float(ndtri(0.5 + conf_level / 2))
    return s1, z * boot1.std(axis=0, ddof=1), st, z * boott.std(axis=0, ddof=1)


# --------------------------------------------------------------------------
# Sobol' indices
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class SobolResult:
    """Sobol' indices of one output.

    Attributes
    ----------
    output : str
        Output name.
    factors : tuple of str
        Factor (or group) names, in the order of the index arrays.
    S1, S1_conf, ST, ST_conf : ndarray (D,)
        First-order and total indices [-] and the half-widths of their
        ``conf_level`` bootstrap intervals. Read-only. NaN for a constant output.
    S2, S2_conf : ndarray (D, D) or None
        Second-order indices (upper triangle; NaN elsewhere) when asked for.
    n : int
        Base sample size N (a power of two).
    n_evaluations : int
        Model runs: ``N (D + 2)``, or ``N (2 D + 2)`` with second order.
    seed, n_resamples, conf_level
        As passed.
    note : str
        Empty, or why the indices are NaN (constant output).
    """

    output: str
    factors: tuple
    S1: np.ndarray
    S1_conf: np.ndarray
    ST: np.ndarray
    ST_conf: np.ndarray
    n: int
    n_evaluations: int
    seed: int
    n_resamples: int
    conf_level: float
    S2: np.ndarray | None = None
    S2_conf: np.ndarray | None = None
    note: str = ""

    def to_frame(self) -> pd.DataFrame:
        """Tidy table, one row per factor: output, factor, S1, S1_conf, ST, ST_conf."""
        import pandas as pd

        return pd.DataFrame(
            {
                "output": [self.output] * len(self.factors),
                "factor": list(self.factors),
                "S1": self.S1,
                "S1_conf": self.S1_conf,
                "ST": self.ST,
                "ST_conf": self.ST_conf,
            }
        )

    def s2_frame(self) -> pd.DataFrame:
        """Tidy table of second-order indices, one row per pair i < j (empty without S2)."""
        import pandas as pd

        cols = ["output", "factor_i", "factor_j", "S2", "S2_conf"]
        if self.S2 is None:
            return pd.DataFrame(columns=cols)
        rows = [
            (self.output, self.factors[i], self.factors[j], float(self.S2[i, j]), float(self.S2_conf[i, j]))
            for i in range(len(self.factors))
            for j in range(i + 1, len(self.factors))
        ]
        return pd.DataFrame(rows, columns=cols)

    def as_dict(self) -> dict[str, dict[str, float]]:
        """``{factor: {"S1", "S1_conf", "ST", "ST_conf"}}`` with plain floats (NaN stays NaN)."""
        return {
            f: {
                "S1": float(self.S1[i]),
                "S1_conf": float(self.S1_conf[i]),
                "ST": float(self.ST[i]),
                "ST_conf": float(self.ST_conf[i]),
            }
            for i, f in enumerate(self.factors)
        }


def _analyze_sobol(
    prob, name, y, *, n, seed, second_order, n_resamples, conf_level, estimator="saltelli"
) -> SobolResult:
    labels = _labels(prob)
    d = len(labels)
    common = dict(
        output=name,
        factors=labels,
        n=n,
        n_evaluations=int(y.size),
        seed=seed,
        n_resamples=n_resamples,
        conf_level=conf_level,
    )
    if _is_constant(y):
        nan = _frozen(np.full(d, np.nan))
        s2 = _frozen(np.full((d, d), np.nan)) if second_order else None
        return SobolResult(
            S1=nan,
            S1_conf=nan,
            ST=nan,
            ST_conf=nan,
            S2=s2,
            S2_conf=s2,
            note=f"constant output (every run gives {y[0]:.6g}): no variance to apportion, indices undefined",
            **common,
        )
    if estimator not in ESTIMATORS:
        raise ValueError(f"estimator must be one of {', '.join(ESTIMATORS)}, got {estimator!r}")
    if estimator == "janon" and not second_order:
        s1, s1c, st, stc = janon_indices(
            y, d, n, second_order=False, n_resamples=n_resamples, conf_level=conf_level, seed=seed
        )
        return SobolResult(S1=_frozen(s1), S1_conf=_frozen(s1c), ST=_frozen(st), ST_conf=_frozen(stc), **common)
    from SALib.analyze import sobol as _sobol_analyze

    with warnings.catch_warnings():
        # SALib warns once per bootstrap resample that happens to be constant
        # (outputs that are zero in most runs); the point estimates are unaffected.
        warnings.filterwarnings("ignore", message="Constant values encountered")
        si = _sobol_analyze.analyze(
            prob,
            y,
            calc_second_order=second_order,
            num_resamples=n_resamples,
            conf_level=conf_level,
            print_to_console=False,
            seed=seed,
        )
    if estimator == "janon":  # second order from SALib (Saltelli 2002), first and total by Janon's estimator
        s1, s1c, st, stc = janon_indices(
            y, d, n, second_order=True, n_resamples=n_resamples, conf_level=conf_level, seed=seed
        )
        si = {**si, "S1": s1, "S1_conf": s1c, "ST": st, "ST_conf": stc}
    return SobolResult(
        S1=_frozen(si["S1"]),
        S1_conf=_frozen(si["S1_conf"]),
        ST=_frozen(si["ST"]),
        ST_conf=_frozen(si["ST_conf"]),
        S2=_frozen(si["S2"]) if second_order else None,
        S2_conf=_frozen(si["S2_conf"]) if second_order else None,
        **common,
    )


def sobol_indices(
    model: Callable,
    factors: Sequence[Factor],
    n: int = 1024,
    *,
    seed: int,
    second_order: bool = False,
    n_resamples: int = 100,
    conf_level: float = 0.95,
    outputs: str | Sequence[str] | None = None,
    estimator: str = "saltelli",
) -> SobolResult | dict[str, SobolResult]:
    """First-order and total Sobol' indices, with bootstrap confidence intervals.

    Parameters
    ----------
    model : callable
        ``model(X) -> y (n_samples,)`` or ``-> {name: y (n_samples,)}``, with
        ``X (n_samples, n_factors)`` (see the module's model-callable contract).
    factors : sequence of Factor
    n : int
        Base sample size N, a power of two >= 2. The model is run
        ``N (D + 2)`` times (``N (2 D + 2)`` with ``second_order``), D the
        number of factors, or of groups when groups are given.
    seed : int
        Positive int; seeds the scrambled Sobol' sequence and the bootstrap.
    second_order : bool
        Also estimate the second-order indices S2.
    n_resamples : int
        Bootstrap resamples for the confidence intervals.
    conf_level : float
        Confidence level of the intervals; ``*_conf`` are half-widths.
    outputs : str or sequence of str, optional
        For a model returning a mapping, the outputs to analyse (default all).
        For a model returning an array, one name to label it (default ``"y"``).
    estimator : {"saltelli", "janon"}
        Estimators of S1 and ST: SALib's (below), or Janon et al. (2014) [7]_
        (:func:`janon_indices`) on the same design.

    Returns
    -------
    SobolResult or dict of str to SobolResult
        A :class:`SobolResult` if the model returns an array; a dict keyed by
        output name, in the order returned, if it returns a mapping.

    Raises
    ------
    ValueError
        ``n`` not a power of two, ``seed`` not a positive int, bad factors.
    ModelOutputError
        Output of the wrong shape or with non-finite values (named, counted).

    Notes
    -----
    Sampling: Saltelli's cross-sampled design on a scrambled Sobol' sequence
    (``SALib.sample.sobol.sample``) [3]_. Estimators (SALib
    ``analyze.sobol``): first order from Saltelli et al. (2010) [1]_ Table 2
    (b), :math:`V_i \\approx \\frac1N\\sum f(B)_j (f(A_B^i)_j - f(A)_j)`; total
    from Jansen, ibid. Table 2 (f),
    :math:`V_{T i} \\approx \\frac1{2N}\\sum (f(A)_j - f(A_B^i)_j)^2`; both
    divided by the variance of the outputs of A and B. Second order from
    Saltelli (2002) [3]_. Estimates can fall slightly outside [0, 1] at small N;
    they are reported as estimated, not clipped.
    """
    factors = _check_factors(factors)
    n = _check_power_of_two(n)
    seed = _check_seed(seed)
    conf_level, n_resamples = _check_conf(conf_level, n_resamples)
    from SALib.sample import sobol as _sobol_sample

    prob = problem(factors)
    X = _sobol_sample.sample(prob, n, calc_second_order=bool(second_order), seed=seed)
    Y, is_map = _evaluate(model, X, outputs)
    res = {
        name: _analyze_sobol(
            prob,
            name,
            y,
            n=n,
            seed=seed,
            second_order=bool(second_order),
            n_resamples=n_resamples,
            conf_level=conf_level,
            estimator=estimator,
        )
        for name, y in Y.items()
    }
    return res if is_map else next(iter(res.values()))


def _as_results(result) -> list[SobolResult]:
    if isinstance(result, SobolResult):
        return [result]
    if isinstance(result, Mapping):
        return list(result.values())
    raise TypeError(f"expected a SobolResult or a mapping of them, got {type(result).__name__}")


def sobol_frame(result: SobolResult | Mapping[str, SobolResult]) -> pd.DataFrame:
    """One tidy table for one result or a mapping of results (rows stacked by output)."""
    import pandas as pd

    frames = [r.to_frame() for r in _as_results(result)]
    return pd.concat(frames, ignore_index=True)


def max_conf_width(result: SobolResult | Mapping[str, SobolResult]) -> float:
    """Largest confidence half-width over S1_conf and ST_conf (and every output of a mapping).

    NaN entries (constant outputs) are ignored; NaN is returned only when
    every entry is NaN.
    """
    vals = np.concatenate([np.r_[r.S1_conf, r.ST_conf] for r in _as_results(result)])
    if np.all(np.isnan(vals)):
        return float("nan")
    return float(np.nanmax(vals))


def _wide_intervals(results: Mapping[str, SobolResult], limit: float) -> list[str]:
    msgs = []
    for r in results.values():
        for key in ("S1", "ST"):
            conf = getattr(r, key + "_conf")
            for i, f in enumerate(r.factors):
                if conf[i] > limit:
                    msgs.append(
                        f"output '{r.output}', factor '{f}': {key} = {getattr(r, key)[i]:.3f} "
                        f"+/- {conf[i]:.3f} at N = {r.n} (half-width above {limit})"
                    )
    return msgs


@dataclass(frozen=True)
class ConvergenceResult:
    """Outcome of :func:`sobol_until_converged`.

    Attributes
    ----------
    result : SobolResult or dict of str to SobolResult
        Indices at the last N tried, shaped as :func:`sobol_indices` returns.
    n : int
        Last base sample size tried.
    converged : bool
        Every S1_conf and ST_conf of every non-constant output is below the target.
    target_width : float
        The target half-width.
    history : tuple of (int, dict)
        ``(N, {output: max half-width})`` for every N tried.
    warnings : tuple of str
        One line per interval whose half-width exceeds :data:`WIDE_INTERVAL`
        (or ``warn_width``) at the last N, plus a line when not converged.
    """

    result: Any
    n: int
    converged: bool
    target_width: float
    history: tuple
    warnings: tuple = field(default=())


def sobol_until_converged(
    model: Callable,
    factors: Sequence[Factor],
    n_start: int = 256,
    target_width: float = 0.05,
    n_max: int = 16384,
    *,
    seed: int,
    second_order: bool = False,
    n_resamples: int = 100,
    conf_level: float = 0.95,
    outputs: str | Sequence[str] | None = None,
    warn_width: float = WIDE_INTERVAL,
    estimator: str = "saltelli",
    progress: Callable | None = None,
) -> ConvergenceResult:
    """Sobol' indices, doubling N until every interval half-width is below a target.

    Parameters
    ----------
    model, factors, seed, second_order, n_resamples, conf_level, outputs
        As in :func:`sobol_indices`.
    n_start, n_max : int
        First and largest base sample size, powers of two, ``n_start <= n_max``.
    target_width : float
        Target for every S1_conf and ST_conf half-width [-]. Constant outputs
        (NaN indices) do not hold the loop back.
    warn_width : float
        Half-widths above this at the final N are listed in ``warnings``.
    estimator : {"saltelli", "janon"}
        As in :func:`sobol_indices`.
    progress : callable, optional
        ``progress(model runs done, model runs at n_max)`` after each sample size.

    Returns
    -------
    ConvergenceResult

    Notes
    -----
    The scrambled Sobol' sequence of a given seed is extended, not redrawn,
    when N doubles, and the design stores each base point's ``D + 2`` rows
    together; so the first rows of the design at 2N are the whole design at N.
    Only the new rows are evaluated at each doubling (the model is called once
    per doubling), and the result at any N is identical to
    ``sobol_indices(model, factors, N, seed=seed)``.
    """
    factors = _check_factors(factors)
    n_start = _check_power_of_two(n_start, "n_start")
    n_max = _check_power_of_two(n_max, "n_max")
    if n_max < n_start:
        raise ValueError(f"n_max ({n_max}) must be >= n_start ({n_start})")
    target_width = float(target_width)
    if not target_width > 0:
        raise ValueError(f"target_width must be > 0, got {target_width}")
    seed = _check_seed(seed)
    conf_level, n_resamples = _check_conf(conf_level, n_resamples)
    from SALib.sample import sobol as _sobol_sample

    prob = problem(factors)
    so = bool(second_order)

    Y: dict[str, np.ndarray] = {}
    done_rows = 0
    history = []
    n = n_start
    while True:
        X = _sobol_sample.sample(prob, n, calc_second_order=so, seed=seed)
        new, is_map = _evaluate(model, X[done_rows:], outputs)
        Y = {k: np.concatenate([Y[k], v]) if k in Y else v for k, v in new.items()}
        done_rows = X.shape[0]
        res = {
            k: _analyze_sobol(
                prob,
                k,
                y,
                n=n,
                seed=seed,
                second_order=so,
                n_resamples=n_resamples,
                conf_level=conf_level,
                estimator=estimator,
            )
            for k, y in Y.items()
        }
        widths = {k: max_conf_width(r) for k, r in res.items()}
        history.append((n, widths))
        if progress is not None:
            progress(done_rows, done_rows // n * n_max)
        converged = all(math.isnan(w) or w < target_width for w in widths.values())
        if converged or n * 2 > n_max:
            break
        n *= 2
    msgs = _wide_intervals(res, float(warn_width))
    if not converged:
        worst = max((w for w in widths.values() if not math.isnan(w)), default=float("nan"))
        msgs.append(
            f"not converged: largest half-width {worst:.3f} at N = {n} (n_max) is above the target {target_width}"
        )
    return ConvergenceResult(
        result=res if is_map else next(iter(res.values())),
        n=n,
        converged=converged,
        target_width=target_width,
        history=tuple(history),
        warnings=tuple(msgs),
    )


# --------------------------------------------------------------------------
# Morris screening
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class MorrisResult:
    """Morris elementary-effect statistics of one output.

    Attributes
    ----------
    output : str
    factors : tuple of str
        Factor (or group) names.
    mu, mu_star, sigma : ndarray (D,)
        Mean, mean absolute value and standard deviation of the elementary
        effects, in output units per full-range step (see Notes of
        :func:`morris_screening`). ``sigma`` is NaN for groups of several factors.
    mu_star_conf : ndarray (D,)
        Half-width of the bootstrap interval of ``mu_star``.
    trajectories, levels, seed, n_evaluations : int
    """

    output: str
    factors: tuple
    mu: np.ndarray
    mu_star: np.ndarray
    mu_star_conf: np.ndarray
    sigma: np.ndarray
    trajectories: int
    levels: int
    seed: int
    n_evaluations: int

    def to_frame(self) -> pd.DataFrame:
        """Tidy table: output, factor, mu, mu_star, mu_star_conf, sigma."""
        import pandas as pd

        return pd.DataFrame(
            {
                "output": [self.output] * len(self.factors),
                "factor": list(self.factors),
                "mu": self.mu,
                "mu_star": self.mu_star,
                "mu_star_conf": self.mu_star_conf,
                "sigma": self.sigma,
            }
        )

    def as_dict(self) -> dict[str, dict[str, float]]:
        """``{factor: {"mu", "mu_star", "mu_star_conf", "sigma"}}`` with plain floats."""
        return {
            f: {
                "mu": float(self.mu[i]),
                "mu_star": float(self.mu_star[i]),
                "mu_star_conf": float(self.mu_star_conf[i]),
                "sigma": float(self.sigma[i]),
            }
            for i, f in enumerate(self.factors)
        }


def morris_screening(
    model: Callable,
    factors: Sequence[Factor],
    trajectories: int = 20,
    levels: int = 4,
    *,
    seed: int,
    optimal_trajectories: int | None = None,
    n_resamples: int = 1000,
    conf_level: float = 0.95,
    outputs: str | Sequence[str] | None = None,
) -> MorrisResult | dict[str, MorrisResult]:
    """Morris screening: elementary effects along random one-at-a-time trajectories.

    Parameters
    ----------
    model, factors, outputs
        As in :func:`sobol_indices`. Every factor must be bounded (uniform,
        loguniform, triangular): the Morris grid includes the levels 0 and 1 of
        the unit hypercube, which are infinite for normal kinds.
    trajectories : int
        Number of trajectories r (>= 2); the model is run ``r (D + 1)`` times.
        With ``optimal_trajectories`` this is the candidate pool.
    levels : int
        Grid levels p, even (SALib); the step is ``p / (2 (p - 1))``.
    seed : int
        Positive int (same rule as :func:`sobol_indices`).
    optimal_trajectories : int, optional
        Keep this many best-spread trajectories out of ``trajectories``
        (Campolongo et al. 2007 [5]_).
    n_resamples, conf_level
        Bootstrap of ``mu_star_conf``.

    Returns
    -------
    MorrisResult or dict of str to MorrisResult
        Shaped like :func:`sobol_indices`'s return.

    Notes
    -----
    Elementary effect of factor i (Morris 1991 [4]_, eq. 1, in the unit
    hypercube): :math:`EE_i = [y(x + \\Delta e_i) - y(x)] / \\Delta`, with x and
    the step :math:`\\Delta` on the [0, 1] probability scale of each factor. It
    is therefore the output change per full-range sweep of the factor: for
    ``y = a x`` with x uniform on [low, high], every EE is ``a (high - low)``.
    This makes mu_star comparable across factors of different units.
    A discrete factor such as a realization index must be ordered by severity
    before it is mapped (see :func:`realization_factor_map`); effects on an
    unordered index are meaningless.
    """
    factors = _check_factors(factors)
    unbounded = [f.name for f in factors if not f.bounded]
    if unbounded:
        raise ValueError(
            f"Morris screening needs bounded factors; {', '.join(unbounded)} "
            "(normal/lognormal) would be sampled at +/- infinity; give them a uniform or triangular range"
        )
    trajectories = operator.index(trajectories)
    if trajectories < 2:
        raise ValueError(f"trajectories must be >= 2, got {trajectories}")
    levels = operator.index(levels)
    if levels < 2 or levels % 2:
        raise ValueError(f"levels must be an even int >= 2, got {levels}")
    if optimal_trajectories is not None:
        optimal_trajectories = operator.index(optimal_trajectories)
        if not 2 <= optimal_trajectories <= trajectories:
            raise ValueError(f"optimal_trajectories must be between 2 and trajectories ({trajectories})")
    seed = _check_seed(seed)
    conf_level, n_resamples = _check_conf(conf_level, n_resamples)
    from SALib.analyze import morris as _morris_analyze
    from SALib.sample import morris as _morris_sample

    prob = problem(factors)
    X = _morris_sample.sample(
        dict(prob),
        trajectories,
        num_levels=levels,
        optimal_trajectories=optimal_trajectories,
        seed=seed,
    )
    Y, is_map = _evaluate(model, X, outputs)
    n_traj = optimal_trajectories or trajectories
    res = {}
    for name, y in Y.items():
        si = _morris_analyze.analyze(
            dict(prob),
            X,
            y,
            num_resamples=n_resamples,
            conf_level=conf_level,
            num_levels=levels,
            print_to_console=False,
            seed=seed,
        )
        res[name] = MorrisResult(
            output=name,
            factors=tuple(str(s) for s in si["names"]),
            mu=_frozen(si["mu"]),
            mu_star=_frozen(si["mu_star"]),
            mu_star_conf=_frozen(si["mu_star_conf"]),
            sigma=_frozen(si["sigma"]),
            trajectories=int(n_traj),
            levels=int(levels),
            seed=seed,
            n_evaluations=int(y.size),
        )
    return res if is_map else next(iter(res.values()))


# --------------------------------------------------------------------------
# a U(0, 1) factor -> a hazard realization
# --------------------------------------------------------------------------
def realization_factor_map(u, weights, order=None) -> np.ndarray:
    """Map U(0, 1) values to realization indices by the inverse CDF of the weights.

    Parameters
    ----------
    u : array_like, values in [0, 1]
        Factor values, any shape.
    weights : array_like (R,)
        Realization weights, finite and >= 0 with a positive sum; they are
        normalized to sum 1.
    order : array_like of int (R,), optional
        A permutation of ``0..R-1`` listing the realizations from least to most
        severe, e.g. ``np.argsort(afp_per_realization)``. The mapping then runs
        along this order, so that a larger u gives a more severe realization:
        required for Morris screening and for any reading of the index as a
        monotone factor. Sobol' indices do not depend on the order.

    Returns
    -------
    ndarray of intp, shape of ``u``
        Realization indices (into the original, unsorted realizations).

    Notes
    -----
    With the weights in mapping order :math:`w_{(1)}, \\dots, w_{(R)}` and
    cumulative sums :math:`c_k = \\sum_{i \\le k} w_{(i)}` (:math:`c_0 = 0`,
    :math:`c_R = 1` exactly), u maps to position k when
    :math:`c_{k-1} \\le u < c_k`; so position k is drawn with probability
    :math:`w_{(k)}` and a realization of zero weight is never drawn. ``u = 1``
    maps to the last position of positive weight.

    Raises
    ------
    ValueError
        u outside [0, 1] or not finite; bad weights; ``order`` not a permutation.

    Examples
    --------
    >>> realization_factor_map([0.0, 0.2, 0.5, 1.0], [0.125, 0.25, 0.125, 0.5]).tolist()
    [0, 1, 3, 3]
    """
    w = np.asarray(weights, dtype=float)
    if w.ndim != 1 or w.size == 0:
        raise ValueError(f"weights must be a non-empty 1-D array, got shape {w.shape}")
    if not np.all(np.isfinite(w)) or np.any(w < 0):
        raise ValueError("weights must be finite and >= 0")
    total = w.sum()
    if not total > 0:
        raise ValueError("weights must have a positive sum")
    r = w.size
    if order is None:
        perm = np.arange(r)
    else:
        perm = np.asarray(order)
        if (
            perm.shape != (r,)
            or not np.issubdtype(perm.dtype, np.integer)
            or not np.array_equal(np.sort(perm), np.arange(r))
        ):
            raise ValueError(f"order must be a permutation of 0..{r - 1} (an int array of length {r})")
    u = np.asarray(u, dtype=float)
    if not np.all(np.isfinite(u)) or np.any((u < 0) | (u > 1)):
        raise ValueError("u must hold finite values in [0, 1]")
    c = np.cumsum(w[perm] / total)
    c[-1] = 1.0  # no rounding gap at the top
    pos = np.searchsorted(c, u, side="right")  # c[k-1] <= u < c[k] -> k
    last = int(np.flatnonzero(w[perm] > 0)[-1])
    pos = np.minimum(pos, last)  # u == 1, and u past the last positive weight
    return perm[pos]
