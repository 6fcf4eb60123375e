"""Alternatives on the shared hazard: pairing identities, annualization, validation, the bundled scenario, the CLI."""

import json
import re
import textwrap
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import riskcalc.cli.compare  # noqa: F401  (registers the command on the app)
from riskcalc.config.decision import BASE_NAME
from riskcalc.decision import alternatives as al
from riskcalc.outputs.comparison import memo_section
from riskcalc.decision import economics as ec
from riskcalc.cli import main
from riskcalc.errors import InputError
from riskcalc.risk.propagate import chunk_rows_for, propagate
from riskcalc.config.scenario import load_scenario

ROOT = Path(__file__).resolve().parents[1]
BUNDLED = ROOT / "scenarios" / "amberlow_alternatives" / "scenario.toml"

# the conftest consequence table with every damage doubled (life loss unchanged)
CONSEQ_X2 = (
    "stage_m,damage_breach_usd,damage_no_breach_usd,life_loss_breach\n"
    "2.0,0,0,0\n4.0,2.0e6,0,1\n6.0,1.0e7,2.0e6,10\n9.0,4.0e7,1.0e7,50\n"
)

KNOWLEDGE = """
damage_multiplier = { distribution = "triangular", low = 0.7, mode = 1.0, high = 1.4 }
life_loss_multiplier = { distribution = "lognormal", median = 1.0, beta = 0.3 }
[rating]
table = "rating.csv"
knowledge_sd = 0.2
[uncertainty]
draws_per_realization = 3
"""

MODES_SHIFT = """
[[failure_modes]]
name = "breach"
shift_sd = 0.2
  [[failure_modes.nodes]]
  name = "breach given stage"
  kind = "normal"
  median = 5.0
  spread = 0.5
"""


def _scenario(factory, extra, *, knowledge=True, folder="sc", load=True):
    path = factory(folder=folder, modes=MODES_SHIFT, toml_extra=(KNOWLEDGE if knowledge else "") + extra)
    # the conftest writes [rating] itself; drop its first copy so that ours (with knowledge_sd) stands
    text = path.read_text()
    if knowledge:
        text = text.replace('[rating]\ntable = "rating.csv"\n', "", 1)
    path.write_text(text)
    (path.parent / "consequences_x2.csv").write_text(CONSEQ_X2)
    return load_scenario(path) if load else path


ECON = """
[economics]
rate = 0.05
period_years = 30
"""


def _alt(name, body="", cost=1.0e6):
    return textwrap.dedent(f"""
    [[alternatives]]
    name = "{name}"
    first_cost = {cost}
    annual_om = 1.0e4
    construction_months = 12
    """) + textwrap.dedent(body)


# --------------------------------------------------------------------------
# Pairing identities
# --------------------------------------------------------------------------
def test_alternative_identical_to_base_has_exactly_zero_benefit(scenario_factory):
    # Identity: the same model, the same realizations and the same random draws give the same risk
    # bit for bit, so the paired benefit is exactly 0 in every draw (no tolerance).
    sc = _scenario(
        scenario_factory,
        ECON
        + _alt("same")
        + _alt(
            "same table",
            """
    [alternatives.consequences]
    table = "consequences.csv"
    """,
        ),
    )
    c = al.compare(sc)
    assert c.draws_per_realization == 3 and c.weights.size == 3 * sc.ensemble.size
    for name in ("same", "same table"):
        res = c.economics[name]
        assert np.all(res.expected_annual_benefit == 0.0)
        assert np.all(res.life_loss_reduction == 0.0)
        f = c.figures[name]
        assert f["expected_annual_benefit_per_yr"]["predictive"] == 0.0
        assert f["benefit_cost_ratio"]["predictive"] == 0.0
        assert f["net_benefit_per_yr"]["predictive"] == -f["costs"]["annualized_cost_per_yr"]
        assert f["response_draws_paired"]


def test_paired_differences_equal_difference_of_separate_runs_with_the_same_seed(scenario_factory):
    # Definition of pairing: each plan run alone through propagate with the scenario's seed and the
    # same chunk boundaries gives per-draw risks whose difference is the comparison's benefit, exactly.
    sc = _scenario(
        scenario_factory,
        ECON
        + _alt(
            "doubled damage",
            """
    [alternatives.consequences]
    table = "consequences_x2.csv"
    """,
        ),
    )
    c = al.compare(sc)
    grid = c.grids[None]
    base_m, alt_m = al.plan_model(sc), al.plan_model(sc, [c.alternatives[0].override])
    rows = min(chunk_rows_for(m, grid.size) for m in (base_m, alt_m))
    runs = [
        propagate(
            sc.ensemble,
            m,
            grid,
            seed=sc.seed,
            draws_per_realization=3,
            rule=sc.grid["rule"],
            log_spacing=sc.ensemble.log_scale,
            workers=1,
            chunk_rows=rows,
        )
        for m in (base_m, alt_m)
    ]
    b = runs[0].column("ead") - runs[1].column("ead")
    assert np.array_equal(c.economics["doubled damage"].expected_annual_benefit, b)
    # Common random numbers: doubling every damage doubles every draw's EAD (the damage multiplier and
    # rating offset draws are the same), so the benefit is -EAD_without draw by draw; independent
    # draws would break this. Multiplication by 2 is exact; sums of doubled terms differ by rounding only.
    ead0 = c.equivalent[BASE_NAME]["ead"]
    np.testing.assert_allclose(c.economics["doubled damage"].expected_annual_benefit, -ead0, rtol=1e-12, atol=0)
    assert np.all(c.economics["doubled damage"].life_loss_reduction == 0.0)
    assert c.figures["doubled damage"]["response_draws_paired"]


def test_a_changed_uncertainty_structure_is_flagged_unpaired(scenario_factory):
    # Adding a sampled parameter (a spread range) shifts the random stream: hazard still paired, response not.
    sc = _scenario(
        scenario_factory,
        ECON
        + _alt(
            "uncertain spread",
            """
    [[alternatives.failure_modes]]
    name = "breach"
    shift_sd = 0.2
    spread_range = [0.8, 1.2]
      [[alternatives.failure_modes.nodes]]
      name = "breach given stage"
      kind = "normal"
      median = 5.0
      spread = 0.5
    """,
        ),
    )
    c = al.compare(sc)
    assert not c.figures["uncertain spread"]["response_draws_paired"]
    assert any("not paired" in n for n in c.notes)
    assert np.array_equal(c.realization, np.repeat(np.arange(sc.ensemble.size), 3))


# --------------------------------------------------------------------------
# Time: annualization over the period of analysis
# --------------------------------------------------------------------------
def test_constant_future_condition_annualizes_to_the_base_year_value(scenario_factory):
    # A future year identical to the base year is a constant EAD; its equivalent annual value is itself
    # (weights (1+i)^-t / (P/A) sum to 1) to rounding: rtol 1e-12.
    sc = _scenario(
        scenario_factory,
        """
    [economics]
    rate = 0.05
    period_years = 30
    base_year = 2030
      [economics.future]
      year = 2050
    """
        + _alt("same"),
        knowledge=False,
    )
    c = al.compare(sc)
    for n in ("ead", "all", "afp"):
        np.testing.assert_allclose(c.equivalent[BASE_NAME][n], c.risks[BASE_NAME][0].values[n], rtol=1e-12)
    assert np.all(c.economics["same"].expected_annual_benefit == 0.0)


def test_linear_damage_growth_against_the_arithmetic_gradient_factor(scenario_factory):
    # Growth factor f reached in the last year of the period (T years): EAD_t = E (1 + (f-1)(t-1)/(T-1)),
    # whose equivalent annual value is E [1 + (f-1)/(T-1) (A/G, i, T)] with (A/G) = 1/i - T/((1+i)^T - 1)
    # (Newnan, Eschenbach & Lavelle, Engineering Economic Analysis, arithmetic gradient). rtol 1e-12.
    i, T, f = 0.05, 30, 1.6
    sc = _scenario(
        scenario_factory,
        f"""
    [economics]
    rate = {i}
    period_years = {T}
    base_year = 2030
      [economics.future]
      year = {2030 + T - 1}
      damage_factor = {f}
    """
        + _alt("same"),
        knowledge=False,
    )
    c = al.compare(sc)
    e = c.risks[BASE_NAME][0].values["ead"]
    np.testing.assert_allclose(c.risks[BASE_NAME][1].values["ead"], f * e, rtol=1e-12)
    ag = 1 / i - T / ((1 + i) ** T - 1)
    np.testing.assert_allclose(c.equivalent[BASE_NAME]["ead"], e * (1 + (f - 1) / (T - 1) * ag), rtol=1e-12)
    # life loss has no growth here: constant, so it annualizes to itself
    np.testing.assert_allclose(c.equivalent[BASE_NAME]["all"], c.risks[BASE_NAME][0].values["all"], rtol=1e-12)


def test_annualized_cost_and_headline_bcr(scenario_factory):
    # Headline BCR is mean benefit / annualized cost, not the mean of per-draw ratios (definition);
    # the annualized cost is (first cost + IDC) * CRF + O&M (economics module, tested against tables).
    sc = _scenario(
        scenario_factory,
        ECON
        + _alt(
            "doubled damage",
            """
    [alternatives.consequences]
    table = "consequences_x2.csv"
    """,
        ),
    )
    c = al.compare(sc)
    f = c.figures["doubled damage"]
    cost = (1e6 + ec.interest_during_construction(1e6, 0.05, 12)) * ec.capital_recovery_factor(0.05, 30) + 1e4
    assert f["costs"]["annualized_cost_per_yr"] == pytest.approx(cost, rel=1e-12)
    assert f["benefit_cost_ratio"]["predictive"] == pytest.approx(
        f["expected_annual_benefit_per_yr"]["predictive"] / cost, rel=1e-12
    )


# --------------------------------------------------------------------------
# Validation: InputError naming the key
# --------------------------------------------------------------------------
@pytest.mark.parametrize(
    "extra, key",
    [
        (_alt("a") + '[[alternatives]]\nname = "b"\n', "alternatives[2].first_cost"),
        (_alt("a", cost=-5), "alternatives[1].first_cost"),
        (_alt("a") + _alt("a"), "alternatives[2].name"),
        (_alt("a", 'colour = "red"\n'), "alternatives[1].colour"),
        (_alt("a", '[alternatives.hazard]\nensemble = "x.csv"\n'), "alternatives[1].hazard"),
        (_alt("a", 'annual_om = "lots"\n').replace("annual_om = 1.0e4\n", ""), "alternatives[1].annual_om"),
        (_alt("a", '[alternatives.consequences]\ntable = "missing.csv"\n'), None),
        (
            _alt(
                "a",
                '[[alternatives.failure_modes]]\nname = "m"\n  [[alternatives.failure_modes.nodes]]\n'
                '  kind = "weibull"\n',
            ),
            "alternatives[1].failure_modes[1].nodes[1].kind",
        ),
        (
            _alt("a", "[alternatives.uncertainty]\ndraws_per_realization = 7\n"),
            "alternatives[1].uncertainty.draws_per_realization",
        ),
    ],
)
def test_bad_alternative_keys_name_the_key(scenario_factory, extra, key):
    path = _scenario(scenario_factory, ECON + extra, load=False)
    with pytest.raises(InputError) as info:
        load_scenario(path)  # refused when loaded, before any computation
    msg = str(info.value)
    assert "scenario.toml" in msg or "missing.csv" in msg
    if key is not None:
        assert f"key '{key}'" in msg
    else:
        assert "missing.csv" in msg and "alternatives[1]" in msg


@pytest.mark.parametrize(
    "econ, key",
    [
        ("", "economics.rate"),
        ("[economics]\nrate = 1.5\n", "economics.rate"),
        ("[economics]\nrate = 0.03\nperiod_years = 0\n", "economics.period_years"),
        ("[economics]\nrate = 0.03\ninterest = 2\n", "economics.interest"),
        ("[economics]\nrate = 0.03\n[economics.future]\nyear = 2050\n", "economics.base_year"),
        ("[economics]\nrate = 0.03\nbase_year = 2030\n[economics.future]\nyear = 2030\n", "economics.future.year"),
        (
            "[economics]\nrate = 0.03\nbase_year = 2030\n[economics.future]\nyear = 2040\ndamage_factor = 0\n",
            "economics.future.damage_factor",
        ),
        (
            "[economics]\nrate = 0.03\nbase_year = 2030\n[economics.future]\nyear = 2040\n"
            'hazard = { ensemble = "short.csv" }\n',
            "economics.future.hazard.ensemble",
        ),
    ],
)
def test_bad_economics_keys_name_the_key(scenario_factory, econ, key):
    path = _scenario(scenario_factory, econ + _alt("a"), knowledge=False, load=False)
    (path.parent / "short.csv").write_text("mean,sd,skew\n2.5,0.25,0.0\n2.6,0.25,0.0\n")
    with pytest.raises(InputError) as info:
        load_scenario(path)  # refused when loaded, before any computation
    assert f"key '{key}'" in str(info.value)


def test_no_alternatives_is_an_input_error(scenario_factory):
    sc = _scenario(scenario_factory, ECON, knowledge=False)
    with pytest.raises(InputError, match="key 'alternatives'"):
        al.compare(sc)


# --------------------------------------------------------------------------
# The bundled scenario through the CLI
# --------------------------------------------------------------------------
def _run(argv, capsys):
    with pytest.raises(SystemExit) as info:
        main(argv)
    out = capsys.readouterr()
    return info.value.code, out.out, out.err


@pytest.fixture(scope="module")
def bundled(tmp_path_factory):
    out = tmp_path_factory.mktemp("cmp") / "alternatives"
    with pytest.raises(SystemExit) as info:
        main(["compare", str(BUNDLED), "--out", str(out)])
    assert info.value.code == 0
    return out


def test_compare_writes_every_output(bundled):
    for rel in (
        "comparison.json",
        "comparison.md",
        "tables/alternatives.csv",
        "tables/paired_differences.csv",
        "figures/benefit_distributions.png",
        "figures/benefit_distributions.svg",
    ):
        assert (bundled / rel).stat().st_size > 0, rel
    assert (bundled / "figures" / "benefit_distributions.png").stat().st_size > 10_000
    text = (bundled / "comparison.md").read_text()
    assert "| alternative |" in text and "licensed engineers" in text


def test_bundled_ranking_and_mean_versus_mode(bundled):
    d = json.loads((bundled / "comparison.json").read_text())
    tab = pd.read_csv(bundled / "tables" / "alternatives.csv")
    assert len(tab) == 3 and "benefit_usd_per_yr" in tab.columns and "annualized_cost_usd_per_yr" in tab.columns
    # ranking: descending net benefit, on the predictive and on the mode curve (definition)
    by_pred = list(tab.sort_values("net_benefit_usd_per_yr", ascending=False)["alternative"])
    by_mode = list(tab.sort_values("net_benefit_mode_usd_per_yr", ascending=False)["alternative"])
    assert d["ranking"]["predictive"] == by_pred and d["ranking"]["mode"] == by_mode
    assert d["ranking"]["changes_between_predictive_and_mode"] == (by_pred != by_mode)
    # a posterior ensemble's predictive curve is heavier in the tail than its mode curve, so the mode
    # understates the risk without project and every benefit here (common practice; design notes)
    assert (
        d["without_project"]["expected_annual_damage_per_yr"]["predictive"]
        > d["without_project"]["expected_annual_damage_per_yr"]["mode"]
    )
    for name, f in d["alternatives"].items():
        b = f["expected_annual_benefit_per_yr"]
        assert b["ratio_predictive_to_mode"] == pytest.approx(b["predictive"] / b["mode"], rel=1e-12)
        assert b["ratio_predictive_to_mode"] > 1, name
        assert f["benefit_cost_ratio"]["predictive"] == pytest.approx(
            b["predictive"] / f["costs"]["annualized_cost_per_yr"], rel=1e-12
        )
        assert f["response_draws_paired"], name  # the bundled alternatives keep the base's sampled parameters
    # the non-structural plan leaves the failure probability alone and reduces life loss (its design)
    ns = d["alternatives"]["warning and floodproofing"]
    assert ns["afp_reduction_per_yr"]["predictive"] == 0.0
    assert ns["all_reduction_lives_per_yr"]["predictive"] > 0


def test_paired_table_means_match_the_headline(bundled):
    # The weighted mean of the paired per-draw benefits is the predictive benefit (linearity); the CSV is
    # written with 10 significant digits -> rtol 1e-8.
    d = json.loads((bundled / "comparison.json").read_text())
    p = pd.read_csv(bundled / "tables" / "paired_differences.csv")
    for name, g in p.groupby("alternative"):
        mean = float((g["weight"] * g["benefit_usd_per_yr"]).sum())
        assert mean == pytest.approx(d["alternatives"][name]["expected_annual_benefit_per_yr"]["predictive"], rel=1e-8)
        assert g["weight"].sum() == pytest.approx(1.0, rel=1e-8)


def test_compare_bad_input_exits_2_and_writes_nothing(scenario_factory, tmp_path, capsys):
    path = _scenario(scenario_factory, ECON + _alt("a", cost=-1), knowledge=False, load=False)
    out = tmp_path / "never"
    code, _, err = _run(["compare", str(path), "--out", str(out)], capsys)
    assert code == 2 and "alternatives[1].first_cost" in err and "Traceback" not in err
    assert not out.exists()
    assert not list(tmp_path.glob(".never*"))


def test_compare_end_to_end_small_scenario(scenario_factory, tmp_path, capsys):
    sc = _scenario(
        scenario_factory,
        ECON
        + _alt(
            "doubled damage",
            """
    [alternatives.consequences]
    table = "consequences_x2.csv"
    """,
        ),
        knowledge=False,
    )
    out = tmp_path / "cmp"
    code, stdout, err = _run(["compare", str(sc.path), "--out", str(out)], capsys)
    assert code == 0, err
    assert "doubled damage" in stdout and "licensed engineers" in stdout
    code, _, err = _run(["compare", str(sc.path), "--out", str(out)], capsys)
    assert code == 2 and "--overwrite" in err


def test_memo_section_is_escaped(scenario_factory):
    sc = _scenario(
        scenario_factory,
        ECON
        + _alt(
            "<b>dam & dike</b>",
            """
    [alternatives.consequences]
    table = "consequences_x2.csv"
    """,
        ),
        knowledge=False,
    )
    c = al.compare(sc)
    sec = memo_section(c)
    assert set(sec) == {"title", "markdown", "html", "figures"}
    assert "&lt;b&gt;dam &amp; dike&lt;/b&gt;" in sec["html"] and "<b>dam" not in sec["html"]
    assert sec["figures"] == ["benefit_distributions"]
    assert "licensed engineers" in sec["markdown"]


# --------------------------------------------------------------------------
# Risk to life per condition year: never discounted; reference lines per condition year
# --------------------------------------------------------------------------
HIGHER = """
[[alternatives.failure_modes]]
name = "breach"
shift_sd = 0.2
  [[alternatives.failure_modes.nodes]]
  name = "breach given stage"
  kind = "normal"
  median = 6.0
  spread = 0.5
"""

LINES = """
[guidelines]
name = "test lines"
source = "test source"
[[guidelines.probability_lines]]
name = "AFP 1e-3"
source = "test source"
value = 1e-3
[[guidelines.life_loss_lines]]
name = "ALL 1e-3"
source = "test source"
value = 1e-3
[[guidelines.fn_lines]]
name = "F-N 1e-3"
source = "test source"
anchor_n = 1
anchor_f = 1e-3
n_max = 1000
[[guidelines.probability_lines]]
name = "IR 1e-4"
source = "test source"
value = 1e-4
measure = "individual_risk"
"""


def _future(rate, life_loss_factor=2.0):
    return f"""
    [economics]
    rate = {rate}
    period_years = 20
    base_year = 2030
      [economics.future]
      year = 2040
      life_loss_factor = {life_loss_factor}
    """


def test_condition_year_risk_is_the_plain_per_year_value_and_ignores_the_discount_rate(scenario_factory):
    # The future year only doubles life loss (life_loss_factor = 2): by hand, its ALL is twice the base year's
    # and its AFP the same. Risk per condition year is the weighted mean of that year's draws, whatever the rate;
    # only the money (and the old discount-weighted keys) change with the rate.
    runs = {}
    for rate in (0.02, 0.10):
        sc = _scenario(scenario_factory, _future(rate) + _alt("higher", HIGHER), knowledge=False, folder=f"r{rate}")
        runs[rate] = al.compare(sc)
    c = runs[0.02]
    w = c.weights
    for plan_years, plan in ((c.figures["higher"]["condition_years"], "higher"),):
        for k, y in enumerate(plan_years):
            v = c.risks[plan][k].values
            assert y["year"] == (2030, 2040)[k] and y["condition"] == ("base year", "future year")[k]
            assert y["afp_per_yr"]["predictive"] == pytest.approx(float(w @ v["afp"]), rel=1e-14)
            assert y["all_lives_per_yr"]["predictive"] == pytest.approx(float(w @ v["all"]), rel=1e-14)
            b = c.risks[BASE_NAME][k].values
            assert y["all_reduction_lives_per_yr"]["predictive"] == pytest.approx(
                float(w @ (b["all"] - v["all"])), rel=1e-12
            )
    y0, y1 = c.figures["higher"]["condition_years"]
    assert y1["all_lives_per_yr"]["predictive"] == pytest.approx(2 * y0["all_lives_per_yr"]["predictive"], rel=1e-12)
    assert y1["afp_per_yr"]["predictive"] == pytest.approx(y0["afp_per_yr"]["predictive"], rel=1e-12)
    # the same figures at another discount rate
    for a, b in zip(c.figures["higher"]["condition_years"], runs[0.10].figures["higher"]["condition_years"]):
        for key in ("afp_per_yr", "all_lives_per_yr", "all_reduction_lives_per_yr", "afp_reduction_per_yr"):
            assert a[key]["predictive"] == b[key]["predictive"], key
    # the old key weights the years by the discount factors, so it moves with the rate
    old = [r.figures["higher"]["all_reduction_lives_per_yr"]["predictive"] for r in runs.values()]
    assert old[0] != pytest.approx(old[1], rel=1e-6)
    # undiscounted mean over the period, by hand: calendar years 2030..2049, the reduction linear from D0 (2030)
    # to 2 D0 (2040), then held: mean = D0 (1 + sum_t frac_t / 20), frac_t = min(1, (t - 2030) / 10)
    d0 = y0["all_reduction_lives_per_yr"]["predictive"]
    hand = d0 * (1 + sum(min(1.0, (t - 2030) / 10) for t in range(2030, 2050)) / 20)
    for r in runs.values():
        assert r.figures["higher"]["all_reduction_lives_per_yr_undiscounted"]["predictive"] == pytest.approx(
            hand, rel=1e-12
        )
    f = c.figures["higher"]
    cost, ben = f["costs"]["annualized_cost_per_yr"], f["expected_annual_benefit_per_yr"]["predictive"]
    assert f["net_cost_per_statistical_life_saved"]["predictive"] == pytest.approx((cost - ben) / hand, rel=1e-10)


def test_without_a_future_year_the_condition_year_equals_the_run(scenario_factory):
    # one condition year: the undiscounted AFP of that year is the plain AFP of a `riskcalc run` of the base
    # (same ensemble and response; the comparison's grid holds every plan's breakpoints, so the last digits may
    # differ: rel 1e-3)
    from riskcalc.risk.assess import assess

    sc = _scenario(scenario_factory, ECON + _alt("higher", HIGHER), knowledge=False)
    c = al.compare(sc)
    from riskcalc.outputs.comparison import without_project

    (y,) = c.figures["higher"]["condition_years"]
    (b,) = without_project(c)["condition_years"]
    r = assess(sc)
    assert b["afp_per_yr"]["predictive"] == pytest.approx(r.values_predictive["afp"], rel=1e-3)
    assert b["all_lives_per_yr"]["predictive"] == pytest.approx(r.values_predictive["all"], rel=1e-3)
    # and, with no future year, the old annualized key is the same plain value
    assert c.figures["higher"]["afp_reduction_per_yr"]["predictive"] == pytest.approx(
        y["afp_reduction_per_yr"]["predictive"], rel=1e-12
    )


def test_compare_prints_economic_only_and_the_reference_line_positions(scenario_factory, tmp_path, capsys):
    from riskcalc.outputs.labels import fmt_num

    sc = _scenario(scenario_factory, _future(0.05) + LINES + _alt("higher", HIGHER), knowledge=False)
    c = al.compare(sc)
    code, stdout, err = _run(["compare", str(sc.path), "--out", str(tmp_path / "cmp")], capsys)
    assert code == 0, err
    assert "economic only" in stdout and "does not rank life safety" in stdout
    assert "Individual risk is not assessed" in stdout
    w = c.weights
    for plan in (BASE_NAME, "higher"):
        for k, year in enumerate((2030, 2040)):
            v = c.risks[plan][k].values
            afp, all_ = float(w @ v["afp"]), float(w @ v["all"])
            # independent: the weighted share of draws above the AFP line 1e-3 and the life-loss line 1e-3
            # (f N = c: above where ALL_inc > c; the line is drawn for every N > 0)
            p_afp = float(w[v["afp"] > 1e-3].sum())
            p_all = float(w[np.maximum(v["all_incremental"], 0) > 1e-3].sum())
            head = f"  {plan}, {year}: AFP {fmt_num(afp)} per year, ALL {fmt_num(all_)} lives/yr"
            i = stdout.index(head)
            block = re.split(r"\n  (?! )", stdout[i:])[0]  # the plan-year line and its indented lines
            all_inc = float(w @ v["all_incremental"])
            for name, value, share in (("AFP 1e-3", afp, p_afp), ("ALL 1e-3", all_inc, p_all)):
                m = re.search(rf"{name}: (\w+) \(share of draws above ([\d.]+)\)", block)
                assert m, block
                assert m.group(1) == ("above" if value > 1e-3 else "below"), block
                # printed with two decimals: within 0.005 of the independent share (plus rounding of the sums)
                assert abs(float(m.group(2)) - share) <= 0.005 + 1e-12, (block, share)
            assert "F-N 1e-3: " in block and "IR 1e-4" not in block
            if plan != BASE_NAME:
                red = float(w @ (c.risks[BASE_NAME][k].values["all"] - v["all"]))
                assert f"(reduction {fmt_num(red)})" in block
    # the ranking table shows the life-loss reduction of each condition year beside the money
    (row,) = [ln for ln in stdout.splitlines() if ln.strip().startswith("1  higher")]
    for y in c.figures["higher"]["condition_years"]:
        assert fmt_num(y["all_reduction_lives_per_yr"]["predictive"]) in row
    d = json.loads((tmp_path / "cmp" / "comparison.json").read_text())
    assert d["ranking"]["economic_only"] is True and "condition_years" in d["without_project"]
    assert "not discounted" in d["risk_statements"]
    # f-N points are compared with the f-N lines only, not with the F-N limit line
    assert sorted(ch["line"] for ch in d["alternatives"]["higher"]["fn_point"]["checks"]) == ["AFP 1e-3", "ALL 1e-3"]


def test_paired_table_is_numbered_from_one(scenario_factory):
    from riskcalc.outputs.comparison import paired_differences_table

    sc = _scenario(scenario_factory, ECON + _alt("higher", HIGHER), knowledge=False)
    c = al.compare(sc)
    t = paired_differences_table(c)
    g = t[t.alternative == "higher"]
    assert g["draw"].tolist() == list(range(1, c.weights.size + 1))
    assert g["realization"].min() == 1 and g["realization"].max() == sc.ensemble.size
    assert g["realization_label"].tolist() == [sc.ensemble.labels[i] for i in c.realization]


def test_mode_fallback_is_not_called_the_most_likely_curve(scenario_factory):
    # the conftest ensemble has no log_posterior: its "mode" is the curve at the weighted mean parameters
    sc = _scenario(scenario_factory, ECON + _alt("higher", HIGHER), knowledge=False)
    assert sc.ensemble.log_posterior is None
    md = memo_section(al.compare(sc))["markdown"]
    assert "most likely" not in md
    from riskcalc.outputs.comparison import mode_curve_words

    assert "weighted mean parameters" in mode_curve_words(al.compare(sc))
