"""The Python API mirrors the CLI: load, assess, read tables as DataFrames, run."""

import json

import pandas as pd

import riskcalc


def test_api_mirrors_cli(scenario_factory, tmp_path):
    path = scenario_factory(folder="api", toml_extra="[outputs]\nfigures = false\nmemo = false\n")
    sc = riskcalc.load_scenario(path)
    result = riskcalc.assess(sc)
    tables = result.tables()
    assert isinstance(tables["per_draw"], pd.DataFrame) and len(tables["per_draw"]) == sc.ensemble.size
    # the per-draw table's weighted mean is the summary's predictive value (one result feeds every output)
    t = tables["per_draw"]
    s = result.summary()
    assert (t["weight"] * t["afp_per_yr"]).sum() == __import__("pytest").approx(
        s["annual_failure_probability"]["predictive"], rel=1e-12
    )
    out = tmp_path / "res"
    riskcalc.run(path, out)
    on_disk = json.loads((out / "summary.json").read_text())
    assert on_disk["annual_failure_probability"] == s["annual_failure_probability"]
    back = pd.read_csv(out / "tables" / "fn_curve.csv")
    assert list(back.columns) == list(tables["fn_curve"].columns)
