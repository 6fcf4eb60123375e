"""`riskcalc fit` end to end, its refusals, and a scenario whose [hazard] table fits the record."""

from __future__ import annotations

import hashlib
import json
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from riskcalc.cli import main
from riskcalc.errors import InputError
from riskcalc.hazard import read_parameter_ensemble

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "scenarios" / "wrenstow_dam_fit"


def run(argv, capsys):
    with pytest.raises(SystemExit) as info:
        main([str(a) for a in argv])
    out = capsys.readouterr()
    return info.value.code, out.out, out.err


def peaks_csv(path, n=30, seed=1, header="year,peak_m3s", rows=None):
    x = stats.genextreme.rvs(-0.1, loc=400.0, scale=120.0, size=n, random_state=np.random.default_rng(seed))
    lines = [header] + (rows if rows is not None else [f"{1990 + i},{v:.1f}" for i, v in enumerate(x)])
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def test_fit_writes_an_ensemble_that_riskcalc_hazard_reads(tmp_path, capsys):
    src = peaks_csv(tmp_path / "peaks.csv")
    out = tmp_path / "fit"
    code, stdout, err = run(["fit", src, "--family", "gev", "--out", out, "--draws", "400", "--seed", "7"], capsys)
    assert code == 0, err
    assert "qualified hydrologist" in stdout and "does not replace" in stdout
    ens = pd.read_csv(out / "ensemble.csv")
    assert list(ens.columns) == ["location", "scale", "shape", "log_posterior", "chain", "iteration"]
    assert len(ens) == 400
    read = read_parameter_ensemble(out / "ensemble.csv", "gev")
    assert read.size == 400 and read.chain is not None and read.log_posterior is not None
    fj = json.loads((out / "fit.json").read_text())
    assert set(fj["mode"]) == set(fj["mle"]) == {"location", "scale", "shape"}
    for name in ("location", "scale", "shape"):
        d = fj["diagnostics"]["parameters"][name]
        assert d["split_rhat"] > 0.9 and d["ess_bulk"] > 0
    assert 0 < fj["diagnostics"]["acceptance_rate"] < 1
    assert fj["seed"] == 7 and fj["riskcalc_version"] and fj["data"]["exact_years"] == 30
    assert fj["prior"]["shape"]["p"] == 6 and fj["prior"]["shape"]["q"] == 9
    assert fj["quantiles"][0]["aep"] == 0.5
    for stem in ("fit_probability_paper", "fit_chains"):
        assert (out / "figures" / f"{stem}.png").stat().st_size > 1000
    pp = pd.read_csv(out / "plotting_positions.csv")
    assert list(pp.columns[:3]) == ["year", "kind", "peak_m3s"] and pp["aep_plotting"].is_monotonic_increasing
    # the same ensemble through the hazard command, unchanged
    code, _, err = run(["hazard", out / "ensemble.csv", "--family", "gev", "--out", tmp_path / "hz"], capsys)
    assert code == 0, err
    # the same seed writes the same bytes
    code, _, err = run(
        ["fit", src, "--family", "gev", "--out", tmp_path / "again", "--draws", "400", "--seed", "7"], capsys
    )
    assert code == 0, err
    for name in ("ensemble.csv", "fit.json"):
        assert (out / name).read_bytes() == (tmp_path / "again" / name).read_bytes()


def test_fit_demo_record_with_history_lp3_and_regional_skew(tmp_path, capsys):
    out = tmp_path / "lp3"
    code, stdout, err = run(
        [
            "fit", DEMO / "peaks.csv", "--thresholds", DEMO / "thresholds.csv", "--family", "lp3", "--out", out,
            "--draws", "400", "--regional-skew", "-0.1", "--regional-skew-mse", "0.12",
        ],
        capsys,
    )  # fmt: skip
    assert code == 0, err
    fj = json.loads((out / "fit.json").read_text())
    assert fj["prior"]["skew"]["regional_skew"] == -0.1
    data = fj["data"]
    assert data["interval_years"] == 2 and data["threshold_periods"][0]["length_years"] == 91
    assert data["below_threshold_years"] == 91 - 3  # three years of 1870-1960 are listed in peaks.csv
    assert "88 years below a perception threshold" in stdout


REFUSALS = [
    # (name, peaks rows (None: the default record), extra args, expected message)
    ("fewer-than-10", [f"{2000 + i},{100 + i}" for i in range(9)], [], r"9 years with a recorded peak"),
    ("non-positive-lp3", None, ["--family", "lp3"], r"row 4, column 'peak_m3s': 0 is not above 0"),
    ("text", None, [], r"row 3, column 'peak_m3s': 'big' is not a number"),
    ("duplicate-year", None, [], r"row 5, column 'year': year 1990 appears twice"),
    ("threshold-above-recorded-peak", None, [], r"below the perception threshold 5000"),
]


@pytest.mark.parametrize("name,rows,extra,message", REFUSALS)
def test_bad_records_are_refused_with_one_line_and_nothing_written(tmp_path, capsys, name, rows, extra, message):
    import re

    base = [f"{1990 + i},{300 + 7 * i}" for i in range(20)]
    args = []
    if rows is None:
        rows = list(base)
        if name == "non-positive-lp3":
            rows[2] = "1992,0"
        elif name == "text":
            rows[1] = "1991,big"
        elif name == "duplicate-year":
            rows[3] = "1990,410"
        elif name == "threshold-above-recorded-peak":
            # 1880 is listed in the threshold period 1850-1900 but lies below its threshold
            rows.append("1880,900")
            th = tmp_path / "thresholds.csv"
            th.write_text("start_year,end_year,threshold_m3s\n1850,1900,5000\n", encoding="utf-8")
            args = ["--thresholds", th]
    src = tmp_path / "peaks.csv"
    src.write_text("year,peak_m3s\n" + "\n".join(rows) + "\n", encoding="utf-8")
    out = tmp_path / "out"
    family = [] if "--family" in extra else ["--family", "gev"]
    code, stdout, err = run(["fit", src, *family, *extra, *args, "--out", out, "--draws", "200"], capsys)
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("riskcalc: error: ") and "peaks.csv" in lines[0]
    assert re.search(message, lines[0]), lines[0]
    assert not out.exists() and not any(p.name.startswith(".out") for p in tmp_path.iterdir())


def test_other_refusals(tmp_path, capsys):
    src = peaks_csv(tmp_path / "peaks.csv")
    cases = [
        (["--family", "weibull"], "unknown family 'weibull'"),
        (["--family", "gev", "--shape-prior", "wide"], "'wide' is not geophysical or flat"),
        (["--family", "gev", "--draws", "5"], "5 is outside 100 to 1000000"),
        (["--family", "lp3", "--regional-skew", "0.2"], "needs its mean squared error"),
        (["--family", "gev", "--regional-skew", "0.2", "--regional-skew-mse", "0.1"], "lp3 family only"),
    ]
    for args, message in cases:
        code, _, err = run(["fit", src, *args, "--out", tmp_path / "o"], capsys)
        assert code == 2 and message in err, (args, err)
        assert not (tmp_path / "o").exists()
    interval = tmp_path / "interval.csv"
    interval.write_text(
        "year,peak,peak_lower,peak_upper\n"
        + "".join(f"{1990 + i},{300 + i},,\n" for i in range(12))
        + "2005,,800,600\n"
    )
    code, _, err = run(["fit", interval, "--family", "gev", "--out", tmp_path / "o"], capsys)
    assert code == 2 and "row 14, column 'peak_upper': the interval [800, 600] is empty" in err


def _fit_scenario(tmp_path, draws=400):
    folder = tmp_path / "wrenstow"
    shutil.copytree(DEMO, folder)
    toml = folder / "scenario.toml"
    toml.write_text(toml.read_text().replace("draws = 4000", f"draws = {draws}"))
    return toml


def test_scenario_fit_runs_first_and_is_in_the_provenance(tmp_path):
    from riskcalc.workflows import run_scenario

    toml = _fit_scenario(tmp_path)
    out = tmp_path / "run"
    res = run_scenario(toml, out, figures=False)
    prov = json.loads((out / "summary.json").read_text())["provenance"]
    fit = prov["hazard_fit"]
    assert fit["family"] == "gev" and fit["seed"] == 5113 and fit["draws"] == 400
    for rel, digest in fit["outputs"].items():
        assert hashlib.sha256((out / rel).read_bytes()).hexdigest() == digest
    assert "peaks.csv" in prov["inputs"] and "thresholds.csv" in prov["inputs"]
    memo = (out / "memo.md").read_text(encoding="utf-8")
    assert fit["outputs"]["fit/fit.json"] in memo and "seed 5113" in memo  # the memo's provenance shows the fit
    # the run's ensemble is the fit's ensemble.csv
    ens = read_parameter_ensemble(out / "fit" / "ensemble.csv", "gev")
    np.testing.assert_allclose(ens.params["shape"], res.scenario.ensemble.params["shape"], rtol=1e-9)
    assert res.scenario.ensemble.size == 400


def test_scenario_with_both_an_ensemble_and_a_fit_is_refused(tmp_path):
    from riskcalc.config.scenario import load_scenario

    toml = _fit_scenario(tmp_path)
    text = toml.read_text().replace('variable = "discharge"', 'variable = "discharge"\nensemble = "x.csv"', 1)
    toml.write_text(text)
    with pytest.raises(InputError, match=r"key 'hazard\.ensemble': give either an ensemble file or a fit table"):
        load_scenario(toml)
    toml.write_text(text.replace('ensemble = "x.csv"', 'family = "lp3"'))
    with pytest.raises(InputError, match=r"key 'hazard\.family': 'lp3' differs from hazard\.fit\.family = 'gev'"):
        load_scenario(toml)
    toml.write_text(text.replace('ensemble = "x.csv"\n', "").replace("draws = 400", "draws = 7"))
    with pytest.raises(InputError, match=r"key 'hazard\.fit\.draws': 7 is outside 100 to 1000000"):
        load_scenario(toml)


def test_xlsx_record_with_a_unit_suffix_reads_like_the_csv(tmp_path):
    openpyxl = pytest.importorskip("openpyxl")
    from riskcalc.hazard.fit import read_record

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["year", "peak_cfs", "peak_lower_cfs", "peak_upper_cfs"])
    for i in range(11):
        ws.append([2000 + i, 1000.0 + 37 * i, None, None])
    ws.append([2011, None, 1500.0, None])
    wb.save(tmp_path / "peaks.xlsx")
    rec = read_record(tmp_path / "peaks.xlsx", "lognormal")
    assert rec.unit == "cfs" and rec.n_exact == 11 and rec.n_interval == 1
    assert rec.lower[0] == 1500.0 and rec.upper[0] == np.inf
    ws.append([2012, "high", None, None])
    wb.save(tmp_path / "bad.xlsx")
    with pytest.raises(InputError, match=r"bad\.xlsx, row 14, column 'peak_cfs': 'high' is not a number"):
        read_record(tmp_path / "bad.xlsx", "lognormal")
