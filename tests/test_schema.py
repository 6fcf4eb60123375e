"""The declarative scenario schema: the validator, its messages, and the documented examples against it."""

from __future__ import annotations

import dataclasses
import math
import re
from pathlib import Path

import pytest

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

from riskcalc.config import schema as S
from riskcalc.config.decision import OVERRIDES, SHARED, read_economics
from riskcalc.config.settings import SensitivitySettings, read_settings
from riskcalc.decision.guidelines import FNLimitLine, LifeLossLine, ProbabilityLine
from riskcalc.errors import InputError

ROOT = Path(__file__).resolve().parents[1]
F = "sc.toml"
FN = {"name": "limit", "source": "Agency X", "anchor_n": 1, "anchor_f": 1e-3}


def refused(section, table, prefix=None):
    with pytest.raises(InputError) as info:
        S.validate(section, table, F, f"{section}." if prefix is None else prefix)
    return info.value


# --------------------------------------------------------------------------
# the validator
# --------------------------------------------------------------------------
def test_defaults_are_filled_as_documented():
    # the defaults of docs/scenario-format.md
    assert S.validate("grid", {}, F, "grid.") == {
        "points": 2000,
        "aep_max": 0.999,
        "aep_min": 1e-7,
        "rule": "midpoint",
        "target_error": 1e-3,
        "min_points": 250,
        "max_points": 16000,
    }
    assert S.validate("uncertainty", {}, F) == {"draws_per_realization": 1, "hermite_nodes": 16, "workers": 0}
    assert S.validate("checks", {}, F) == {"design_aep": 0.01, "years": 50, "crest_stage": None}


def test_an_integer_is_a_number_but_true_is_neither():
    r = S.validate("rating", {"table": "r.csv", "natural_sd": 1}, F, "rating.")
    assert r["natural_sd"] == 1.0 and type(r["natural_sd"]) is float
    assert (
        refused("rating", {"table": "r.csv", "natural_sd": True}).detail == "expected a number, got true or false True"
    )
    assert refused("checks", {"years": True}).detail == "expected an integer, got true or false True"
    assert refused("checks", {"years": 2.0}).detail == "expected an integer, got a number 2.0"


@pytest.mark.parametrize(
    "section, table, key, detail",
    [
        ("grid", {"points": 3}, "grid.points", "3 is outside 50 to 200000; expected a number of grid points"),
        ("grid", {"aep_max": 1.0}, "grid.aep_max", "1.0 is outside (0, 1); expected a probability"),
        ("grid", {"rule": "simpson"}, "grid.rule", "'simpson' is not midpoint or trapezoid"),
        (
            "grid",
            {"spacing": "log"},
            "grid.spacing",
            "unknown key; expected one of aep_max, aep_min, max_points, min_points, points, rule, target_error",
        ),
        (
            "economics",
            {"rate": 1.0},
            "economics.rate",
            "1.0 is outside [0, 1); expected the discount rate as a fraction, e.g. 0.03",
        ),
        (
            "economics",
            {},
            "economics.rate",
            "missing required key; expected the discount rate as a fraction, e.g. 0.03",
        ),
        (
            "uncertainty",
            {"workers": -1},
            "uncertainty.workers",
            "-1 is negative; expected 0 (the machine's cores) or a number of threads",
        ),
        ("checks", {"years": 0}, "checks.years", "0 is below 1; expected a number of years >= 1"),
        ("checks", {"design_aep": math.nan}, "checks.design_aep", "nan is not finite"),
        ("checks", {"years": "ten"}, "checks.years", "expected an integer, got text 'ten'"),
        (
            "sensitivity",
            {"morris_levels": 3},
            "sensitivity.morris_levels",
            "3 is not even; expected an even integer from 2 to 20",
        ),
        (
            "sensitivity",
            {"gap_samples": 100},
            "sensitivity.gap_samples",
            "100 is not a power of two; expected a power of two from 64 to 65536",
        ),
        ("sensitivity", {"groups": {"g": ["a", 3]}}, "sensitivity.groups.g[2]", "expected text, got an integer 3"),
        ("fn_line", dict(FN, slope=0.5), "fn_line.slope", "0.5 is above 0; expected a number <= 0 (a falling line)"),
        ("fn_line", dict(FN, n_max=math.nan), "fn_line.n_max", "nan is not finite"),
        (
            "life_loss_line",
            {"name": "a", "source": "s", "value": 0},
            "life_loss_line.value",
            "0.0 is not above 0; expected a positive annualized life loss [lives/yr]",
        ),
        (
            "economics_future",
            {"year": 2050, "damage_factor": 0},
            "economics_future.damage_factor",
            "0.0 is not above 0; expected a growth factor on damage > 0",
        ),
        (
            "alternative",
            {"name": " ", "first_cost": 1.0},
            "alternative.name",
            "is empty; expected the alternative's name",
        ),
        ("units", {"stage": "yd"}, "units.stage", "'yd' is not m or ft"),
        ("outputs", "yes", "outputs", "expected a table of settings, got text 'yes'"),
    ],
)
def test_refused_values_read_as_one_line(section, table, key, detail):
    err = refused(section, table)
    assert (err.key, err.detail) == (key, detail)
    assert str(err) == f"{F}, key '{key}': {detail}"


def test_an_infinite_upper_end_is_allowed_where_declared():
    assert S.validate("fn_line", dict(FN, n_max=math.inf), F)["n_max"] == math.inf
    assert refused("fn_line", dict(FN, anchor_n=math.inf)).detail == "inf is not finite"


def test_deep_walks_nested_tables_and_shallow_leaves_them_to_their_builder():
    fm = {"name": "m", "nodes": [{"kind": "normal", "median": 5.0, "spread": 0.5}]}
    shallow = S.check_section("failure_mode", fm, F, "failure_modes[1].")
    assert shallow["nodes"] == fm["nodes"] and "datum" not in shallow["nodes"][0]
    deep = S.validate("failure_mode", fm, F, "failure_modes[1].")
    assert deep["nodes"][0]["datum"] == 0.0 and deep["nodes"][0]["name"] == "node"
    bad = {"name": "m", "nodes": [{"kind": "normal", "colour": "red"}]}
    assert S.check_section("failure_mode", bad, F, "fm.")["nodes"] == bad["nodes"]
    assert refused("failure_mode", bad, "fm.").key == "fm.nodes[1].colour"


def test_optional_sections_are_left_out_and_guideline_entries_count_from_zero():
    assert "future" not in S.validate("economics", {"rate": 0.03}, F)
    alt = S.validate("alternative", {"name": "a", "first_cost": 1.0}, F)
    assert not set(OVERRIDES) & set(alt) and alt["future"] == {}
    g = S.validate("guidelines", {"include": "usbr_2011"}, F, "guidelines.")
    assert g["include"] == ["usbr_2011"]  # one name is a list of one
    assert refused("guidelines", {"fn_lines": [FN, dict(FN, anchorf=1)]}).key == "guidelines.fn_lines[1].anchorf"


def test_every_nested_table_names_a_declared_section():
    for section, fields in S.SCHEMA.items():
        for key, f in fields.items():
            for g in (f, f.items, f.values):
                if g is not None and g.table is not None:
                    assert g.table in S.SCHEMA, f"{section}.{key} -> {g.table}"
                    assert g.type in (dict, list)


def test_alternatives_override_and_share_the_documented_sections():
    # docs/economics.md: overrides rating, failure_modes, consequences, uncertainty; hazard, grid, seed, units shared
    assert set(OVERRIDES) == {"rating", "failure_modes", "consequences", "uncertainty"}
    assert {"hazard", "grid", "seed", "units"} <= set(SHARED) and not set(OVERRIDES) & set(SHARED)


# --------------------------------------------------------------------------
# the typed results keep the schema's field list
# --------------------------------------------------------------------------
def test_sensitivity_settings_have_the_schema_fields_and_defaults():
    spec = S.SCHEMA["sensitivity"]
    fields = {f.name: f for f in dataclasses.fields(SensitivitySettings)}
    assert list(fields) == list(spec)
    for k, f in spec.items():
        if f.default is not None:
            default = tuple(f.default) if isinstance(f.default, (list, dict)) else f.default
            assert fields[k].default == default, k


@pytest.mark.parametrize(
    "cls, section", [(FNLimitLine, "fn_line"), (LifeLossLine, "life_loss_line"), (ProbabilityLine, "probability_line")]
)
def test_guideline_lines_have_the_schema_fields_and_defaults(cls, section):
    spec = S.SCHEMA[section]
    fields = {f.name: f for f in dataclasses.fields(cls)}
    assert list(fields) == list(spec)
    for k, f in spec.items():
        if f.default is not S.REQUIRED:
            assert fields[k].default == f.default, k


# --------------------------------------------------------------------------
# [sensitivity] and its command-line options
# --------------------------------------------------------------------------
def test_command_line_values_are_checked_by_the_same_fields():
    with pytest.raises(InputError) as info:
        read_settings({"n": 64}, F, overrides={"n": 48})
    assert info.value.key == "--n" and "48 is not a power of two" in info.value.detail
    with pytest.raises(InputError) as info:
        read_settings({}, F, overrides={"target_width": 0})
    assert info.value.key == "--target-width"
    s = read_settings({"n": 64}, F, overrides={"n": 32768, "morris": None})
    assert s.n == 32768 and s.n_max == 32768 and not s.morris  # without n_max in the table it follows n
    with pytest.raises(InputError) as info:
        read_settings({"n_max": 1024}, F, overrides={"n": 4096})
    assert info.value.key == "sensitivity.n_max" and "below n = 4096" in info.value.detail


def test_settings_read_back_to_themselves():
    s = read_settings({"n": 64, "seed": 3, "target_width": 0.05, "groups": {"g": ["a", "b"]}, "exclude": ["c"]}, F)
    assert s.groups == (("g", ("a", "b")),) and s.exclude == ("c",)
    assert read_settings(s, F) == s
    assert read_settings({}, F, default_seed=7).seed == 7


def test_a_factor_in_two_groups_is_refused():
    with pytest.raises(InputError) as info:
        read_settings({"groups": {"a": ["x"], "b": ["y", "x"]}}, F)
    assert info.value.key == "sensitivity.groups.b" and "already in group 'a'" in info.value.detail


# --------------------------------------------------------------------------
# the documented examples are valid against the schema
# --------------------------------------------------------------------------
def _toml_blocks(doc):
    text = (ROOT / "docs" / doc).read_text()
    return [
        tomllib.loads("\n".join(ln for ln in b.splitlines() if ln.strip() != "..."))
        for b in re.findall(r"```toml\n(.*?)```", text, flags=re.S)
    ]


def test_the_annotated_scenario_example_is_valid():
    (d,) = _toml_blocks("scenario-format.md")
    top = S.check_section("", d, F, "")
    for section in ("units", "hazard", "grid", "rating", "uncertainty", "checks", "outputs"):
        S.validate(section, top[section], F, f"{section}.")
    c = S.check_section("consequences", top["consequences"], F, "consequences.")
    for m in ("damage_multiplier", "life_loss_multiplier"):
        S.check_section("multiplier", c[m], F, f"consequences.{m}.")
    for i, fm in enumerate(top["failure_modes"], start=1):
        S.validate("failure_mode", fm, F, f"failure_modes[{i}].")


def test_the_sensitivity_and_economics_examples_are_valid():
    (sens,) = _toml_blocks("sensitivity.md")
    s = read_settings(sens["sensitivity"], F)
    assert s.enabled and s.groups == (("response", ("rating_offset", "fragility_shift:levee breach")),)
    (econ,) = _toml_blocks("economics.md")
    S.check_section("", {**econ, "hazard": {}, "failure_modes": [{}], "consequences": {}}, F, "")
    e = read_economics(econ["economics"], Path(F))
    assert (e.base_year, e.future_year, e.damage_factor) == (2030, 2070, 1.25)
    for i, a in enumerate(econ["alternatives"], start=1):
        S.validate("alternative", a, F, f"alternatives[{i}].")
