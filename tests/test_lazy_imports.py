"""Start-up: the command line and reading a scenario load no plotting, sensitivity or cluster library.

Checked by listing ``sys.modules`` in a fresh interpreter (not by timing): Matplotlib, SALib and dask
are imported by the code that draws figures, computes Sobol indices or runs a portfolio on a cluster,
and by nothing that ``riskcalc --help`` or ``riskcalc check`` runs.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
HEAVY = ("matplotlib", "SALib", "dask", "distributed")


def _modules_after(code: str) -> set:
    env = {**os.environ, "PYTHONPATH": str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", "")}
    probe = code + "\nimport sys, json\nprint(json.dumps(sorted(m.split('.')[0] for m in sys.modules)))\n"
    out = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, env=env, timeout=120)
    assert out.returncode == 0, out.stderr
    return set(json.loads(out.stdout.strip().splitlines()[-1]))


def test_importing_the_cli_loads_no_heavy_library():
    mods = _modules_after("import riskcalc.cli")
    assert "riskcalc" in mods and "typer" in mods  # the probe did import the command line
    for name in HEAVY:
        assert name not in mods, f"importing riskcalc.cli imported {name}"
    assert "pandas" not in mods and "scipy" not in mods


def test_help_loads_no_heavy_library():
    code = (
        "import contextlib, io\n"
        "from riskcalc.cli import app\n"
        "with contextlib.redirect_stdout(io.StringIO()) as buf:\n"
        "    try:\n"
        "        app(args=['--help'], standalone_mode=False)\n"
        "    except SystemExit:\n"
        "        pass\n"
        "assert 'check' in buf.getvalue()\n"
    )
    mods = _modules_after(code)
    for name in HEAVY:
        assert name not in mods, f"riskcalc --help imported {name}"


def test_check_of_a_scenario_loads_no_heavy_library():
    scenario = ROOT / "scenarios" / "amberlow_levee" / "scenario.toml"
    code = f"from riskcalc.workflows import check_scenario\nsc = check_scenario({str(scenario)!r})\nassert sc.ensemble.size > 0\n"
    mods = _modules_after(code)
    for name in HEAVY:
        assert name not in mods, f"riskcalc check imported {name}"


def test_import_riskcalc_is_lazy_but_complete():
    mods = _modules_after("import riskcalc\nassert callable(riskcalc.load_scenario) and callable(riskcalc.run)\n")
    assert "matplotlib" not in mods and "SALib" not in mods
