"""Compound interest factors, annualization and benefit-cost figures against closed forms and tables."""

import math
import warnings
from fractions import Fraction

import numpy as np
import pytest

from riskcalc.decision import economics as ec


def exact_pw_of_uniform_series(rate, years):
    """(P/A, i, n) as the exact rational sum of end-of-year discount factors, sum_t (1 + i)**-t."""
    i = Fraction(rate)
    return sum(1 / (1 + i) ** t for t in range(1, years + 1))


# --------------------------------------------------------------------------
# Capital recovery and present worth factors
# --------------------------------------------------------------------------
def test_crf_7_percent_50_years():
    # Closed form i(1+i)^T/((1+i)^T - 1) at i = 7 %, T = 50 worked out to 6 decimals: 0.072460
    # (computed, project check values, engineering economics section) -> atol 5e-7.
    assert ec.capital_recovery_factor(0.07, 50) == pytest.approx(0.072460, abs=5e-7)
    # Newnan, Eschenbach & Lavelle, Engineering Economic Analysis, compound interest table 7 %,
    # (A/P, 7 %, 50) = 0.07246 printed to 5 decimals [from memory] -> atol 5e-6.
    assert ec.capital_recovery_factor(0.07, 50) == pytest.approx(0.07246, abs=5e-6)


# Newnan, Eschenbach & Lavelle, Engineering Economic Analysis, compound interest tables, (A/P, i, n) and
# (P/A, i, n), printed to 5 and 4 decimals [from memory] -> atol 5e-6 and 5e-5.
TABLE_AP = [(0.10, 10, 0.16275), (0.05, 20, 0.08024), (0.08, 30, 0.08883), (0.06, 10, 0.13587), (0.12, 5, 0.27741)]
TABLE_PA = [(0.10, 10, 6.1446), (0.05, 20, 12.4622), (0.08, 30, 11.2578)]


@pytest.mark.parametrize("rate, years, value", TABLE_AP)
def test_crf_against_compound_interest_tables(rate, years, value):
    assert ec.capital_recovery_factor(rate, years) == pytest.approx(value, abs=5e-6)


@pytest.mark.parametrize("rate, years, value", TABLE_PA)
def test_pwf_against_compound_interest_tables(rate, years, value):
    assert ec.present_worth_factor(rate, years) == pytest.approx(value, abs=5e-5)


@pytest.mark.parametrize("rate, years", [(0.07, 50), (0.025, 100), (0.10, 1), (0.0275, 30), (-0.02, 20), (0.5, 7)])
def test_crf_is_inverse_of_exact_sum_of_discount_factors(rate, years):
    # Definition of (A/P): the uniform end-of-year amount whose present worth is 1, i.e. 1 / sum (1+i)^-t;
    # the sum is evaluated in exact rational arithmetic, so the tolerance is double rounding (rtol 1e-13).
    exact = exact_pw_of_uniform_series(rate, years)
    assert ec.capital_recovery_factor(rate, years) == pytest.approx(float(1 / exact), rel=1e-13)
    assert ec.present_worth_factor(rate, years) == pytest.approx(float(exact), rel=1e-13)


def test_crf_is_vectorized_and_broadcasts():
    rates = np.array([[0.0], [0.03], [0.07]])
    years = np.array([10, 50])
    crf = ec.capital_recovery_factor(rates, years)
    assert crf.shape == (3, 2)
    for a, i in enumerate(rates[:, 0]):
        for b, t in enumerate(years):
            assert crf[a, b] == pytest.approx(float(1 / exact_pw_of_uniform_series(i, int(t))), rel=1e-13)


def test_crf_at_zero_rate_is_one_over_T_exactly_and_continuous():
    # Limit of the closed form as i -> 0 (common practice: straight-line recovery 1/T).
    for t in (1, 7, 50, 100):
        assert ec.capital_recovery_factor(0.0, t) == 1.0 / t
        assert ec.present_worth_factor(0.0, t) == t
    # Taylor expansion of i / (1 - (1+i)^-T) about i = 0: 1/T + i (T+1)/(2T) + O(i^2 T); at i = 1e-6,
    # T = 50 the omitted term is ~ 2e-10 relative, so rtol 1e-9 (a cancelling formula would fail here).
    i, t = 1e-6, 50
    assert ec.capital_recovery_factor(i, t) == pytest.approx(1 / t + i * (t + 1) / (2 * t), rel=1e-9)


def test_single_payment_present_worth():
    # (P/F, 7 %, 10) = 0.5083 in Newnan's 7 % table, 4 decimals [from memory] -> atol 5e-5.
    assert ec.single_payment_present_worth(0.07, 10) == pytest.approx(0.5083, abs=5e-5)
    # definition (1 + i)^-t, exact rational value
    t = np.arange(0, 6)
    exact = [float(1 / Fraction(107, 100) ** int(k)) for k in t]
    np.testing.assert_allclose(ec.single_payment_present_worth(0.07, t), exact, rtol=1e-14)


@pytest.mark.parametrize("rate, years", [(0.07, 0), (0.07, -5), (-1.0, 10), (-1.5, 10), (0.07, [10, 0])])
def test_invalid_rate_or_years_raise(rate, years):
    with pytest.raises(ValueError):
        ec.capital_recovery_factor(rate, years)
    with pytest.raises(ValueError):
        ec.present_worth_factor(rate, years)


# --------------------------------------------------------------------------
# Annualizing a time-varying EAD
# --------------------------------------------------------------------------
def gradient_factor(i, n):
    """(A/G, i, n) = 1/i - n/((1+i)^n - 1): arithmetic gradient uniform series (Newnan, ch. 4; common practice)."""
    return 1 / i - n / ((1 + i) ** n - 1)


def test_constant_ead_annualizes_to_itself():
    # A uniform series has equivalent annual value equal to itself (definition of (A/P) = 1/(P/A)).
    ead = np.array([1.0, 2.5e6, 123.456])
    by_year = np.repeat(ead[:, None], 50, axis=1)
    np.testing.assert_allclose(ec.annualize_time_varying(by_year, 0.07, 50), ead, rtol=1e-13)
    breakpoints = np.column_stack([ead, ead])
    np.testing.assert_allclose(ec.annualize_time_varying(breakpoints, 0.07, 50, years=[2030, 2080]), ead, rtol=1e-13)
    # one breakpoint: held constant over the whole period, at any rate including 0
    for rate in (0.0, 0.025, 0.12):
        np.testing.assert_allclose(ec.annualize_time_varying(ead[:, None], rate, 30, years=[2035]), ead, rtol=1e-13)


@pytest.mark.parametrize("rate, n", [(0.07, 50), (0.03, 30), (0.10, 10)])
def test_linear_growth_against_arithmetic_gradient(rate, n):
    # EAD growing by G a year from A1 in year 1 (base year) to A1 + (n-1) G in year n: equivalent annual
    # value A1 + G (A/G, i, n) (arithmetic gradient series, Newnan, Engineering Economic Analysis; common
    # practice). Realizations on axis 0 with their own A1 and G.
    a1 = np.array([1.0e6, 2.0e5, 0.0])
    g = np.array([2.0e4, -1.0e3, 5.0])
    values = np.column_stack([a1, a1 + (n - 1) * g])
    got = ec.annualize_time_varying(values, rate, n, years=[2030, 2030 + n - 1])
    np.testing.assert_allclose(got, a1 + g * gradient_factor(rate, n), rtol=1e-12, atol=1e-9)


def test_gradient_factor_table_value():
    # (A/G, 10 %, 10) = 3.7255 in Newnan's 10 % table, 4 decimals [from memory] -> atol 5e-5:
    # the series 0, 1, ..., 9 at the ends of years 1..10.
    assert ec.annualize_time_varying(np.arange(10.0), 0.10, 10) == pytest.approx(3.7255, abs=5e-5)


def test_growth_then_constant_against_two_gradient_series():
    # EAD A1 + G (t - 1) up to year 20 (calendar base + 19), constant after: a gradient series over all
    # 50 years minus a gradient series of 31 years that starts at year 19, i.e.
    # P = A1 (P/A,i,50) + G (P/G,i,50) - G (P/G,i,31) (P/F,i,19), with (P/G) = (A/G)(P/A) (Newnan; closed form).
    i, n, a1, g = 0.07, 50, 5.0e5, 1.0e4

    def pa(k):
        return ((1 + i) ** k - 1) / (i * (1 + i) ** k)

    pw = a1 * pa(n) + g * gradient_factor(i, n) * pa(n) - g * gradient_factor(i, 31) * pa(31) * (1 + i) ** -19
    expected = pw * i * (1 + i) ** n / ((1 + i) ** n - 1)
    got = ec.annualize_time_varying([a1, a1 + 19 * g], i, n, years=[2030, 2049])
    assert got == pytest.approx(expected, rel=1e-12)


def test_annual_values_interpolation_and_hold():
    # base year before the first breakpoint: held at the first value; linear between; held after the last
    series = ec.annual_values([[100.0, 200.0, 150.0]], 40, years=[2040, 2050, 2060], base_year=2030)
    assert series.shape == (1, 40)
    yr = 2030 + np.arange(40)
    np.testing.assert_allclose(series[0], np.interp(yr, [2040, 2050, 2060], [100.0, 200.0, 150.0]), rtol=1e-14)
    assert series[0, 0] == 100.0 and series[0, -1] == 150.0 and series[0, 15] == pytest.approx(150.0)


def test_annualization_is_linear_over_realizations():
    # the equivalent annual value of the ensemble-mean EAD equals the mean of per-realization values
    rng = np.random.default_rng(20240501)
    values = rng.lognormal(12, 1, size=(200, 3))
    each = ec.annualize_time_varying(values, 0.0275, 50, years=[2030, 2055, 2080])
    of_mean = ec.annualize_time_varying(values.mean(axis=0), 0.0275, 50, years=[2030, 2055, 2080])
    assert each.shape == (200,)
    assert of_mean == pytest.approx(each.mean(), rel=1e-12)
    # and every equivalent value lies between the smallest and largest annual value of its realization
    assert np.all(each >= values.min(axis=1) - 1e-6) and np.all(each <= values.max(axis=1) + 1e-6)


@pytest.mark.parametrize(
    "kwargs",
    [
        dict(values=np.ones((2, 49)), period_years=50),  # by-year length mismatch
        dict(values=[1.0, 2.0], period_years=50, years=[2050, 2030]),  # decreasing years
        dict(values=[1.0, 2.0, 3.0], period_years=50, years=[2030, 2050]),  # breakpoints mismatch
        dict(values=[1.0, 2.0], period_years=0, years=[2030, 2050]),  # bad period
        dict(values=[1.0, 2.0], period_years=50.5, years=[2030, 2050]),  # not whole years
        dict(values=np.ones(50), period_years=50, base_year=2030),  # base year without years
    ],
)
def test_annualize_rejects_bad_input(kwargs):
    with pytest.raises(ValueError):
        ec.annualize_time_varying(rate=0.07, **kwargs)


# --------------------------------------------------------------------------
# Interest during construction and annualized cost
# --------------------------------------------------------------------------
def test_idc_zero_months_is_zero():
    assert ec.interest_during_construction(1.0e6, 0.07, 0) == 0.0
    assert ec.investment_cost(1.0e6, 0.07, 0) == 1.0e6


def test_idc_uniform_against_geometric_sum():
    # Mid-month expenditures C/M compounded M - m + 1/2 months at g = (1+i)^(1/12) (the module's stated
    # convention; mid-month compounding is common practice): IDC = C/M [g^(1/2) (g^M - 1)/(g - 1) - M].
    c, i = 2.0e7, 0.07
    g = (1 + i) ** (1 / 12)
    for m in (1, 6, 24, 60):
        closed = c / m * (g**0.5 * (g**m - 1) / (g - 1) - m)
        assert ec.interest_during_construction(c, i, m) == pytest.approx(closed, rel=1e-10)
    # one month: half a month of interest
    assert ec.interest_during_construction(c, i, 1) == pytest.approx(c * ((1 + i) ** (1 / 24) - 1), rel=1e-12)


def test_idc_close_to_simple_interest_for_half_the_period():
    # Rule of thumb (common practice): uniform spending earns about simple interest on the whole cost
    # for half the construction period, C i M / 24; compounding adds O(i M / 12) relative -> rtol 2 % at
    # i = 3 %, M = 24.
    c, i, m = 1.0e6, 0.03, 24
    assert ec.interest_during_construction(c, i, m) == pytest.approx(c * i * m / 24, rel=0.02)


def test_idc_custom_pattern():
    # all spent in month 1 of 12: compounds 11.5 months; all in the last month: half a month
    c, i, m = 1.0e6, 0.05, 12
    first = np.zeros(m)
    first[0] = 1.0
    last = np.zeros(m)
    last[-1] = 1.0
    assert ec.interest_during_construction(c, i, m, first) == pytest.approx(c * ((1 + i) ** (11.5 / 12) - 1))
    assert ec.interest_during_construction(c, i, m, last) == pytest.approx(c * ((1 + i) ** (0.5 / 12) - 1))
    with pytest.raises(ValueError):
        ec.interest_during_construction(c, i, m, np.full(m, 0.1))  # sums to 1.2
    with pytest.raises(ValueError):
        ec.interest_during_construction(c, i, m, np.full(6, 1 / 6))  # wrong length
    with pytest.raises(ValueError):
        ec.interest_during_construction(c, i, 2.5)
    with pytest.raises(ValueError):
        ec.interest_during_construction(-1.0, i, 12)


def test_annualized_cost_against_closed_form():
    # (C + IDC) (A/P, i, T) + O&M, with (A/P) as 1 / exact sum of discount factors.
    first = np.array([1.0e7, 2.5e7])
    om = 1.5e5
    crf = float(1 / exact_pw_of_uniform_series(0.07, 50))
    got = ec.annualized_cost(first, om, 0.07, 50)
    np.testing.assert_allclose(got, first * crf + om, rtol=1e-13)
    g = 1.07 ** (1 / 12)
    idc = first / 36 * (g**0.5 * (g**36 - 1) / (g - 1) - 36)
    got = ec.annualized_cost(first, om, 0.07, 50, construction_months=36)
    np.testing.assert_allclose(got, (first + idc) * crf + om, rtol=1e-10)
    assert np.all(idc > 0)


# --------------------------------------------------------------------------
# Benefit-cost figures
# --------------------------------------------------------------------------
def test_benefit_figures_are_paired_per_realization():
    # Realizations share the hazard, so the benefit is the difference within each realization.
    without = np.array([100.0, 400.0, 250.0])
    with_ = np.array([40.0, 100.0, 200.0])
    res = ec.benefit_figures(without, with_, 120.0)
    np.testing.assert_array_equal(res.expected_annual_benefit, without - with_)
    np.testing.assert_array_equal(res.net_benefit, without - with_ - 120.0)
    np.testing.assert_allclose(res.benefit_cost_ratio, (without - with_) / 120.0)
    # pairing matters: the per-realization spread is not that of independently sorted arrays
    assert not np.allclose(res.expected_annual_benefit, np.sort(without) - np.sort(with_))
    assert res.all_without is None and res.cost_per_life_saved is None
    # per-realization costs broadcast
    res = ec.benefit_figures(without, with_, np.array([60.0, 150.0, 50.0]))
    np.testing.assert_allclose(res.benefit_cost_ratio, [1.0, 2.0, 1.0])


def test_cost_per_statistical_life_saved():
    # (annual cost - annual economic benefit) / (ALL_without - ALL_with), by hand
    res = ec.benefit_figures([1.0e6, 3.0e6], [4.0e5, 1.0e6], 2.0e6, all_without=[0.02, 0.02], all_with=[0.005, 0.01])
    np.testing.assert_allclose(res.life_loss_reduction, [0.015, 0.01])
    np.testing.assert_allclose(res.cost_per_life_saved, [(2.0e6 - 6.0e5) / 0.015, (2.0e6 - 2.0e6) / 0.01])
    # benefits larger than the cost: lives saved at negative net cost
    res = ec.benefit_figures(5.0e6, 1.0e6, 2.0e6, all_without=0.02, all_with=0.01)
    assert res.cost_per_life_saved == pytest.approx(-2.0e6 / 0.01)


def test_zero_or_negative_life_loss_reduction_rule():
    # documented rule: reduction <= 0 gives +inf where the net cost is positive, NaN otherwise; no warnings
    without = np.array([10.0, 10.0, 10.0, 10.0, np.nan])
    with_ = np.array([8.0, 8.0, -5.0, 8.0, 1.0])
    all_w = np.array([0.01, 0.01, 0.01, 0.01, 0.01])
    all_p = np.array([0.01, 0.02, 0.01, 0.0, 0.0])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        res = ec.benefit_figures(without, with_, 5.0, all_without=all_w, all_with=all_p)
    cps = res.cost_per_life_saved
    assert cps[0] == np.inf  # zero reduction, net cost 3 > 0
    assert cps[1] == np.inf  # negative reduction, net cost 3 > 0
    assert np.isnan(cps[2])  # zero reduction, benefits 15 exceed cost 5
    assert cps[3] == pytest.approx((5.0 - 2.0) / 0.01)
    assert np.isnan(cps[4])  # NaN input stays NaN


def test_benefit_figures_reject_bad_input():
    with pytest.raises(ValueError):
        ec.benefit_figures(10.0, 5.0, 0.0)
    with pytest.raises(ValueError):
        ec.benefit_figures(10.0, 5.0, -1.0)
    with pytest.raises(ValueError):
        ec.benefit_figures(10.0, 5.0, 1.0, all_without=0.01)
    with pytest.raises(ValueError):
        ec.benefit_figures(np.ones(3), np.ones(4), 1.0)


def test_economic_result_is_frozen():
    import dataclasses

    res = ec.benefit_figures(10.0, 5.0, 1.0)
    with pytest.raises(dataclasses.FrozenInstanceError):
        res.net_benefit = 0.0


# --------------------------------------------------------------------------
# Risk to life is not discounted
# --------------------------------------------------------------------------
def test_undiscounted_mean_by_hand():
    # base 2030 value 1e-3, future 2040 value 2e-3, period 20 years from 2030: years 2030..2040 rise by 1e-4 a
    # year (11 values, sum 11e-3 + 55e-4), 2041..2049 hold 2e-3 (9 values): mean = (0.011 + 0.0055 + 0.018) / 20
    got = ec.undiscounted_mean(np.array([1e-3, 2e-3]), 20, years=[2030, 2040], base_year=2030)
    assert got == pytest.approx(0.0345 / 20, rel=1e-13)
    # a constant series is its own mean; the mean is the annualized value at a rate of 0
    assert ec.undiscounted_mean(np.array([[3.0, 3.0]]), 20, years=[2030, 2040])[0] == pytest.approx(3.0, rel=1e-15)
    v = np.array([[1.0, 4.0], [2.0, 0.5]])
    np.testing.assert_allclose(
        ec.undiscounted_mean(v, 30, years=[2030, 2045]),
        ec.annualize_time_varying(v, 0.0, 30, years=[2030, 2045]),
        rtol=1e-13,
    )
    # while a positive rate weights the early years more (growing series: below the plain mean)
    assert ec.annualize_time_varying(np.array([1e-3, 2e-3]), 0.07, 20, years=[2030, 2040]) < got


def test_net_cost_per_life_saved_rule():
    # (cost - benefit) / reduction; no reduction: +inf with a positive net cost, NaN otherwise (as benefit_figures)
    out = ec.net_cost_per_life_saved([100.0, 100.0, 100.0, 50.0], [40.0, 40.0, 40.0, 80.0], [0.5, 0.0, -1.0, 0.0])
    assert out[0] == pytest.approx(120.0) and math.isinf(out[1]) and math.isinf(out[2]) and math.isnan(out[3])
    r = ec.benefit_figures(10.0, 6.0, 10.0, 0.3, 0.1)
    assert float(r.cost_per_life_saved) == pytest.approx(float(ec.net_cost_per_life_saved(10.0, 4.0, 0.2)))
