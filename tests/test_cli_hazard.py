"""End-to-end runs of `riskcalc hazard`, in process and as the installed command."""

import shutil
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

from riskcalc.cli import main

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "scenarios" / "amberlow_levee" / "ensemble_lp3.csv"


def run(argv, capsys):
    with pytest.raises(SystemExit) as info:
        main(argv)
    out = capsys.readouterr()
    return info.value.code, out.out, out.err


def test_hazard_on_demo_writes_tables_and_figure(tmp_path, capsys):
    out = tmp_path / "hz"
    code, stdout, err = run(["hazard", str(DEMO), "--family", "lp3", "--unit", "m3s", "--out", str(out)], capsys)
    assert code == 0, err
    by_q = pd.read_csv(out / "hazard_by_discharge.csv")
    assert list(by_q.columns[:4]) == ["discharge_m3s", "aep_predictive", "aep_mode", "aep_median"]
    by_p = pd.read_csv(out / "hazard_by_aep.csv")
    for c in (
        "aep",
        "discharge_predictive_m3s",
        "discharge_mode_m3s",
        "discharge_median_m3s",
        "discharge_p05_m3s",
        "discharge_p95_m3s",
    ):
        assert c in by_p.columns
    assert (out / "figures" / "hazard_ensemble.png").stat().st_size > 10_000
    assert (out / "figures" / "hazard_ensemble.svg").exists()
    assert "0.01" in stdout and "predictive" in stdout and "licensed engineers" in stdout
    # the predictive 1 % discharge exceeds the mode's for a posterior ensemble (common practice)
    row = by_p.iloc[(by_p["aep"] - 0.01).abs().argmin()]
    assert row["discharge_predictive_m3s"] > row["discharge_mode_m3s"]
    assert (by_q["aep_p05"] <= by_q["aep_median"] + 1e-12).all() and (
        by_q["aep_median"] <= by_q["aep_p95"] + 1e-12
    ).all()


def test_hazard_refuses_existing_output_without_overwrite(tmp_path, capsys):
    out = tmp_path / "hz"
    out.mkdir()
    (out / "keep.txt").write_text("previous results")
    code, _, err = run(["hazard", str(DEMO), "-f", "lp3", "--out", str(out)], capsys)
    assert code == 2 and "--overwrite" in err
    assert (out / "keep.txt").read_text() == "previous results"


def test_bad_ensemble_exits_2_without_traceback_or_output(tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("mean,sd,skew\n2.5,-0.2,0.1\n")
    out = tmp_path / "hz"
    code, stdout, err = run(["hazard", str(bad), "--family", "lp3", "--out", str(out)], capsys)
    assert code == 2
    assert err.strip().count("\n") == 0 and "Traceback" not in err
    assert "bad.csv, row 2, column 'sd'" in err
    assert not out.exists()
    assert not list(tmp_path.glob(".hz*"))


def test_installed_command_help_and_error(tmp_path):
    exe = shutil.which("riskcalc", path=str(Path(sys.executable).parent))
    if exe is None:
        pytest.skip("the riskcalc console script is not installed in this environment")
    r = subprocess.run([exe, "hazard", "--help"], capture_output=True, text=True)
    assert r.returncode == 0 and "Example" in r.stdout and "--family" in r.stdout
    r = subprocess.run(
        [exe, "hazard", "missing.csv", "--family", "lp3", "--out", str(tmp_path / "never")],
        capture_output=True,
        text=True,
        cwd=tmp_path,
    )
    assert r.returncode == 2 and r.stderr.startswith("riskcalc: error: missing.csv: file not found")
    assert not (tmp_path / "never").exists()
    assert "Traceback" not in r.stderr


@pytest.mark.parametrize("argv", [["run"], ["run", "x.toml", "--bogus"], ["frobnicate"], ["hazard", "x.csv"]])
def test_usage_errors_exit_2_without_traceback(argv, capsys):
    code, _, err = run(argv, capsys)
    assert code == 2
    assert "Traceback" not in err and "Error" in err


def test_table_column_order(tmp_path, capsys):
    out = tmp_path / "hz"
    code, _, err = run(["hazard", str(DEMO), "--family", "lp3", "--unit", "m3s", "--out", str(out)], capsys)
    assert code == 0, err
    cols = list(pd.read_csv(out / "hazard_by_aep.csv").columns)
    assert cols[:4] == ["aep", "discharge_predictive_m3s", "discharge_mode_m3s", "discharge_median_m3s"]
