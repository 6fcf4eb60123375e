"""Reproducible runs and atomic outputs.

* The same scenario and seed give byte-identical summary.json and tables (provenance holds the
  date, so both runs are made on the same day, in the same test).
* Different seeds agree within the Monte Carlo standard errors the run reports.
* A run writes into ``.NAME.partial-*`` beside ``--out`` and renames it into place at the end:
  an error or Ctrl-C late in the run leaves the previous results untouched and no temporary
  directory behind; a non-empty ``--out`` needs ``--overwrite``.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

import riskcalc.outputs.figures
import riskcalc.workflows
from riskcalc.cli import main
from riskcalc.errors import InputError

# knowledge uncertainty in the response, so that the seed matters: a rating offset, a shift of the
# failure mode, a triangular damage multiplier; 3 draws per realization
UNCERTAIN = """
[grid]
points = 300
[uncertainty]
draws_per_realization = 3
[outputs]
figures = false
"""
UNCERTAIN_RATING = 'table = "rating.csv"\nknowledge_sd = 0.2'
UNCERTAIN_CONS = (
    'table = "consequences.csv"\n[consequences.damage_multiplier]\ndistribution = "triangular"\n'
    "low = 0.5\nmode = 1.0\nhigh = 2.0"
)


def uncertain_scenario(factory, folder, seed=42):
    path = factory(folder=folder, toml_extra=UNCERTAIN)
    text = path.read_text()
    text = text.replace('table = "rating.csv"', UNCERTAIN_RATING, 1)
    text = text.replace('table = "consequences.csv"', UNCERTAIN_CONS, 1)
    text = text.replace('name = "breach"\n', 'name = "breach"\nshift_sd = 0.3\n', 1)
    text = text.replace("seed = 42", f"seed = {seed}")
    path.write_text(text)
    return path


def run_cli(argv, capsys):
    with pytest.raises(SystemExit) as info:
        main([str(a) for a in argv])
    cap = capsys.readouterr()
    return info.value.code, cap.out, cap.err


def snapshot(folder: Path) -> dict:
    """Every file under ``folder`` with its bytes."""
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def leftovers(folder: Path):
    return sorted(p.name for p in folder.iterdir() if ".partial-" in p.name or ".old-" in p.name)


# ----------------------------------------------------------------------
# reproducibility
# ----------------------------------------------------------------------
def test_same_seed_gives_byte_identical_outputs(scenario_factory, tmp_path, capsys):
    path = uncertain_scenario(scenario_factory, "sc")
    runs = []
    for name, workers in (("a", 1), ("b", 1), ("c", 3)):
        code, _, err = run_cli(["run", path, "--out", tmp_path / name, "--workers", workers, "--quiet"], capsys)
        assert code == 0, err
        runs.append(snapshot(tmp_path / name))
    assert "summary.json" in runs[0] and any(k.startswith("tables") for k in runs[0])
    # byte-identical on a repeat, and for any number of worker threads (propagate's per-chunk streams)
    assert runs[0] == runs[1]
    assert runs[0] == runs[2]
    s = json.loads(runs[0]["summary.json"])
    assert s["provenance"]["seed"] == 42 and s["provenance"]["settings"]["draws_per_realization"] == 3


def test_different_seeds_agree_within_reported_standard_errors(scenario_factory, tmp_path, capsys):
    summaries = []
    for seed in (1, 2):
        path = uncertain_scenario(scenario_factory, f"s{seed}", seed=seed)
        code, _, err = run_cli(["run", path, "--out", tmp_path / f"r{seed}", "--quiet"], capsys)
        assert code == 0, err
        summaries.append(json.loads((tmp_path / f"r{seed}" / "summary.json").read_text()))
    a, b = summaries
    for key in ("annual_failure_probability", "expected_annual_damage", "annualized_life_loss"):
        ha, hb = a[key], b[key]
        # the seed moves only the response draws: the predictive values differ (the seed is used) ...
        assert ha["predictive"] != hb["predictive"]
        # ... by less than 4 combined standard errors (two independent estimates; 4 sigma: a false
        # alarm about once in 16,000 runs for a normal error)
        se = (ha["mc_standard_error"] ** 2 + hb["mc_standard_error"] ** 2) ** 0.5
        assert se > 0
        assert abs(ha["predictive"] - hb["predictive"]) <= 4 * se, key
        # the mode and median curves use the nominal response: independent of the seed
        assert ha["mode"] == hb["mode"] and ha["median_curve"] == hb["median_curve"]


# ----------------------------------------------------------------------
# atomic outputs
# ----------------------------------------------------------------------
def quick_figures(result, folder, **_):
    """Stands in for the figures (speed): one small deterministic file."""
    Path(folder).mkdir(parents=True, exist_ok=True)
    (Path(folder) / "stand_in.txt").write_text(f"{result.headline['annual_failure_probability']['predictive']!r}\n")


@pytest.fixture
def previous(scenario_factory, tmp_path, capsys, monkeypatch):
    """A scenario and a finished results directory from an earlier run."""
    monkeypatch.setattr(riskcalc.outputs.figures, "run_figures", quick_figures)
    path = scenario_factory(folder="sc", toml_extra="[grid]\npoints = 200\n[outputs]\nmemo = false\n")
    out = tmp_path / "results"
    code, _, err = run_cli(["run", path, "--out", out, "--quiet"], capsys)
    assert code == 0, err
    return path, out, snapshot(out)


def _fail_on_call(n, exc):
    """A write_csv that writes the first n - 1 tables, then raises ``exc``."""
    real = riskcalc.workflows.write_csv
    calls = {"n": 0}

    def fake(path, df):
        calls["n"] += 1
        if calls["n"] >= n:
            raise exc
        real(path, df)

    return fake


def test_error_late_in_run_leaves_previous_results(previous, tmp_path, capsys, monkeypatch):
    path, out, before = previous
    monkeypatch.setattr(riskcalc.workflows, "write_csv", _fail_on_call(3, OSError(28, "No space left on device")))
    with pytest.raises(OSError):
        main(["run", str(path), "--out", str(out), "--overwrite"])
    assert snapshot(out) == before
    assert leftovers(tmp_path) == []


def test_ctrl_c_during_figures_leaves_previous_results(previous, tmp_path, capsys, monkeypatch):
    path, out, before = previous
    written = []

    def interrupted(result, folder):
        Path(folder).mkdir(parents=True, exist_ok=True)
        (Path(folder) / "half.png").write_bytes(b"\x89PNG")
        written.append(folder)
        raise KeyboardInterrupt

    monkeypatch.setattr(riskcalc.outputs.figures, "run_figures", interrupted)
    code, _, err = run_cli(["run", path, "--out", out, "--overwrite"], capsys)
    assert written, "the run did not reach the figures"
    assert "Traceback" not in err
    assert snapshot(out) == before
    assert leftovers(tmp_path) == []


def test_ctrl_c_exits_130_with_a_message(scenario_factory, tmp_path, capsys, monkeypatch):
    path = scenario_factory(folder="sc", toml_extra="[grid]\npoints = 200\n[outputs]\nfigures = false\n")
    monkeypatch.setattr(riskcalc.workflows, "write_csv", _fail_on_call(2, KeyboardInterrupt()))
    code, _, err = run_cli(["run", path, "--out", tmp_path / "fresh"], capsys)
    assert code == 130 and "interrupted; no results were written" in err


def test_input_error_late_in_run_exits_2_and_leaves_previous_results(previous, tmp_path, capsys, monkeypatch):
    path, out, before = previous

    def bad(result, folder):
        raise InputError("a late problem", "figures", key="outputs.figures")

    monkeypatch.setattr(riskcalc.outputs.figures, "run_figures", bad)
    code, _, err = run_cli(["run", path, "--out", out, "--overwrite"], capsys)
    assert code == 2 and len(err.splitlines()) == 1
    assert snapshot(out) == before and leftovers(tmp_path) == []


def test_first_run_interrupted_leaves_no_directory(scenario_factory, tmp_path, capsys, monkeypatch):
    path = scenario_factory(folder="sc", toml_extra="[grid]\npoints = 200\n")
    monkeypatch.setattr(riskcalc.workflows, "write_csv", _fail_on_call(2, KeyboardInterrupt()))
    out = tmp_path / "fresh"
    code, _, err = run_cli(["run", path, "--out", out], capsys)
    assert not out.exists() and leftovers(tmp_path) == []


def test_existing_non_empty_out_needs_overwrite(previous, tmp_path, capsys):
    path, out, before = previous
    code, _, err = run_cli(["run", path, "--out", out], capsys)
    assert code == 2 and "--overwrite" in err and len(err.splitlines()) == 1
    assert snapshot(out) == before
    # an unrelated non-empty folder is refused the same way, and not touched
    other = tmp_path / "notes"
    other.mkdir()
    (other / "keep.txt").write_text("mine")
    code, _, err = run_cli(["run", path, "--out", other], capsys)
    assert code == 2 and "--overwrite" in err and (other / "keep.txt").read_text() == "mine"
    # an existing empty folder is fine
    empty = tmp_path / "empty"
    empty.mkdir()
    code, _, err = run_cli(["run", path, "--out", empty, "--quiet"], capsys)
    assert code == 0 and (empty / "summary.json").exists()
    # --overwrite replaces the results in one piece
    code, _, err = run_cli(["run", path, "--out", out, "--overwrite", "--quiet"], capsys)
    assert code == 0 and snapshot(out) == before
    assert leftovers(tmp_path) == []


def test_out_that_is_a_file_is_refused(scenario_factory, tmp_path, capsys):
    path = scenario_factory(folder="sc", toml_extra="[grid]\npoints = 200\n")
    f = tmp_path / "results.txt"
    f.write_text("not a folder")
    code, _, err = run_cli(["run", path, "--out", f, "--overwrite"], capsys)
    assert code == 2 and "is not a directory" in err and f.read_text() == "not a folder"
    assert leftovers(tmp_path) == []


def test_hazard_command_is_atomic_too(tmp_path, capsys, monkeypatch):
    ens = tmp_path / "ens.csv"
    ens.write_text("mean,sd,skew\n2.5,0.25,0.1\n2.6,0.24,0.0\n")
    out = tmp_path / "hz"
    code, _, err = run_cli(["hazard", ens, "--family", "lp3", "--out", out, "--grid", 200], capsys)
    assert code == 0, err
    before = snapshot(out)
    monkeypatch.setattr(riskcalc.workflows, "write_csv", _fail_on_call(2, KeyboardInterrupt()))
    code, _, err = run_cli(["hazard", ens, "--family", "lp3", "--out", out, "--grid", 200, "--overwrite"], capsys)
    assert snapshot(out) == before and leftovers(tmp_path) == []
