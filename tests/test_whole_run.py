"""Whole runs of the bundled demos and of the `riskcalc new` skeletons: no convergence warnings, a memo
under 1 MB, the results workbook read back against the CSV files, the grid error beside the Monte Carlo
error in every output."""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
import pytest
from typer.testing import CliRunner

from riskcalc.cli import app
from riskcalc.outputs.labels import HEADLINE_KEYS, output_label
from riskcalc.workflows import run_scenario

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module", params=["amberlow_levee", "tarnhollow_dam"])
def bundled_run(request, tmp_path_factory):
    out = tmp_path_factory.mktemp(request.param) / "out"
    result = run_scenario(ROOT / "scenarios" / request.param / "scenario.toml", out, xlsx=True)
    return request.param, result, out


def test_bundled_demo_ends_without_sensitivity_warnings(bundled_run):
    name, result, out = bundled_run
    s = json.loads((out / "summary.json").read_text())
    assert s["sensitivity"], name  # the demos compute the indices
    assert not [w for w in s["warnings"] if "sensitivity" in w or "half-width" in w], s["warnings"]
    sens = json.loads((out / "sensitivity.json").read_text()) if (out / "sensitivity.json").exists() else None
    if sens is not None:
        assert sens["convergence"]["converged"] is True
        hist = sens["convergence"]["history"]
        assert all(b["n"] == 2 * a["n"] for a, b in zip(hist, hist[1:]))  # powers of two
        assert max(hist[-1]["largest_half_width"].values()) < 0.1


def test_memo_is_under_one_megabyte(bundled_run):
    _, _, out = bundled_run
    size = (out / "memo.html").stat().st_size
    assert 50_000 < size < 1_000_000, size  # the figures are embedded, the whole under 1 MB


def test_grid_error_is_reported_beside_the_monte_carlo_error(bundled_run):
    _, result, out = bundled_run
    s = json.loads((out / "summary.json").read_text())
    g = s["grid_error"]
    assert g["choice"] == "adaptive" and g["within_target"] is True
    for key in HEADLINE_KEYS:
        assert g[key]["relative_largest"] < 1e-3
        # the grid error is the flood loading's: in a study (the dam) its Monte Carlo error is the flood's too
        flood = s["loadings"]["flood"] if s.get("loadings") else s
        assert g[key]["monte_carlo_standard_error"] == pytest.approx(flood[key]["mc_standard_error"])
    memo = (out / "memo.md").read_text()
    assert "grid error" in memo.lower() and "Richardson" in memo


def test_workbook_sheets_equal_the_csv_tables(bundled_run):
    _, result, out = bundled_run
    book = pd.read_excel(out / "results.xlsx", sheet_name=None)
    tables = sorted(p.stem for p in (out / "tables").glob("*.csv"))
    assert set(tables) <= set(book) and {"summary", "read_me"} <= set(book)
    for stem in tables:
        csv = pd.read_csv(out / "tables" / f"{stem}.csv")
        sheet = book[stem]
        assert list(sheet.columns) == list(csv.columns), stem  # the same headers, units included
        assert len(sheet) == len(csv), stem
        for col in csv.columns:
            if pd.api.types.is_numeric_dtype(csv[col]):
                pd.testing.assert_series_equal(
                    sheet[col].astype(float), csv[col].astype(float), rtol=1e-9, check_names=False
                )
            else:
                assert sheet[col].fillna("").astype(str).tolist() == csv[col].fillna("").astype(str).tolist(), (
                    stem,
                    col,
                )
    # the summary sheet: a column a headline figure with its unit in the header, values from summary.json
    s = json.loads((out / "summary.json").read_text())
    summ = book["summary"].set_index("statistic")
    cur = s["units"]["currency"]
    for key in HEADLINE_KEYS:
        col = output_label(key).text(cur)
        assert "[" in col and col in summ.columns
        assert summ.loc["predictive (mean hazard)", col] == pytest.approx(s[key]["predictive"], rel=1e-12)
        assert summ.loc["ensemble 95 %", col] == pytest.approx(s[key]["ensemble"]["p95"], rel=1e-12)
        assert summ.loc["grid error of the predictive figure (estimate)", col] == pytest.approx(
            s["grid_error"][key]["predictive"], rel=1e-12
        )


@pytest.mark.parametrize("structure", ["dam", "levee"])
def test_new_skeleton_checks_and_runs(structure, tmp_path):
    runner = CliRunner()
    folder = tmp_path / f"my_{structure}"
    res = runner.invoke(app, ["new", str(folder), "--structure", structure])
    assert res.exit_code == 0, res.output
    toml = (folder / "scenario.toml").read_text()
    assert "INVENTED PLACEHOLDER" in toml and "licensed engineers" in toml and "governing agency" in toml
    assert f'structure = "{structure}"' in toml
    for csv in folder.glob("*.csv"):
        assert csv.read_text().startswith("# INVENTED PLACEHOLDER DATA"), csv
    res = runner.invoke(app, ["check", str(folder / "scenario.toml")])
    assert res.exit_code == 0 and "valid" in res.output, res.output
    res = runner.invoke(app, ["run", str(folder / "scenario.toml"), "--out", str(tmp_path / "out"), "--quiet"])
    assert res.exit_code == 0, res.output
    s = json.loads((tmp_path / "out" / "summary.json").read_text())
    assert s["annual_failure_probability"]["predictive"] > 0 and s["structure" if "structure" in s else "title"]


def test_new_refuses_a_folder_that_is_not_empty(tmp_path, capsys):
    from riskcalc.cli import main

    folder = tmp_path / "taken"
    folder.mkdir()
    (folder / "notes.txt").write_text("mine")
    with pytest.raises(SystemExit) as exc:
        main(["new", str(folder), "--structure", "dam"])
    err = capsys.readouterr().err
    assert exc.value.code == 2 and len(err.splitlines()) == 1 and "not empty" in err
    assert sorted(p.name for p in folder.iterdir()) == ["notes.txt"]  # nothing written
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".taken")]  # no temporary folder left


def test_new_refuses_an_unknown_structure(tmp_path, capsys):
    from riskcalc.cli import main

    with pytest.raises(SystemExit) as exc:
        main(["new", str(tmp_path / "x"), "--structure", "bridge"])
    err = capsys.readouterr().err
    assert exc.value.code == 2 and "--structure" in err and "dam, levee" in err
    assert not (tmp_path / "x").exists()
