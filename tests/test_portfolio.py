"""Portfolios: serial and a local dask.distributed cluster give the same numbers; failures are reported."""

import json

import pandas as pd
import pytest

from riskcalc.errors import InputError
from riskcalc.workflows import collect_scenarios, run_portfolio


@pytest.fixture
def three_scenarios(tmp_path, scenario_factory):
    paths = [
        scenario_factory(
            folder=f"s{i}",
            toml_extra=(
                "[uncertainty]\ndraws_per_realization = 2\n"
                "[grid]\npoints = 300\n[outputs]\nfigures = false\nmemo = false\n"
            ),
        )
        for i in range(3)
    ]
    for i, p in enumerate(paths):
        text = p.read_text().replace("seed = 42", f"seed = {100 + i}")
        # knowledge uncertainty, so that random streams matter
        text = text.replace('[rating]\ntable = "rating.csv"\n', '[rating]\ntable = "rating.csv"\nknowledge_sd = 0.2\n')
        p.write_text(text)
    return paths


def summaries(out, names):
    return {n: json.loads((out / n / "summary.json").read_text()) for n in names}


def test_serial_and_local_cluster_are_bit_identical(tmp_path, three_scenarios):
    dask = pytest.importorskip("dask")
    pytest.importorskip("dask.distributed")
    serial = run_portfolio(three_scenarios, tmp_path / "serial")
    # generous start-up and connect limits: worker processes start slowly on a loaded runner
    with dask.config.set(
        {"distributed.comm.timeouts.connect": "120s", "distributed.deploy.lost-worker-timeout": "120s"}
    ):
        dist = run_portfolio(three_scenarios, tmp_path / "dist", workers=2)
    assert (serial["status"] == "ok").all() and (dist["status"] == "ok").all()
    cols = [c for c in serial.columns if c not in ("output",)]
    pd.testing.assert_frame_equal(serial[cols], dist[cols], check_exact=True)
    names = list(serial["scenario"])
    a, b = summaries(tmp_path / "serial", names), summaries(tmp_path / "dist", names)
    for n in names:
        for key in ("annual_failure_probability", "expected_annual_damage", "annualized_life_loss"):
            assert a[n][key] == b[n][key]
        assert (tmp_path / "serial" / n / "tables" / "per_draw.csv").read_bytes() == (
            tmp_path / "dist" / n / "tables" / "per_draw.csv"
        ).read_bytes()


def test_failing_scenario_is_reported_and_others_run(tmp_path, three_scenarios):
    bad = three_scenarios[1]
    (bad.parent / "rating.csv").write_text("discharge_m3s,stage_m\n10,1\n5,2\n")
    table = run_portfolio(three_scenarios, tmp_path / "pf")
    assert list(table["status"]) == ["ok", "input error", "ok"]
    assert "rating.csv, row 3, column 'discharge_m3s'" in table.loc[1, "error"]
    assert (tmp_path / "pf" / table.loc[0, "scenario"] / "summary.json").exists()
    on_disk = pd.read_csv(tmp_path / "pf" / "portfolio.csv")
    assert list(on_disk["status"]) == ["ok", "input error", "ok"]


def test_collect_from_folder_and_list(tmp_path, three_scenarios):
    lst = tmp_path / "list.txt"
    lst.write_text("# two of them\ns0/scenario.toml\n\ns2/scenario.toml\n")
    assert [p.parent.name for p in collect_scenarios([lst])] == ["s0", "s2"]
    with pytest.raises(InputError, match=r"list.txt, row 2: scenario 'nope.toml' not found"):
        lst.write_text("s0/scenario.toml\nnope.toml\n")
        collect_scenarios([lst])
    with pytest.raises(InputError, match="folder holds no scenario"):
        (tmp_path / "empty").mkdir()
        collect_scenarios([tmp_path / "empty"])


def test_portfolio_command_end_to_end(tmp_path, three_scenarios, capsys):
    from riskcalc.cli import main

    out = tmp_path / "cli"
    with pytest.raises(SystemExit) as info:
        main(["portfolio", *map(str, three_scenarios), "--out", str(out), "--quiet"])
    assert info.value.code == 0
    assert "3 of 3 scenarios ran" in capsys.readouterr().out
    table = pd.read_csv(out / "portfolio.csv")
    assert list(table["status"]) == ["ok"] * 3
    with pytest.raises(SystemExit) as info:
        main(["portfolio", str(tmp_path / "missing.toml"), "--out", str(tmp_path / "never")])
    assert info.value.code == 2 and not (tmp_path / "never").exists()
