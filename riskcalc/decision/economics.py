"""Economics of alternatives: discounting, annualization and benefit-cost figures.

Alternatives share the hazard ensemble, so each realization ``r`` gives a
paired pair of expected annual damages (EAD) without and with the project. All
functions here are pure and work on arrays with realizations on axis 0; the
annualization of a time-varying EAD therefore carries the uncertainty through,
one equivalent annual value per realization.

Conventions
-----------
Interest rate
    ``rate`` is the effective annual discount rate as a fraction (0.07 for
    7 %). A rate of exactly 0 is allowed and handled by its limit.
Timing of annual values
    The period of analysis has years ``t = 1..T``; the value of year ``t`` is
    received at the *end* of that year and discounted to the start of the
    period (the base year) by ``(1 + i)**-t``. This is the end-of-year
    convention of the standard compound-interest tables, so that
    ``present_worth_factor`` is the (P/A, i, T) factor and
    ``capital_recovery_factor`` its inverse (A/P, i, T).
Time-varying values
    Year ``t`` of the period of analysis is calendar year
    ``base_year + t - 1``: the base-year EAD is the value of the first year.
    Between breakpoint years the value is interpolated linearly; before the
    first and after the last breakpoint it is held constant.
Construction
    The first cost is spent during construction, which ends at the base year.
    Interest during construction compounds each month's expenditure from the
    middle of its month to the end of construction at the monthly rate
    equivalent to the annual rate, ``(1 + i)**(1/12) - 1``.

Money is in any one currency unit (written ``[$]``) at constant price level;
life loss is in statistical lives.

References
----------
.. [1] Newnan, D.G., Eschenbach, T.G. and Lavelle, J.P. Engineering Economic
   Analysis. Oxford University Press (compound interest factors (A/P), (P/A),
   (P/F), (A/G); any edition).
.. [2] Grant, E.L., Ireson, W.G. and Leavenworth, R.S. Principles of
   Engineering Economy. Wiley (uniform series and gradient factors).
.. [3] US Water Resources Council (1983). Economic and Environmental
   Principles and Guidelines for Water and Related Land Resources
   Implementation Studies (period of analysis, base year, interest during
   construction; annualized benefits and costs).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "capital_recovery_factor",
    "present_worth_factor",
    "single_payment_present_worth",
    "annual_values",
    "annualize_time_varying",
    "undiscounted_mean",
    "interest_during_construction",
    "investment_cost",
    "annualized_cost",
    "EconomicResult",
    "benefit_figures",
    "net_cost_per_life_saved",
]


def _f(a) -> np.ndarray:
    return np.asarray(a, dtype=float)


def _out(a):
    """A 0-d array becomes a NumPy scalar; arrays are returned as they are."""
    a = np.asarray(a)
    return a[()] if a.ndim == 0 else a


def _check_rate(rate) -> np.ndarray:
    i = _f(rate)
    if np.any(i <= -1):
        raise ValueError(f"rate must be greater than -1 (a fraction, 0.07 for 7 %); got {rate!r}")
    return i


def _check_years(years, name="years") -> np.ndarray:
    t = _f(years)
    if np.any(t <= 0):
        raise ValueError(f"{name} must be positive; got {years!r}")
    return t


def _scalar_rate(rate) -> float:
    i = _check_rate(rate)
    if i.ndim != 0:
        raise ValueError(f"rate must be a single number here; got an array of shape {i.shape}")
    return float(i)


# --------------------------------------------------------------------------
# Compound interest factors
# --------------------------------------------------------------------------
def _one_minus_discount(i, t):
    """1 - (1 + i)**-t, accurate for small i (expm1/log1p)."""
    return -np.expm1(-t * np.log1p(i))


def capital_recovery_factor(rate, years):
    """Capital recovery factor (A/P, i, T): equal end-of-year payments per unit present value.

    Parameters
    ----------
    rate : float or array_like
        Effective annual discount rate ``i`` [fraction, 1/yr], ``> -1``.
    years : float or array_like
        Number of years ``T`` [yr], ``> 0``. Broadcasts against ``rate``.

    Returns
    -------
    crf : float or ndarray
        ``i (1 + i)**T / ((1 + i)**T - 1)`` [1/yr]; exactly ``1 / T`` where
        ``i == 0``.

    Raises
    ------
    ValueError
        If any ``years <= 0`` or any ``rate <= -1``.

    Notes
    -----
    Computed as ``i / (1 - (1 + i)**-T)`` with ``expm1`` and ``log1p`` so that
    small rates keep full relative precision, and the ``i -> 0`` limit is
    continuous with the exact ``1 / T`` used at zero. NaN inputs give NaN.

    References
    ----------
    .. [1] Newnan, Eschenbach and Lavelle, Engineering Economic Analysis,
       capital recovery factor (A/P, i, n).
    """
    i = _check_rate(rate)
    t = _check_years(years)
    i, t = np.broadcast_arrays(i, t)
    with np.errstate(divide="ignore", invalid="ignore"):
        crf = np.where(i == 0, 1.0 / t, i / _one_minus_discount(i, t))
    return _out(crf)


def present_worth_factor(rate, years):
    """Uniform-series present worth factor (P/A, i, T), the inverse of the capital recovery factor.

    Parameters
    ----------
    rate : float or array_like
        Effective annual discount rate ``i`` [fraction, 1/yr], ``> -1``.
    years : float or array_like
        Number of years ``T`` [yr], ``> 0``.

    Returns
    -------
    pwf : float or ndarray
        ``((1 + i)**T - 1) / (i (1 + i)**T)`` [yr], the present worth at the
        start of year 1 of one unit received at the end of each of years
        ``1..T``; exactly ``T`` where ``i == 0``.

    Raises
    ------
    ValueError
        If any ``years <= 0`` or any ``rate <= -1``.

    References
    ----------
    .. [1] Newnan, Eschenbach and Lavelle, Engineering Economic Analysis,
       series present worth factor (P/A, i, n).
    """
    i = _check_rate(rate)
    t = _check_years(years)
    i, t = np.broadcast_arrays(i, t)
    with np.errstate(divide="ignore", invalid="ignore"):
        pwf = np.where(i == 0, t, _one_minus_discount(i, t) / i)
    return _out(pwf)


def single_payment_present_worth(rate, years):
    """Single-payment present worth factor (P/F, i, t) = ``(1 + i)**-t``.

    Parameters
    ----------
    rate : float or array_like
        Effective annual discount rate ``i`` [fraction, 1/yr], ``> -1``.
    years : float or array_like
        Time ``t`` [yr] from the base year to the payment; any real number (a
        negative ``t`` compounds a past payment forward to the base year).

    Returns
    -------
    factor : float or ndarray
        ``(1 + i)**-t`` [-].

    Raises
    ------
    ValueError
        If any ``rate <= -1``.

    References
    ----------
    .. [1] Newnan, Eschenbach and Lavelle, Engineering Economic Analysis,
       single payment present worth factor (P/F, i, n).
    """
    i = _check_rate(rate)
    t = _f(years)
    return _out(np.exp(-t * np.log1p(i)))


# --------------------------------------------------------------------------
# Time-varying annual values
# --------------------------------------------------------------------------
def _period(period_years) -> int:
    try:
        t = float(period_years)
    except (TypeError, ValueError):
        raise ValueError(f"period_years must be a whole number of years; got {period_years!r}") from None
    if not np.isfinite(t) or t != int(t) or t < 1:
        raise ValueError(f"period_years must be a whole number of years >= 1; got {period_years!r}")
    return int(t)


def _interpolation_matrix(years, calendar) -> np.ndarray:
    """Weights W (K, T) such that values (..., K) @ W are the linearly interpolated values at ``calendar``.

    Held constant outside ``[years[0], years[-1]]``. Each column sums to 1.
    """
    k = years.size
    w = np.zeros((k, calendar.size))
    cols = np.arange(calendar.size)
    if k == 1:
        w[0, :] = 1.0
        return w
    lo = np.clip(np.searchsorted(years, calendar, side="right") - 1, 0, k - 2)
    frac = np.clip((calendar - years[lo]) / (years[lo + 1] - years[lo]), 0.0, 1.0)
    w[lo, cols] = 1.0 - frac
    w[lo + 1, cols] += frac
    return w


def annual_values(values, period_years, years=None, base_year=None) -> np.ndarray:
    """Year-by-year values over the period of analysis.

    Parameters
    ----------
    values : array_like
        Either the value of every year of the period, shape ``(..., T)`` with
        ``T = period_years`` (element ``t - 1`` is year ``t``), when ``years``
        is not given; or the values at the breakpoint calendar years
        ``years``, shape ``(..., K)``, e.g. ``(R, K)`` with realizations on
        axis 0.
    period_years : int
        Period of analysis ``T`` [yr], a whole number ``>= 1``.
    years : array_like, optional
        Breakpoint calendar years ``(K,)``, strictly increasing (e.g. the base
        year and one or more future years).
    base_year : float, optional
        Calendar year of the first year of the period; defaults to
        ``years[0]``. Only with ``years``.

    Returns
    -------
    series : ndarray, shape ``(..., T)``
        The value of years ``t = 1..T``; year ``t`` is calendar year
        ``base_year + t - 1``. Linear between breakpoints, held constant
        before the first and after the last breakpoint.

    Raises
    ------
    ValueError
        On a non-increasing ``years``, a shape mismatch, or a bad period.
    """
    t_len = _period(period_years)
    v = _f(values)
    if v.ndim == 0:
        raise ValueError("values must have at least one axis (the years or the breakpoints)")
    if years is None:
        if base_year is not None:
            raise ValueError("base_year applies only with breakpoint years; give years= as well")
        if v.shape[-1] != t_len:
            raise ValueError(f"values give {v.shape[-1]} years on their last axis but period_years is {t_len}")
        return v.copy()
    y = _f(years)
    if y.ndim != 1 or y.size == 0:
        raise ValueError(f"years must be a 1-D list of breakpoint years; got shape {y.shape}")
    if not np.all(np.isfinite(y)) or np.any(np.diff(y) <= 0):
        raise ValueError(f"years must be finite and strictly increasing; got {y.tolist()}")
    if v.shape[-1] != y.size:
        raise ValueError(f"values have {v.shape[-1]} breakpoints on their last axis but years has {y.size}")
    b = float(y[0]) if base_year is None else float(base_year)
    if not np.isfinite(b):
        raise ValueError(f"base_year must be a finite year; got {base_year!r}")
    calendar = b + np.arange(t_len, dtype=float)
    return v @ _interpolation_matrix(y, calendar)


def annualize_time_varying(values, rate, period_years, years=None, base_year=None):
    """Equivalent annual value of a time-varying annual series (e.g. a growing EAD).

    The present worth at the base year of the annual values of years
    ``1..T`` (end-of-year convention) is multiplied by the capital recovery
    factor, giving the uniform annual amount with the same present worth.

    Parameters
    ----------
    values : array_like
        Values by year ``(..., T)`` or at breakpoint years ``(..., K)``; see
        :func:`annual_values`. Realizations on axis 0, e.g. ``(R, K)``.
    rate : float
        Effective annual discount rate [fraction, 1/yr], ``> -1``.
    period_years : int
        Period of analysis ``T`` [yr].
    years : array_like, optional
        Breakpoint calendar years ``(K,)``, strictly increasing.
    base_year : float, optional
        Calendar year of year 1 of the period; defaults to ``years[0]``.

    Returns
    -------
    equivalent : float or ndarray, shape ``values.shape[:-1]``
        ``CRF(i, T) * sum_t value_t (1 + i)**-t`` [same unit as ``values``
        per year]. A constant series annualizes to itself (to rounding).

    Notes
    -----
    The result is a weighted mean of the annual values with weights
    ``(1 + i)**-t / (P/A, i, T)`` that sum to 1, so it is linear in the
    values: the equivalent annual value of the ensemble-mean EAD equals the
    mean of the per-realization equivalent annual values.

    For a value growing linearly by ``G`` per year from ``A1`` in year 1, the
    result is ``A1 + G (A/G, i, T)`` with the arithmetic gradient factor
    ``(A/G, i, T) = 1/i - T / ((1 + i)**T - 1)`` [1]_.

    References
    ----------
    .. [1] Newnan, Eschenbach and Lavelle, Engineering Economic Analysis,
       arithmetic gradient uniform series factor (A/G, i, n).
    .. [2] US Water Resources Council (1983), Principles and Guidelines:
       benefits over the period of analysis discounted to the base year and
       converted to an average annual equivalent.
    """
    i = _scalar_rate(rate)
    series = annual_values(values, period_years, years=years, base_year=base_year)
    t_len = series.shape[-1]
    t = np.arange(1, t_len + 1, dtype=float)
    discount = single_payment_present_worth(i, t)
    present_worth = series @ discount
    return _out(present_worth * capital_recovery_factor(i, t_len))


def undiscounted_mean(values, period_years, years=None, base_year=None):
    """Plain (undiscounted) mean over the period of analysis of a time-varying annual series.

    For risk to life: annual failure probability and life loss are never discounted. The mean of the
    annual values of years ``1..T`` (:func:`annual_values`: linear between breakpoint years, held
    constant outside them), each year counted once.

    Parameters
    ----------
    values, period_years, years, base_year
        As for :func:`annual_values`.

    Returns
    -------
    mean : float or ndarray, shape ``values.shape[:-1]``
        ``(1 / T) sum_t value_t`` [same unit as ``values``]; equals :func:`annualize_time_varying` at a
        rate of 0. A constant series gives itself.
    """
    series = annual_values(values, period_years, years=years, base_year=base_year)
    return _out(series.mean(axis=-1))


# --------------------------------------------------------------------------
# Costs
# --------------------------------------------------------------------------
def _spending_weights(construction_months, pattern) -> np.ndarray:
    m = float(construction_months)
    if not np.isfinite(m) or m != int(m) or m < 0:
        raise ValueError(f"construction_months must be a whole number >= 0; got {construction_months!r}")
    m = int(m)
    if isinstance(pattern, str):
        if pattern != "uniform":
            raise ValueError(f"pattern must be 'uniform' or a list of monthly fractions; got {pattern!r}")
        return np.full(m, 1.0 / m) if m else np.zeros(0)
    w = _f(pattern)
    if w.ndim != 1 or w.size != m:
        raise ValueError(f"pattern must list one fraction per construction month ({m}); got shape {w.shape}")
    if np.any(~np.isfinite(w)) or np.any(w < 0) or abs(w.sum() - 1.0) > 1e-9:
        raise ValueError(f"pattern fractions must be non-negative and sum to 1; they sum to {w.sum():.12g}")
    return w


def interest_during_construction(first_cost, rate, construction_months, pattern="uniform"):
    """Interest during construction (IDC) on the first cost, to the end of construction.

    Parameters
    ----------
    first_cost : float or array_like
        Construction (first) cost [$], ``>= 0``; e.g. ``(R,)`` for uncertain costs.
    rate : float
        Effective annual discount rate [fraction, 1/yr], ``> -1``.
    construction_months : int
        Length of construction ``M`` [months], ``>= 0``; it ends at the base year.
    pattern : ``"uniform"`` or array_like, shape ``(M,)``
        Fraction of the first cost spent in each month; ``"uniform"`` spends
        ``1/M`` each month. Fractions must sum to 1.

    Returns
    -------
    idc : float or ndarray
        ``first_cost * sum_m w_m ((1 + i)**((M - m + 1/2) / 12) - 1)`` [$]; 0
        when ``M = 0``. The investment cost at the base year is
        ``first_cost + idc`` (:func:`investment_cost`).

    Notes
    -----
    Convention: the expenditure of month ``m = 1..M`` is made at its middle,
    ``m - 1/2`` months after the start, and compounds for ``M - m + 1/2``
    months at the monthly rate ``(1 + i)**(1/12) - 1`` equivalent to the
    annual rate. Mid-month compounding of monthly expenditures is common
    practice in water resources project evaluation [1]_. For a small rate and
    uniform spending the result is close to simple interest on the whole cost
    for half the construction period, ``first_cost * i * M / 24``.

    References
    ----------
    .. [1] US Water Resources Council (1983), Principles and Guidelines:
       interest during construction is part of the economic cost of a plan.
    """
    i = _scalar_rate(rate)
    c = _f(first_cost)
    if np.any(c < 0):
        raise ValueError(f"first_cost must be >= 0; got {first_cost!r}")
    w = _spending_weights(construction_months, pattern)
    m = w.size
    months_to_end = m - np.arange(1, m + 1) + 0.5
    growth = np.expm1(months_to_end / 12.0 * np.log1p(i))
    return _out(c * float(w @ growth))


def investment_cost(first_cost, rate, construction_months, pattern="uniform"):
    """Investment cost at the base year: first cost plus interest during construction [$].

    See :func:`interest_during_construction` for the parameters and the convention.
    """
    return _out(_f(first_cost) + interest_during_construction(first_cost, rate, construction_months, pattern))


def annualized_cost(first_cost, annual_om, rate, years, construction_months=0, pattern="uniform"):
    """Equivalent annual cost of a project [$/yr].

    Parameters
    ----------
    first_cost : float or array_like
        Construction (first) cost [$], ``>= 0``.
    annual_om : float or array_like
        Annual operation, maintenance, repair, replacement and rehabilitation
        cost [$/yr], taken as uniform over the period.
    rate : float
        Effective annual discount rate [fraction, 1/yr], ``> -1``.
    years : int or float
        Period of analysis ``T`` [yr], ``> 0``.
    construction_months : int, default 0
        Length of construction [months], ending at the base year.
    pattern : ``"uniform"`` or array_like
        Monthly spending fractions; see :func:`interest_during_construction`.

    Returns
    -------
    cost : float or ndarray
        ``(first_cost + IDC) * CRF(i, T) + annual_om`` [$/yr], broadcast over
        ``first_cost`` and ``annual_om``.

    References
    ----------
    .. [1] Newnan, Eschenbach and Lavelle, Engineering Economic Analysis,
       equivalent uniform annual cost.
    .. [2] US Water Resources Council (1983), Principles and Guidelines.
    """
    i = _scalar_rate(rate)
    crf = capital_recovery_factor(i, years)
    invest = investment_cost(first_cost, i, construction_months, pattern)
    return _out(_f(invest) * crf + _f(annual_om))


# --------------------------------------------------------------------------
# Benefit-cost figures
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class EconomicResult:
    """Benefit-cost figures of one alternative, per realization (paired over the shared hazard).

    Every field broadcasts to the common shape of the inputs, e.g. ``(R,)``.
    The life-loss fields are ``None`` when no annualized life loss was given.

    Attributes
    ----------
    ead_without, ead_with : ndarray
        Expected annual damage without and with the project [$/yr].
    annual_cost : ndarray
        Annualized cost of the project [$/yr].
    expected_annual_benefit : ndarray
        ``ead_without - ead_with`` [$/yr].
    net_benefit : ndarray
        ``expected_annual_benefit - annual_cost`` [$/yr].
    benefit_cost_ratio : ndarray
        ``expected_annual_benefit / annual_cost`` [-].
    all_without, all_with : ndarray or None
        Annualized life loss without and with the project [lives/yr].
    life_loss_reduction : ndarray or None
        ``all_without - all_with`` [lives/yr].
    cost_per_life_saved : ndarray or None
        ``(annual_cost - expected_annual_benefit) / life_loss_reduction``
        [$ per statistical life]; see :func:`benefit_figures` for the rule
        where the reduction is not positive.
    """

    ead_without: np.ndarray
    ead_with: np.ndarray
    annual_cost: np.ndarray
    expected_annual_benefit: np.ndarray
    net_benefit: np.ndarray
    benefit_cost_ratio: np.ndarray
    all_without: np.ndarray | None = None
    all_with: np.ndarray | None = None
    life_loss_reduction: np.ndarray | None = None
    cost_per_life_saved: np.ndarray | None = None


def benefit_figures(ead_without, ead_with, annual_cost, all_without=None, all_with=None) -> EconomicResult:
    """Expected annual benefit, net benefit, benefit-cost ratio and cost per statistical life saved.

    Parameters
    ----------
    ead_without, ead_with : float or array_like
        Expected annual damage (equivalent annual values where EAD varies in
        time) without and with the project [$/yr], paired per realization,
        e.g. ``(R,)`` each.
    annual_cost : float or array_like
        Annualized project cost [$/yr], ``> 0``; a scalar or one per realization.
    all_without, all_with : float or array_like, optional
        Annualized life loss without and with the project [lives/yr], paired
        like the EADs. Give both or neither.

    Returns
    -------
    EconomicResult
        All fields broadcast to the common shape of the inputs.

    Raises
    ------
    ValueError
        If any ``annual_cost <= 0``, if only one of ``all_without`` and
        ``all_with`` is given, or if the shapes do not broadcast.

    Notes
    -----
    Cost per statistical life saved is the net annual cost, after the
    economic benefits, per statistical life saved per year [1]_:
    ``(annual_cost - expected_annual_benefit) / (all_without - all_with)``.
    It is negative where the economic benefits alone exceed the cost (lives
    are saved at no net cost). Where the life-loss reduction is zero or
    negative (the project saves no lives) the ratio is not a meaningful price:
    the rule is ``+inf`` where the net cost is positive and ``NaN`` where it is
    zero or negative. No division warning is raised; NaN inputs give NaN.

    The per-realization ratios are paired draws; a headline benefit-cost
    ratio should be the ratio of the (weighted) mean benefit to the mean cost,
    which is not the mean of the per-realization ratios.

    References
    ----------
    .. [1] ANCOLD (2003). Guidelines on Risk Assessment. Australian National
       Committee on Large Dams (the ALARP test and the cost to save a
       statistical life) [from memory; check the primary document].
    .. [2] US Water Resources Council (1983), Principles and Guidelines
       (flood damage reduction benefits as the reduction in expected annual
       damage).
    """
    ew, ep = _f(ead_without), _f(ead_with)
    cost = _f(annual_cost)
    if np.any(cost <= 0):
        raise ValueError(f"annual_cost must be positive; got {annual_cost!r}")
    if (all_without is None) != (all_with is None):
        raise ValueError("give both all_without and all_with, or neither")
    arrays = [ew, ep, cost]
    if all_without is not None:
        arrays += [_f(all_without), _f(all_with)]
    try:
        arrays = np.broadcast_arrays(*arrays)
    except ValueError:
        shapes = ", ".join(str(a.shape) for a in arrays)
        raise ValueError(f"inputs must be paired per realization; shapes {shapes} do not broadcast") from None
    ew, ep, cost = (np.array(a) for a in arrays[:3])
    benefit = ew - ep
    with np.errstate(divide="ignore", invalid="ignore"):
        bcr = benefit / cost
    fields = dict(
        ead_without=ew,
        ead_with=ep,
        annual_cost=cost,
        expected_annual_benefit=benefit,
        net_benefit=benefit - cost,
        benefit_cost_ratio=bcr,
    )
    if all_without is not None:
        lw, lp = (np.array(a) for a in arrays[3:])
        reduction = lw - lp
        fields.update(
            all_without=lw,
            all_with=lp,
            life_loss_reduction=reduction,
            cost_per_life_saved=np.asarray(net_cost_per_life_saved(cost, benefit, reduction)),
        )
    return EconomicResult(**fields)


def net_cost_per_life_saved(annual_cost, annual_benefit, life_loss_reduction):
    """Net annual cost, after the economic benefits, per statistical life saved per year.

    Parameters
    ----------
    annual_cost : float or array_like
        Annualized project cost [$/yr].
    annual_benefit : float or array_like
        Expected annual benefit [$/yr].
    life_loss_reduction : float or array_like
        Reduction in annualized life loss [lives/yr] (not discounted: life loss is never discounted).

    Returns
    -------
    float or ndarray
        ``(annual_cost - annual_benefit) / life_loss_reduction`` [$ per statistical life]; where the
        reduction is zero or negative, ``+inf`` if the net cost is positive and NaN otherwise; NaN inputs
        give NaN. See :func:`benefit_figures`.
    """
    cost, benefit, reduction = np.broadcast_arrays(_f(annual_cost), _f(annual_benefit), _f(life_loss_reduction))
    net_cost = cost - benefit
    saves = reduction > 0
    with np.errstate(divide="ignore", invalid="ignore"):
        per_life = np.where(saves, net_cost / np.where(saves, reduction, 1.0), np.where(net_cost > 0, np.inf, np.nan))
    # NaN in either input stays NaN (the comparisons above are False for NaN)
    return _out(np.where(np.isnan(reduction) | np.isnan(net_cost), np.nan, per_life))
