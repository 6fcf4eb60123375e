"""Property tests of the risk engine (hypothesis, small example counts).

Each property is an identity or a bound of the method (docs/reliability.md), checked on random
ensembles and response models built in code and run through :func:`riskcalc.risk.propagate.propagate`,
or on small scenarios through :func:`riskcalc.assess.assess`:

* AFP in [0, 1] and EAD, ALL >= 0 (probabilities; non-negative consequences);
* AFP does not decrease when a fragility curve moves to lower stages (a CDF in stage minus a shift);
* order of the realizations, a common scale of the weights and duplicating every realization
  change nothing (the estimator is Σ_r w_r R_r with normalized weights);
* the predictive result equals the weighted mean of the per-realization results (linearity of the
  risk integral in the masses; design notes, "Linearity identity");
* converting every table and the ensemble between metres / feet and m3/s / cfs changes nothing.

Tolerances: identities that only reorder floating-point sums are held to 1e-12 relative (a sum of
a few thousand terms rounds at about 1e-13); the unit conversion passes through log10, PCHIP and
a bisection, held to 1e-9 relative.
"""

from __future__ import annotations

import tempfile
import textwrap
from pathlib import Path

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from riskcalc.risk.assess import assess
from riskcalc.response.consequences import ConsequenceCurves
from riskcalc.hazard.curves import quantity_grid
from riskcalc.hazard.ensemble import HazardEnsemble, normalize_weights
from riskcalc.response.chain import ResponseChain
from riskcalc.risk.propagate import propagate
from riskcalc.response import FailureMode, FragilityCurve, RatingCurve, StageSpread
from riskcalc.config.scenario import load_scenario

SETTINGS = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
AFP, EAD, ALL = 0, 2, 4  # columns of riskcalc.response.chain.OUTPUTS

# 1 ft = 0.3048 m exactly (international foot, 1959; NIST SP 811, appendix B)
FT_PER_M = 1 / 0.3048
CFS_PER_M3S = FT_PER_M**3


@st.composite
def cases(draw):
    """A random LP3 ensemble (1 to 12 realizations, random weights) and a response model."""
    r = draw(st.integers(1, 12))
    mean = np.array(draw(st.lists(st.floats(2.0, 3.0), min_size=r, max_size=r)))
    sd = np.array(draw(st.lists(st.floats(0.05, 0.4), min_size=r, max_size=r)))
    skew = np.array(draw(st.lists(st.floats(-1.0, 1.0), min_size=r, max_size=r)))
    w = np.array(draw(st.lists(st.floats(0.1, 10.0), min_size=r, max_size=r)))
    median = draw(st.floats(2.0, 9.0))
    spread = draw(st.floats(0.05, 2.0))
    natural = draw(st.sampled_from([0.0, 0.3]))
    dmg = np.sort(np.array(draw(st.lists(st.floats(0.0, 1e7), min_size=4, max_size=4))))
    life = np.sort(np.array(draw(st.lists(st.floats(0.0, 100.0), min_size=4, max_size=4))))
    ens = HazardEnsemble(
        family="lp3",
        weights=normalize_weights(w),
        params={"mean": mean, "sd": sd, "skew": skew},
        quantity="discharge",
        unit="m3s",
    )
    return ens, dict(median=median, spread=spread, natural=natural, dmg=dmg, life=life)


RATING = RatingCurve(np.array([10.0, 100.0, 1000.0, 10000.0, 1e5]), np.array([1.0, 2.0, 4.0, 7.0, 11.0]))


def model_of(p, median=None):
    frag = FragilityCurve("normal", median=p["median"] if median is None else median, spread=p["spread"])
    stage = np.array([2.0, 4.0, 6.0, 9.0])
    cons = ConsequenceCurves(stage, p["dmg"], 0.1 * p["dmg"], p["life"], np.zeros(4))
    return ResponseChain(
        failure_modes=(FailureMode("breach", (frag,)),),
        consequences=cons,
        rating=RATING,
        natural=StageSpread(p["natural"]) if p["natural"] > 0 else None,
        hermite_nodes=12,
    )


def grid_of(ens, n=300):
    return quantity_grid(ens, 0.999, 1e-7, n)


def run(ens, model, grid):
    return propagate(ens, model, grid, seed=1, workers=1)


def predictive(prop):
    return prop.weights @ prop.values


def close(a, b, rel=1e-12, abs_=1e-300):
    np.testing.assert_allclose(a, b, rtol=rel, atol=abs_)


@SETTINGS
@given(cases())
def test_afp_is_a_probability_and_losses_are_not_negative(case):
    ens, p = case
    prop = run(ens, model_of(p), grid_of(ens))
    v = prop.values
    assert np.all(np.isfinite(v))
    # [0, 1] up to rounding: the masses telescope to p(x_0) <= 1, summed in floating point
    assert np.all((v[:, AFP] >= 0) & (v[:, AFP] <= 1 + 1e-12))
    assert np.all(v[:, EAD] >= 0) and np.all(v[:, ALL] >= 0)
    assert 0 <= predictive(prop)[AFP] <= 1 + 1e-12
    # the lower unimodal bound never exceeds the system value (Ang & Tang 1984, section 6.2)
    assert np.all(v[:, 1] <= v[:, AFP] * (1 + 1e-12))


@SETTINGS
@given(cases(), st.floats(0.01, 3.0))
def test_afp_does_not_decrease_when_the_fragility_moves_down(case, drop):
    ens, p = case
    grid = grid_of(ens)
    before = run(ens, model_of(p), grid).values[:, AFP]
    after = run(ens, model_of(p, median=p["median"] - drop), grid).values[:, AFP]
    assert np.all(after >= before * (1 - 1e-12))


@SETTINGS
@given(cases(), st.randoms(use_true_random=False), st.floats(1e-3, 1e3))
def test_order_and_weight_scale_do_not_matter(case, rnd, scale):
    ens, p = case
    model = model_of(p)
    grid = grid_of(ens)
    base = run(ens, model, grid)
    perm = np.array(rnd.sample(range(ens.size), ens.size))
    shuffled = ens.subset(perm)
    # the grid is built again from the permuted ensemble: it must come out the same
    g2 = grid_of(shuffled)
    np.testing.assert_array_equal(g2, grid)
    prop = run(shuffled, model, g2)
    close(prop.values, base.values[perm])
    close(predictive(prop), predictive(base))
    # a common scale of the raw weights is removed by normalization
    raw = ens.weights * scale
    scaled = HazardEnsemble(family="lp3", weights=normalize_weights(raw), params=ens.params, quantity="discharge")
    close(predictive(run(scaled, model, grid)), predictive(base))


@SETTINGS
@given(cases())
def test_duplicating_every_realization_changes_nothing(case):
    ens, p = case
    model = model_of(p)
    grid = grid_of(ens)
    base = run(ens, model, grid)
    idx = np.repeat(np.arange(ens.size), 2)
    dup = HazardEnsemble(
        family="lp3",
        weights=normalize_weights(np.repeat(ens.weights, 2)),
        params={k: v[idx] for k, v in ens.params.items()},
        quantity="discharge",
    )
    np.testing.assert_array_equal(grid_of(dup), grid)
    prop = run(dup, model, grid)
    close(predictive(prop), predictive(base))
    close(prop.masses_predictive, base.masses_predictive, abs_=1e-18)
    close(prop.values, base.values[idx])


@SETTINGS
@given(cases())
def test_predictive_equals_weighted_mean_of_realizations(case):
    # deterministic (natural = 0) and aleatory (natural > 0, Gauss-Hermite) response alike
    ens, p = case
    prop = run(ens, model_of(p), grid_of(ens))
    on_predictive_curve = prop.masses_predictive @ prop.integrands
    close(predictive(prop), on_predictive_curve, rel=1e-10, abs_=1e-15)


# ----------------------------------------------------------------------
# unit conversion, through scenario files and assess
# ----------------------------------------------------------------------
def write_units_scenario(folder: Path, metric: bool, ens_rows, median, spread, natural, knowledge):
    """The same invented scenario in metres and m3/s (metric) or in feet and cfs."""
    fq = 1.0 if metric else CFS_PER_M3S
    fh = 1.0 if metric else FT_PER_M
    qu, hu = ("m3s", "m") if metric else ("cfs", "ft")
    folder.mkdir(parents=True)
    f = lambda v: repr(float(v))  # noqa: E731 - shortest round-trip text of a float
    # LP3 of log10 Q: multiplying Q by fq adds log10(fq) to the mean, sd and skew unchanged
    (folder / "ensemble.csv").write_text(
        "mean,sd,skew\n" + "".join(f"{f(m + np.log10(fq))},{f(s)},{f(g)}\n" for m, s, g in ens_rows)
    )
    rating = [(10, 1.0), (100, 2.0), (1000, 4.0), (10000, 7.0), (100000, 11.0)]
    (folder / "rating.csv").write_text(
        f"discharge_{qu},stage_{hu}\n" + "".join(f"{f(q * fq)},{f(h * fh)}\n" for q, h in rating)
    )
    cons = [(2.0, 0, 0, 0), (4.0, 1e6, 0, 1), (6.0, 5e6, 1e6, 10), (9.0, 2e7, 5e6, 50)]
    (folder / "consequences.csv").write_text(
        f"stage_{hu},damage_breach_usd,damage_no_breach_usd,life_loss_breach\n"
        + "".join(f"{f(h * fh)},{a},{b},{c}\n" for h, a, b, c in cons)
    )
    text = f"""
    title = "units check (invented)"
    seed = 7
    [units]
    discharge = "{qu}"
    stage = "{hu}"
    [hazard]
    family = "lp3"
    ensemble = "ensemble.csv"
    [grid]
    points = 400
    [rating]
    table = "rating.csv"
    natural_sd = {f(natural * fh)}
    knowledge_sd = {f(knowledge * fh)}
    [uncertainty]
    draws_per_realization = 2
    [[failure_modes]]
    name = "breach"
      [[failure_modes.nodes]]
      kind = "normal"
      median = {f(median * fh)}
      spread = {f(spread * fh)}
    [consequences]
    table = "consequences.csv"
    """
    (folder / "scenario.toml").write_text(textwrap.dedent(text))
    return folder / "scenario.toml"


@settings(max_examples=6, deadline=None)
@given(
    st.lists(st.tuples(st.floats(2.2, 2.8), st.floats(0.1, 0.35), st.floats(-0.8, 0.8)), min_size=2, max_size=8),
    st.floats(3.0, 8.0),
    st.floats(0.1, 1.5),
    st.sampled_from([0.0, 0.25]),
    st.sampled_from([0.0, 0.2]),
)
def test_unit_conversion_changes_only_labels(rows, median, spread, natural, knowledge):
    with tempfile.TemporaryDirectory() as d:
        res = {}
        for metric in (True, False):
            path = write_units_scenario(Path(d) / str(metric), metric, rows, median, spread, natural, knowledge)
            res[metric] = assess(load_scenario(path), workers=1)
        a, b = res[True], res[False]
        np.testing.assert_allclose(b.grid, a.grid * CFS_PER_M3S, rtol=1e-9)
        for key in ("annual_failure_probability", "expected_annual_damage", "annualized_life_loss"):
            for curve in ("predictive", "mode", "median_curve"):
                np.testing.assert_allclose(b.headline[key][curve], a.headline[key][curve], rtol=1e-9, atol=1e-300)
            np.testing.assert_allclose(
                b.headline[key]["mc_standard_error"], a.headline[key]["mc_standard_error"], rtol=1e-9, atol=1e-300
            )
        assert a.scenario.units["stage"] == "m" and b.scenario.units["stage"] == "ft"
