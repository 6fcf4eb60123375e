"""A Bayesian frequency analysis of an annual-peak record: mode, MLE and posterior draws.

:func:`fit_peaks` finds the maximum-likelihood estimate and the posterior mode by
optimization, starts the ensemble sampler from a normal approximation at the mode, keeps
the requested number of draws, and returns a :class:`FitResult` whose
:meth:`~FitResult.ensemble` is a :class:`~riskcalc.hazard.ensemble.HazardEnsemble` like one
read from a file (``chain`` and ``iteration`` set, ``log_posterior`` the sampler's).

The posterior is ``p(theta | data) ∝ p(theta) L(theta)``, with the likelihood of
:mod:`~riskcalc.hazard.fit.likelihood` (exact, interval and below-threshold years; Stedinger
& Cohn 1986 [1]_, Reis & Stedinger 2005 [2]_ for the Bayesian treatment) and the priors of
:mod:`~riskcalc.hazard.fit.priors`. The mode is the maximum of the posterior density in the
sampler's coordinates (scale parameters by their logarithm); with flat priors in those
coordinates it is the maximum-likelihood estimate.

References
----------
.. [1] Stedinger, J.R. and Cohn, T.A. (1986). Flood frequency analysis with historical and
   paleoflood information. Water Resources Research 22(5), 785-793.
.. [2] Reis, D.S. and Stedinger, J.R. (2005). Bayesian MCMC flood frequency analysis with
   historical information. Journal of Hydrology 313(1-2), 97-116.
.. [3] Gelman, A., et al. (2013). Bayesian Data Analysis, 3rd ed. CRC Press, ch. 11.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import optimize

from ..ensemble import HazardEnsemble
from ..families import get_family
from .likelihood import LOG_FAMILIES, log_likelihood
from .peaks import PeakRecord
from .priors import GEV_SHAPE_FLAT, SKEW_RANGE, THETA_NAMES, Prior, from_family, make_prior, to_family
from .sampler import DEFAULT_BURN, DEFAULT_WALKERS, SampleResult, run_sampler

__all__ = ["FitResult", "fit_peaks", "log_posterior_fn", "maximize", "DEFAULT_DRAWS", "DEFAULT_SEED", "CAUTION_FIT"]

#: Draws kept by default.
DEFAULT_DRAWS = 4000

#: Seed of ``riskcalc fit`` when none is given.
DEFAULT_SEED = 20240601

#: The caution every fit prints and writes.
CAUTION_FIT = (
    "A flood-frequency analysis for a dam or levee needs the judgement of a qualified hydrologist and the "
    "governing agency's procedures, including how the record is extended beyond its length (regional "
    "information, paleoflood data, rainfall-runoff modelling); riskcalc's fit does not replace that."
)

_EULER = 0.5772156649015329


def log_posterior_fn(record: PeakRecord, family: str, prior: Prior, *, likelihood_only=False, bounds=None):
    """The vectorized log posterior (or log-likelihood) ``theta (W, p) -> (W,)``.

    ``bounds`` (lo, hi) of the third coordinate apply to the likelihood-only function (the MLE).
    """

    def f(theta):
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        params = to_family(theta)
        cols = tuple(params[:, j : j + 1] for j in range(params.shape[1]))
        ll = log_likelihood(record, family, cols)
        if likelihood_only:
            if bounds is not None:
                third = theta[:, 2]
                ll = np.where((third > bounds[0]) & (third < bounds[1]), ll, -np.inf)
            return ll
        lp = prior.log_density(theta)
        out = np.where(np.isfinite(lp), lp + ll, -np.inf)
        return np.where(np.isnan(out), -np.inf, out)

    return f


def maximize(f, starts) -> tuple[np.ndarray, float]:
    """Maximize the scalar ``f(theta (p,))`` by Nelder-Mead from each start (restarted twice).

    Returns the best point and its value; ``ValueError`` when no start has a finite value.
    """

    def neg(t):
        v = float(f(np.asarray(t)[None, :])[0])
        return -v if math.isfinite(v) else 1e300

    best, best_v = None, -math.inf
    opts = {"xatol": 1e-10, "fatol": 1e-12, "maxiter": 40000, "maxfev": 80000, "adaptive": True}
    for x0 in starts:
        x0 = np.asarray(x0, dtype=float)
        if neg(x0) >= 1e300:
            continue
        x = x0
        for _ in range(2):  # a restart refreshes a collapsed simplex
            x = optimize.minimize(neg, x, method="Nelder-Mead", options=opts).x
        v = -neg(x)
        if v > best_v:
            best, best_v = x, v
    if best is None:
        raise ValueError("no starting value has a finite likelihood; check the record against the family")
    return best, best_v


def _hessian(f, x, h=None) -> np.ndarray:
    """Central-difference Hessian of the scalar ``f`` at ``x``."""
    x = np.asarray(x, dtype=float)
    p = x.size
    h = 1e-4 * np.maximum(1.0, np.abs(x)) if h is None else h

    def g(t):
        return float(f(np.asarray(t)[None, :])[0])

    out = np.empty((p, p))
    f0 = g(x)
    for i in range(p):
        ei = np.zeros(p)
        ei[i] = h[i]
        out[i, i] = (g(x + ei) - 2 * f0 + g(x - ei)) / h[i] ** 2
        for j in range(i):
            ej = np.zeros(p)
            ej[j] = h[j]
            v = (g(x + ei + ej) - g(x + ei - ej) - g(x - ei + ej) + g(x - ei - ej)) / (4 * h[i] * h[j])
            out[i, j] = out[j, i] = v
    return out


def _start_cov(f, x) -> np.ndarray:
    """Covariance of the normal approximation at the mode, ``inv(-H)``; a small ball when H is unusable."""
    try:
        hess = _hessian(f, x)
        cov = np.linalg.inv(-hess)
        cov = 0.5 * (cov + cov.T)
        np.linalg.cholesky(cov)
        if np.all(np.isfinite(cov)):
            return cov
    except np.linalg.LinAlgError:
        pass
    return np.diag((1e-2 * np.maximum(1.0, np.abs(x))) ** 2)


def _pseudo_sample(record: PeakRecord, family: str) -> np.ndarray:
    """Values for starting points: exact peaks and the finite intervals' midpoints (in log10 for log families)."""
    lo, hi = record.lower, record.upper
    both = np.isfinite(lo) & np.isfinite(hi) & (lo > 0 if family in LOG_FAMILIES else True)
    if family in LOG_FAMILIES:
        mids = np.sqrt(lo[both] * hi[both])
        x = np.log10(np.concatenate([record.peaks, mids]))
    else:
        x = np.concatenate([record.peaks, 0.5 * (lo[both] + hi[both])])
    if x.size < 3:  # mostly one-sided intervals: their finite bounds
        finite = np.concatenate([lo[np.isfinite(lo) & (lo > 0)], hi[np.isfinite(hi)]])
        x = np.concatenate([x, np.log10(finite) if family in LOG_FAMILIES else finite])
    return x


def _starts(record: PeakRecord, family: str) -> list:
    """Starting points in theta from the moments of the pseudo-sample."""
    x = _pseudo_sample(record, family)
    m = float(np.mean(x))
    s = float(np.std(x, ddof=1)) if x.size > 1 else 1.0
    s = s if s > 0 else max(1e-3, abs(m) * 1e-2)
    if family in ("normal", "lognormal"):
        return [[m, math.log(s)]]
    if family == "lp3":
        from scipy import stats

        g = float(np.clip(stats.skew(x, bias=False), -2.5, 2.5)) if x.size > 2 else 0.0
        return [[m, math.log(s), g], [m, math.log(s), 0.0]]
    scale = s * math.sqrt(6) / math.pi
    loc = m - _EULER * scale
    if family == "gumbel":
        return [[loc, math.log(scale)]]
    return [[loc, math.log(scale), k] for k in (0.0, -0.15, 0.15)]


@dataclass(frozen=True, eq=False)
class FitResult:
    """A fitted frequency analysis.

    Attributes
    ----------
    family : str
    names : tuple of str
        The family's parameter names (the ensemble's columns).
    draws : ndarray (D, p)
        Posterior draws of the family's parameters, ordered by chain then iteration.
    log_posterior : ndarray (D,)
    chain, iteration : ndarray (D,) of int
        Walker and step of each draw.
    mode, mle : dict
        Posterior mode and maximum-likelihood estimate, family parameters.
    mode_log_posterior, mle_log_likelihood : float
    record : PeakRecord
    prior : Prior
    sample : SampleResult
    seed : int or None
    walkers, burn : int
    warnings : list of str
    """

    family: str
    names: tuple
    draws: np.ndarray
    log_posterior: np.ndarray
    chain: np.ndarray
    iteration: np.ndarray
    mode: dict
    mle: dict
    mode_log_posterior: float
    mle_log_likelihood: float
    record: PeakRecord
    prior: Prior
    sample: SampleResult
    seed: int | None
    walkers: int
    burn: int
    warnings: list = field(default_factory=list)

    @property
    def size(self) -> int:
        return int(self.draws.shape[0])

    def ensemble(self, *, quantity="discharge", source=None) -> HazardEnsemble:
        """The draws as a :class:`HazardEnsemble` (equal weights)."""
        n = self.size
        return HazardEnsemble(
            family=self.family,
            weights=np.full(n, 1.0 / n),
            params={k: self.draws[:, j].copy() for j, k in enumerate(self.names)},
            log_posterior=self.log_posterior.copy(),
            labels=tuple(str(i + 1) for i in range(n)),
            chain=self.chain.copy(),
            iteration=self.iteration.copy(),
            quantity=quantity,
            unit=self.record.unit,
            source=source or self.record.source,
        )

    def ensemble_table(self) -> pd.DataFrame:
        """The ensemble.csv table: the family's parameters, ``log_posterior``, ``chain``, ``iteration``."""
        d = {k: self.draws[:, j] for j, k in enumerate(self.names)}
        d["log_posterior"] = self.log_posterior
        d["chain"] = self.chain
        d["iteration"] = self.iteration
        return pd.DataFrame(d)

    def posterior_summary(self) -> dict:
        """Mean, sd and the 5, 50 and 95 % quantiles of each parameter."""
        out = {}
        for j, k in enumerate(self.names):
            v = self.draws[:, j]
            q = np.quantile(v, [0.05, 0.5, 0.95])
            out[k] = {"mean": float(v.mean()), "sd": float(v.std(ddof=1)), "p05": q[0], "p50": q[1], "p95": q[2]}
        return out

    def diagnostics(self) -> dict:
        """Convergence diagnostics for fit.json."""
        s = self.sample
        per = s.diagnostics
        return {
            "parameters": per,
            "ess_bulk_min": min(d["ess_bulk"] for d in per.values()),
            "rank_normalized_split_rhat_max": max(d["rank_normalized_split_rhat"] for d in per.values()),
            "acceptance_rate": s.acceptance,
            "chains": self.walkers,
            "draws_per_chain": int(s.theta.shape[0]),
            "thin": s.thin,
            "burn_in_steps": self.burn,
            "steps_per_chain": s.steps,
            "production_rounds": s.rounds,
            "autocorrelation_time_burn_in_steps": dict(zip(THETA_NAMES[self.family], s.tau_burn)),
            "note": (
                "each walker of the ensemble sampler is treated as a chain; diagnostics are computed on the "
                "kept (thinned) draws of every walker"
            ),
        }


def fit_peaks(
    record: PeakRecord,
    family: str,
    *,
    draws: int = DEFAULT_DRAWS,
    seed: int | None = DEFAULT_SEED,
    shape_prior: str = "geophysical",
    regional_skew: float | None = None,
    regional_skew_mse: float | None = None,
    walkers: int = DEFAULT_WALKERS,
    burn: int = DEFAULT_BURN,
) -> FitResult:
    """Fit ``family`` to an annual-peak record: MLE, posterior mode and ``draws`` posterior draws.

    Parameters
    ----------
    record : PeakRecord
    family : {"lp3", "gev", "gumbel", "lognormal", "normal"}
    draws : int
        Posterior draws to keep (at least 100).
    seed : int or None
    shape_prior : {"geophysical", "flat"}
        GEV shape prior (see :mod:`~riskcalc.hazard.fit.priors`).
    regional_skew, regional_skew_mse : float, optional
        LP3: mean and mean squared error of a normal prior on the skew.
    walkers, burn : int
        Walkers of the ensemble sampler and burn-in steps.

    Returns
    -------
    FitResult

    Raises
    ------
    ValueError
        Unknown family, bad prior options, too few draws, a record no parameters fit.
    """
    fam = get_family(family)
    if not 100 <= int(draws) <= 1_000_000:
        raise ValueError(f"{draws} draws is outside 100 to 1000000")
    if family in LOG_FAMILIES and (np.any(record.peaks <= 0) or np.any(record.upper <= 0)):
        raise ValueError(f"the {family} family needs positive peaks")
    prior = make_prior(
        fam.name, shape_prior=shape_prior, regional_skew=regional_skew, regional_skew_mse=regional_skew_mse
    )
    post = log_posterior_fn(record, fam.name, prior)
    mle_bounds = {"gev": GEV_SHAPE_FLAT, "lp3": SKEW_RANGE}.get(fam.name)
    like = log_posterior_fn(record, fam.name, prior, likelihood_only=True, bounds=mle_bounds)
    starts = _starts(record, fam.name)
    mle_theta, mle_ll = maximize(like, starts)
    mode_theta, mode_lp = maximize(post, [mle_theta, *starts])
    cov = _start_cov(post, mode_theta)
    names = fam.parameters
    sample = run_sampler(
        post,
        mode_theta,
        cov,
        names,
        draws=int(draws),
        seed=seed,
        walkers=walkers,
        burn=burn,
        transform=to_family,
    )
    k, w, p = sample.theta.shape
    # iteration-major order, cut to the requested count, then ordered by chain and iteration
    flat = sample.theta.reshape(k * w, p)[: int(draws)]
    lp = sample.log_prob.reshape(k * w)[: int(draws)]
    chain = np.tile(np.arange(w), k)[: int(draws)]
    iteration = np.repeat(sample.iteration, w)[: int(draws)]
    order = np.lexsort((iteration, chain))
    params = to_family(flat[order])
    warnings = list(sample.warnings)
    mode = dict(zip(names, to_family(mode_theta)[0].tolist()))
    mle = dict(zip(names, to_family(mle_theta)[0].tolist()))
    bounds = prior.bounds
    if bounds is not None:
        for label, th in (("posterior mode", mode_theta), ("maximum-likelihood estimate", mle_theta)):
            lim = bounds if label == "posterior mode" else mle_bounds
            if min(abs(th[2] - lim[0]), abs(th[2] - lim[1])) < 1e-3:
                warnings.append(f"the {label} of {names[2]} ({th[2]:.3f}) lies at the bound of its range {list(lim)}")
    return FitResult(
        family=fam.name,
        names=names,
        draws=params,
        log_posterior=lp[order],
        chain=chain[order].astype(np.int64),
        iteration=iteration[order].astype(np.int64),
        mode=mode,
        mle=mle,
        mode_log_posterior=float(mode_lp),
        mle_log_likelihood=float(mle_ll),
        record=record,
        prior=prior,
        sample=sample,
        seed=seed,
        walkers=walkers,
        burn=burn,
        warnings=warnings,
    )


def fit_from_files(
    peaks,
    family: str,
    *,
    thresholds=None,
    draws: int = DEFAULT_DRAWS,
    seed: int | None = DEFAULT_SEED,
    shape_prior: str = "geophysical",
    regional_skew: float | None = None,
    regional_skew_mse: float | None = None,
    sheet=None,
    where=None,
    keys: dict | None = None,
) -> FitResult:
    """Check the options, read the record and fit it; every problem an :class:`~riskcalc.errors.InputError`.

    Parameters
    ----------
    where : path, optional
        The file that set the options (a scenario), named in option errors.
    keys : dict, optional
        How each option is named in messages (default: the command's ``--option``).
    """
    from ...errors import InputError
    from .peaks import read_record

    names = {
        "family": "--family",
        "draws": "--draws",
        "shape_prior": "--shape-prior",
        "regional_skew": "--regional-skew",
        "regional_skew_mse": "--regional-skew-mse",
        **(keys or {}),
    }
    try:
        fam = get_family(family)
    except ValueError as exc:
        raise InputError(str(exc), where, key=names["family"]) from None
    if not 100 <= int(draws) <= 1_000_000:
        raise InputError(f"{draws} is outside 100 to 1000000; expected a number of draws", where, key=names["draws"])
    if shape_prior not in ("geophysical", "flat"):
        raise InputError(f"'{shape_prior}' is not geophysical or flat", where, key=names["shape_prior"])
    try:
        make_prior(fam.name, shape_prior=shape_prior, regional_skew=regional_skew, regional_skew_mse=regional_skew_mse)
    except ValueError as exc:
        key = names["regional_skew_mse"] if "MSE" in str(exc) else names["regional_skew"]
        raise InputError(str(exc), where, key=key) from None
    record = read_record(peaks, fam.name, thresholds=thresholds, sheet=sheet)
    try:
        return fit_peaks(
            record,
            fam.name,
            draws=int(draws),
            seed=seed,
            shape_prior=shape_prior,
            regional_skew=regional_skew,
            regional_skew_mse=regional_skew_mse,
        )
    except ValueError as exc:
        raise InputError(str(exc), peaks) from None


__all__ += ["from_family", "fit_from_files"]
