"""Prior distributions of the frequency parameters, in the sampler's coordinates.

The sampler works on ``theta``, the family's parameters with every scale parameter
replaced by its natural logarithm: ``(mean, log sd)`` for the normal and lognormal,
``(location, log scale)`` for the Gumbel, ``(location, log scale, shape)`` for the GEV and
``(mean, log sd, skew)`` for the log-Pearson Type III. :meth:`Prior.log_density` is the
prior density of ``theta`` (the Jacobian of the log taken into account), up to a constant.

* normal and lognormal: p(mu, sigma) ∝ 1/sigma, the noninformative prior of Gelman et al.
  [1]_ section 3.2 (p(mu, sigma^2) ∝ 1/sigma^2 in their notation); flat in (mu, log sigma).
  For lognormal, mu and sigma are the mean and standard deviation of log10 of the quantity.
* Gumbel: flat on the location and on the log of the scale.
* GEV: flat on the location and on the log of the scale; on the shape kappa (hydrology sign,
  as in :mod:`riskcalc.hazard.families` and scipy's ``genextreme`` ``c``: kappa > 0 is bounded
  above), either the "geophysical" prior of Martins & Stedinger [2]_, a Beta(p = 6, q = 9)
  density on (-0.5, 0.5),
  ``pi(kappa) = (0.5 + kappa)^(p-1) (0.5 - kappa)^(q-1) / B(p, q)``
  (mean -0.10, standard deviation 0.122: a mildly heavy upper tail), or flat on
  (-1, 1) (the likelihood is unbounded for kappa >= 1).
* LP3 (of log10 of the quantity): flat on the mean and on the log of the standard deviation;
  on the skew, a normal prior with a regional skew as its mean and the regional skew's mean
  squared error as its variance when the user gives them (the weighting of station and
  regional skew in Bulletin 17C [3]_, here as a Bayesian prior, Reis et al. [4]_), else flat;
  in both cases the skew is kept within [-3, 3].

References
----------
.. [1] Gelman, A., Carlin, J.B., Stern, H.S., Dunson, D.B., Vehtari, A. and Rubin, D.B.
   (2013). Bayesian Data Analysis, 3rd ed. CRC Press, section 3.2.
.. [2] Martins, E.S. and Stedinger, J.R. (2000). Generalized maximum-likelihood generalized
   extreme-value quantile estimators for hydrologic data. Water Resources Research 36(3),
   737-744.
.. [3] England, J.F., et al. (2019). Guidelines for Determining Flood Flow Frequency,
   Bulletin 17C. USGS Techniques and Methods 4-B5, v1.1, section 6 (regional skew).
.. [4] Reis, D.S., Stedinger, J.R. and Martins, E.S. (2005). Bayesian generalized least
   squares regression with application to log Pearson type 3 regional skew estimation.
   Water Resources Research 41(10), W10419.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special as sc

__all__ = [
    "Prior",
    "make_prior",
    "THETA_NAMES",
    "GEOPHYSICAL_P",
    "GEOPHYSICAL_Q",
    "GEV_SHAPE_FLAT",
    "SKEW_RANGE",
    "to_family",
    "from_family",
]

#: Beta exponents of the geophysical prior on the GEV shape, Martins & Stedinger (2000).
GEOPHYSICAL_P = 6.0
GEOPHYSICAL_Q = 9.0

#: Bounds of the flat prior on the GEV shape.
GEV_SHAPE_FLAT = (-1.0, 1.0)

#: Bounds of the LP3 skew (of log10 of the quantity), with either prior.
SKEW_RANGE = (-3.0, 3.0)

#: Names of the sampler's coordinates, per family.
THETA_NAMES = {
    "normal": ("mean", "log_sd"),
    "lognormal": ("mean", "log_sd"),
    "gumbel": ("location", "log_scale"),
    "gev": ("location", "log_scale", "shape"),
    "lp3": ("mean", "log_sd", "skew"),
}

#: Position of the log-transformed parameter in theta (the same in every family).
_LOG_INDEX = 1


def to_family(theta) -> np.ndarray:
    """The family's parameters from theta: ``(W, p) -> (W, p)``, the scale exponentiated."""
    theta = np.atleast_2d(np.asarray(theta, dtype=float))
    out = theta.copy()
    with np.errstate(over="ignore"):
        out[:, _LOG_INDEX] = np.exp(theta[:, _LOG_INDEX])
    return out


def from_family(params) -> np.ndarray:
    """theta from the family's parameters: ``(W, p) -> (W, p)``."""
    params = np.atleast_2d(np.asarray(params, dtype=float))
    out = params.copy()
    out[:, _LOG_INDEX] = np.log(params[:, _LOG_INDEX])
    return out


@dataclass(frozen=True)
class Prior:
    """The prior of one family's parameters.

    Attributes
    ----------
    family : str
    shape_prior : {"geophysical", "flat"} or None
        GEV only.
    regional_skew, regional_skew_mse : float or None
        LP3 only: mean and variance of the normal prior on the skew.
    """

    family: str
    shape_prior: str | None = None
    regional_skew: float | None = None
    regional_skew_mse: float | None = None

    @property
    def bounds(self) -> tuple[float, float] | None:
        """Bounds of the third coordinate (GEV shape or LP3 skew), or None."""
        if self.family == "gev":
            return (-0.5, 0.5) if self.shape_prior == "geophysical" else GEV_SHAPE_FLAT
        if self.family == "lp3":
            return SKEW_RANGE
        return None

    def log_density(self, theta) -> np.ndarray:
        """Log prior density of theta ``(W, p) -> (W,)``, up to a constant; ``-inf`` outside the support."""
        theta = np.atleast_2d(np.asarray(theta, dtype=float))
        out = np.zeros(theta.shape[0])
        if self.family in ("normal", "lognormal", "gumbel"):
            # p(mu, sigma) ∝ 1/sigma is flat in (mu, log sigma): BDA3 section 3.2
            return out
        lo, hi = self.bounds
        third = theta[:, 2]
        inside = (third > lo) & (third < hi)
        if self.family == "gev" and self.shape_prior == "geophysical":
            k = np.where(inside, third, 0.0)
            # Martins & Stedinger (2000): Beta(p, q) on kappa + 0.5
            out = (
                (GEOPHYSICAL_P - 1) * np.log(0.5 + k)
                + (GEOPHYSICAL_Q - 1) * np.log(0.5 - k)
                - sc.betaln(GEOPHYSICAL_P, GEOPHYSICAL_Q)
            )
        elif self.family == "lp3" and self.regional_skew is not None:
            mse = float(self.regional_skew_mse)
            out = -0.5 * (third - self.regional_skew) ** 2 / mse - 0.5 * np.log(2 * np.pi * mse)
        return np.where(inside, out, -np.inf)

    def describe(self) -> dict:
        """The prior as written to fit.json."""
        fam = self.family
        if fam in ("normal", "lognormal"):
            scale = "sd of log10 of the quantity" if fam == "lognormal" else "sd"
            return {
                "density": "p(mean, sd) proportional to 1/sd",
                "reference": "Gelman et al. (2013), Bayesian Data Analysis, 3rd ed., section 3.2",
                "note": f"flat in (mean, log sd); sd is the {scale}",
            }
        if fam == "gumbel":
            return {"density": "flat on location and log(scale)", "reference": None}
        if fam == "gev":
            d = {"location": "flat", "log_scale": "flat", "shape_convention": "kappa, shape > 0 bounded above"}
            if self.shape_prior == "geophysical":
                d["shape"] = {
                    "density": "geophysical: Beta(p, q) on shape + 0.5, support (-0.5, 0.5)",
                    "p": GEOPHYSICAL_P,
                    "q": GEOPHYSICAL_Q,
                    "reference": "Martins and Stedinger (2000), Water Resources Research 36(3), 737-744",
                }
            else:
                d["shape"] = {"density": "flat", "support": list(GEV_SHAPE_FLAT)}
            return d
        d = {"mean": "flat", "log_sd": "flat", "quantity": "log10 of the quantity"}
        if self.regional_skew is not None:
            d["skew"] = {
                "density": "normal, truncated to the support",
                "regional_skew": self.regional_skew,
                "regional_skew_mse": self.regional_skew_mse,
                "support": list(SKEW_RANGE),
            }
        else:
            d["skew"] = {"density": "flat", "support": list(SKEW_RANGE)}
        return d


def make_prior(family: str, *, shape_prior="geophysical", regional_skew=None, regional_skew_mse=None) -> Prior:
    """A :class:`Prior`, its options checked (``ValueError`` for a bad combination)."""
    if family not in THETA_NAMES:
        raise ValueError(f"unknown family '{family}'; expected one of {', '.join(THETA_NAMES)}")
    if family == "gev":
        if shape_prior not in ("geophysical", "flat"):
            raise ValueError(f"shape prior '{shape_prior}' is not geophysical or flat")
    else:
        shape_prior = None
    if (regional_skew is None) != (regional_skew_mse is None):
        raise ValueError("a regional skew needs its mean squared error, and the other way round")
    if regional_skew is not None:
        if family != "lp3":
            raise ValueError("a regional skew applies to the lp3 family only")
        if not SKEW_RANGE[0] < regional_skew < SKEW_RANGE[1]:
            raise ValueError(f"regional skew {regional_skew} is outside ({SKEW_RANGE[0]:g}, {SKEW_RANGE[1]:g})")
        if not (np.isfinite(regional_skew_mse) and regional_skew_mse > 0):
            raise ValueError(f"regional skew MSE {regional_skew_mse} must be a number > 0")
    return Prior(
        family,
        shape_prior,
        None if regional_skew is None else float(regional_skew),
        None if regional_skew_mse is None else float(regional_skew_mse),
    )
