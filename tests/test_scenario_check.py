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
    ("missing table file", lambda p: p.write_text(p.read_text().replace('table = "rating.csv"', 'table = "nope.csv"')),
     r"nope.csv: file not found"),
    ("unknown key", lambda p: p.write_text(p.read_text() + "\n[grid]\npoints = 100\nspacing = 'odd'\n"),
     r"scenario.toml, key 'grid.spacing': unknown key"),
    ("non-increasing rating", lambda p: (p.parent / "rating.csv").write_text(
        "discharge_m3s,stage_m\n10,1.0\n100,2.0\n1000,1.5\n"), r"rating.csv, row 4, column 'stage_m': stage 1.5 is not above"),
    ("probability outside [0, 1]", lambda p: p.write_text(p.read_text() + "\n[checks]\ndesign_aep = 1.5\n"),
     r"key 'checks.design_aep': 1.5 is outside \(0, 1\)"),
    ("negative damage", lambda p: (p.parent / "consequences.csv").write_text(
        "stage_m,damage_breach_usd\n1,0\n2,-5\n"), r"consequences.csv, row 3, column 'damage_breach_usd': -5 must not be negative"),
    ("mismatched stage unit", lambda p: (p.parent / "rating.csv").write_text(
        "discharge_m3s,stage_ft\n10,1.0\n100,2.0\n"), r"rating.csv, row 1, column 'stage_ft': unit 'ft' does not match"),
    ("mismatched currency", lambda p: (p.parent / "consequences.csv").write_text(
        "stage_m,damage_breach_eur\n1,0\n2,5\n"), r"currency 'eur' does not match the scenario's currency 'usd'"),
    ("wrong type", lambda p: p.write_text(p.read_text().replace("seed = 42", 'seed = "forty-two"')),
     r"key 'seed': expected an integer, got text"),
    ("duplicate mode names", lambda p: p.write_text(p.read_text().replace(
        "[consequences]", '[[failure_modes]]\nname = "breach"\n  [[failure_modes.nodes]]\n  kind = "normal"\n  '
        'median = 6.0\n  spread = 0.5\n[consequences]')), r"failure-mode name 'breach' is used twice"),
    ("fragility probability above 1", lambda p: (
        (p.parent / "frag.csv").write_text("stage_m,probability\n1,0\n2,1.2\n"),
        p.write_text(p.read_text().replace('kind = "normal"\n  median = 5.0\n  spread = 0.5',
                                           'kind = "table"\n  table = "frag.csv"'))),
     r"frag.csv, row 3, column 'probability': 1.2 is outside \[0.0, 1.0\]"),
    ("self include", lambda p: p.write_text('base = "scenario.toml"\n' + p.read_text()),
     r"key 'base': the scenario includes itself"),
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
