"""`riskcalc check` and `riskcalc run`: bad scenarios fail with one line; good ones write every key."""

import json
from pathlib import Path

import pytest

from riskcalc.cli import main
from riskcalc.errors import InputError
from riskcalc.config.scenario import load_scenario

ROOT = Path(__file__).resolve().parents[1]


def cli(argv, capsys):
    with pytest.raises(SystemExit) as info:
        main([str(a) for a in argv])
    out = capsys.readouterr()
    return info.value.code, out.out, out.err


CASES = [
    (
        "missing table file",
        lambda p: p.write_text(p.read_text().replace('table = "rating.csv"', 'table = "nope.csv"')),
        r"nope.csv: file not found",
    ),
    (
        "unknown key",
        lambda p: p.write_text(p.read_text() + "\n[grid]\npoints = 100\nspacing = 'odd'\n"),
        r"scenario.toml, key 'grid.spacing': unknown key",
    ),
    (
        "non-increasing rating",
        lambda p: (p.parent / "rating.csv").write_text("discharge_m3s,stage_m\n10,1.0\n100,2.0\n1000,1.5\n"),
        r"rating.csv, row 4, column 'stage_m': stage 1.5 is not above",
    ),
    (
        "probability outside [0, 1]",
        lambda p: p.write_text(p.read_text() + "\n[checks]\ndesign_aep = 1.5\n"),
        r"key 'checks.design_aep': 1.5 is outside \(0, 1\)",
    ),
    (
        "negative damage",
        lambda p: (p.parent / "consequences.csv").write_text("stage_m,damage_breach_usd\n1,0\n2,-5\n"),
        r"consequences.csv, row 3, column 'damage_breach_usd': -5 must not be negative",
    ),
    (
        "mismatched stage unit",
        lambda p: (p.parent / "rating.csv").write_text("discharge_m3s,stage_ft\n10,1.0\n100,2.0\n"),
        r"rating.csv, row 1, column 'stage_ft': unit 'ft' does not match",
    ),
    (
        "mismatched currency",
        lambda p: (p.parent / "consequences.csv").write_text("stage_m,damage_breach_eur\n1,0\n2,5\n"),
        r"currency 'eur' does not match the scenario's currency 'usd'",
    ),
    (
        "wrong type",
        lambda p: p.write_text(p.read_text().replace("seed = 42", 'seed = "forty-two"')),
        r"key 'seed': expected an integer, got text",
    ),
    (
        "duplicate mode names",
        lambda p: p.write_text(
            p.read_text().replace(
                "[consequences]",
                '[[failure_modes]]\nname = "breach"\n  [[failure_modes.nodes]]\n  kind = "normal"\n  '
                "median = 6.0\n  spread = 0.5\n[consequences]",
            )
        ),
        r"failure-mode name 'breach' is used twice",
    ),
    (
        "fragility probability above 1",
        lambda p: (
            (p.parent / "frag.csv").write_text("stage_m,probability\n1,0\n2,1.2\n"),
            p.write_text(
                p.read_text().replace(
                    'kind = "normal"\n  median = 5.0\n  spread = 0.5', 'kind = "table"\n  table = "frag.csv"'
                )
            ),
        ),
        r"frag.csv, row 3, column 'probability': 1.2 is outside \[0.0, 1.0\]",
    ),
    (
        "self include",
        lambda p: p.write_text('base = "scenario.toml"\n' + p.read_text()),
        r"key 'base': the scenario includes itself",
    ),
    ("not toml", lambda p: p.write_text("title = \n"), r"scenario.toml: is not valid TOML"),
]


@pytest.mark.parametrize("label,mutate,message", CASES, ids=[c[0] for c in CASES])
def test_check_catches_bad_scenarios(scenario_factory, capsys, tmp_path, label, mutate, message):
    path = scenario_factory(folder="bad")
    mutate(path)
    with pytest.raises(InputError, match=message):
        load_scenario(path)
    code, _, err = cli(["check", path], capsys)
    assert code == 2 and "Traceback" not in err and err.count("\n") == 1
    out = tmp_path / "never"
    code, _, err = cli(["run", path, "--out", out], capsys)
    assert code == 2 and not out.exists()


def test_check_accepts_bundled_scenarios(capsys):
    for sc in ("amberlow_levee", "tarnhollow_dam"):
        code, out, err = cli(["check", ROOT / "scenarios" / sc / "scenario.toml"], capsys)
        assert code == 0, err
        assert "valid" in out


def test_run_writes_every_summary_key(scenario_factory, tmp_path, capsys):
    path = scenario_factory(folder="ok")
    out = tmp_path / "res"
    code, stdout, err = cli(["run", path, "--out", out], capsys)
    assert code == 0, err
    s = json.loads((out / "summary.json").read_text())
    for key in ("annual_failure_probability", "expected_annual_damage", "annualized_life_loss"):
        assert set(s[key]) >= {"predictive", "mode", "median_curve", "ensemble"}
        assert set(s[key]["ensemble"]) == {"mean", "p05", "p50", "p95"}
    for key in ("mode_understatement", "truncation", "provenance", "sensitivity"):
        assert key in s
    assert len(s["provenance"]["inputs"]) == 4 and all(len(h) == 64 for h in s["provenance"]["inputs"].values())
    for t in ("per_draw.csv", "fn_curve.csv", "hazard_by_discharge.csv", "hazard_by_aep.csv", "risk_by_aep_band.csv"):
        assert (out / "tables" / t).exists()
    assert "licensed engineers" in stdout and "pred/mode" in stdout
    # a second run into the same folder needs --overwrite, and leaves the first untouched
    before = (out / "summary.json").read_bytes()
    code, _, err = cli(["run", path, "--out", out], capsys)
    assert code == 2 and "--overwrite" in err
    code, _, _ = cli(["run", path, "--out", out, "--overwrite"], capsys)
    assert code == 0 and (out / "summary.json").read_bytes() == before


# ----------------------------------------------------------------------
# `check` refuses all that `run` refuses, before any computation
# ----------------------------------------------------------------------
def _corpus():
    from test_bad_input_corpus import CASES as corpus

    return {c[0]: c for c in corpus}


# section -> (bad-input corpus case that misspells one of its keys, the key named)
MISSPELT = {
    "sensitivity": ("sensitivity-misspelt-key", "sensitivity.second_ordr"),
    "guidelines": ("guidelines-misspelt-key", "guidelines.title"),
    "guidelines line": ("guidelines-line-misspelt-key", "guidelines.fn_lines[0].anchorf"),
    "economics": ("economics-misspelt-key", "economics.period"),
    "economics.future": ("economics-future-misspelt-key", "economics.future.damage_factr"),
    "alternatives": ("alternative-misspelt-key", "alternatives[1].anual_om"),
    "alternatives.future": ("alternative-future-misspelt-key", "alternatives[1].future.consequence"),
    "checks": ("checks-misspelt-key", "checks.year"),
    "outputs": ("outputs-misspelt-key", "outputs.figure"),
    "units": ("units-misspelt-key", "units.curency"),
    "grid": ("scenario-unknown-section-key", "grid.spacing"),
    "uncertainty": ("uncertainty-misspelt-key", "uncertainty.draws"),
}


@pytest.mark.parametrize("section", list(MISSPELT))
def test_check_refuses_a_misspelt_key_in_every_section(scenario_factory, capsys, section):
    label, key = MISSPELT[section]
    path = scenario_factory(folder="sc")
    _corpus()[label][1](path)
    code, out, err = cli(["check", path], capsys)
    assert code == 2 and out == "" and "Traceback" not in err
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith(f"riskcalc: error: {path}, key '{key}': unknown key; expected one of "), lines[0]


AGREE = [
    "sensitivity-unknown-factor",
    "sensitivity-n-not-power-of-two",
    "guidelines-line-probability-above-1",
    "economics-future-short-ensemble",
    "alternative-bad-node-kind",
    "alternative-missing-table",
    "alternative-without-economics",
    "alternative-future-bad-node",
    "scenario-draws-zero",
]


@pytest.mark.parametrize("label", AGREE)
def test_check_prints_the_line_run_compare_and_sensitivity_print(scenario_factory, capsys, tmp_path, label):
    import re

    case = _corpus()[label]
    path = scenario_factory(folder="sc")
    case[1](path)
    code, _, err = cli(["check", path], capsys)
    assert code == 2 and len(err.splitlines()) == 1 and re.search(case[2], err), err
    for command in ("run", "compare", "sensitivity"):
        out = tmp_path / f"out-{command}"
        code_c, _, err_c = cli([command, path, "--out", out], capsys)
        assert (code_c, err_c) == (2, err), command
        assert not out.exists()


class _Computed(Exception):
    """Raised by the stand-in of the Monte Carlo."""


def test_check_never_starts_the_monte_carlo(scenario_factory, capsys, monkeypatch, tmp_path):
    import sys

    import riskcalc.risk.propagate as rp

    original = rp.propagate

    def refuse(*args, **kwargs):
        raise _Computed("the Monte Carlo was started")

    for name, module in list(sys.modules.items()):
        if name.startswith("riskcalc") and getattr(module, "propagate", None) is original:
            monkeypatch.setattr(module, "propagate", refuse)
    (tmp_path / "sc").mkdir()
    (tmp_path / "sc" / "cons2.csv").write_text("stage_m,damage_breach_usd\n2.0,0\n9.0,1.0e6\n")
    extra = (
        "[sensitivity]\nenabled = true\nn = 64\n[guidelines]\ninclude = ['usbr_2011']\n"
        "[economics]\nrate = 0.03\nbase_year = 2030\n[economics.future]\nyear = 2070\ndamage_factor = 1.2\n"
        "[[alternatives]]\nname = 'smaller damage'\nfirst_cost = 1.0e5\n"
        "[alternatives.consequences]\ntable = 'cons2.csv'\n"
    )
    path = scenario_factory(folder="sc", toml_extra=extra)
    code, out, err = cli(["check", path], capsys)
    assert code == 0 and "valid" in out, err
    # the stand-in is in force: a run reaches it
    with pytest.raises(_Computed):
        main(["run", str(path), "--out", str(tmp_path / "res"), "--quiet"])


@pytest.mark.parametrize(
    "option, value, words",
    [
        ("--n", 1000, "key '--n': 1000 is not a power of two; expected a power of two >= 16"),
        ("--seed", 0, "key '--seed': 0 is below 1; expected an integer >= 1"),
        ("--target-width", 2.0, "key '--target-width': 2.0 is outside (0, 1); expected a confidence half-width"),
    ],
)
def test_sensitivity_options_go_through_the_schema(scenario_factory, capsys, tmp_path, option, value, words):
    path = scenario_factory(folder="sc")
    out = tmp_path / "sens"
    code, _, err = cli(["sensitivity", path, "--out", out, option, value], capsys)
    assert code == 2 and len(err.splitlines()) == 1 and f"{path}, {words}" in err, err
    assert not out.exists()


# ----------------------------------------------------------------------
# byte-order mark and CRLF line ends
# ----------------------------------------------------------------------
FULL = """
damage_multiplier = { distribution = "triangular", low = 0.8, mode = 1.0, high = 1.3 }
life_loss_multiplier = { distribution = "lognormal", median = 1.0, beta = 0.3 }
[sensitivity]
n = 64
exclude = ["damage_multiplier"]
[guidelines]
name = "Agency X"
source = "Agency X policy (2021)"
  [[guidelines.fn_lines]]
  name = "limit"
  source = "Agency X (2021), fig. 2"
  anchor_n = 1
  anchor_f = 1e-3
[economics]
rate = 0.03
base_year = 2030
  [economics.future]
  year = 2070
  damage_factor = 1.2
[[alternatives]]
name = "cheaper damage"
first_cost = 2.0e5
  [alternatives.consequences]
  damage_multiplier = { distribution = "triangular", low = 0.5, mode = 0.7, high = 1.0 }
"""


def _settings(sc):
    return (
        sc.title,
        sc.seed,
        sc.units,
        sc.grid,
        sc.uncertainty,
        sc.checks,
        sc.outputs,
        sc.sensitivity,
        sc.guidelines,
        sc.economics,
        sc.alternatives,
        sc.raw,
        sc.ensemble.size,
        sc.model.failure_mode_names,
    )


@pytest.mark.parametrize("bom, crlf", [(True, False), (False, True), (True, True)], ids=["bom", "crlf", "bom+crlf"])
def test_bom_and_crlf_load_to_the_same_settings(scenario_factory, capsys, bom, crlf):
    from riskcalc.decision.guidelines import GuidelineSet

    plain = scenario_factory(folder="plain", toml_extra=FULL)
    other = scenario_factory(folder="other", toml_extra=FULL)
    text = plain.read_bytes()
    assert b"\r" not in text and not text.startswith(b"\xef\xbb\xbf")
    if crlf:
        text = text.replace(b"\n", b"\r\n")
    if bom:
        text = b"\xef\xbb\xbf" + text
    other.write_bytes(text)
    a, b = load_scenario(plain), load_scenario(other)
    assert isinstance(a.guidelines, GuidelineSet) and a.sensitivity.exclude == ("damage_multiplier",)
    assert a.economics.future_year == 2070 and [x.name for x in a.alternatives] == ["cheaper damage"]
    sa, sb = _settings(a), _settings(b)
    # the table paths differ by folder only
    strip = lambda s: repr(s).replace(str(plain.parent), "<dir>").replace(str(other.parent), "<dir>")  # noqa: E731
    assert strip(sa) == strip(sb)
    code, out, err = cli(["check", other], capsys)
    assert code == 0 and "valid" in out, err
