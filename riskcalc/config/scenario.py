"""Scenario files: one TOML file that names the tables and settings of a risk run.

Table paths are relative to the file that names them. A scenario may start
from another with ``base = "other.toml"``: its tables are merged key by key
under this file's (lists, such as ``failure_modes``, are replaced whole). An
annotated example is ``docs/scenario-format.md``.

Every problem is an :class:`~riskcalc.errors.InputError` naming the file and
the key (and row and column for tables).
"""

from __future__ import annotations

import copy
import math
from dataclasses import dataclass, field
from pathlib import Path

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

from ..errors import InputError
from ..hazard import read_ensemble
from ..hazard.families import FAMILIES
from .build import build_model
from .schema import DISCHARGE_UNITS, STAGE_UNITS, _file_name, _probability, check_section


PATH_KEYS = (("hazard", "ensemble"), ("rating", "table"), ("consequences", "table"))


def _read_toml(path: Path) -> dict:
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise InputError("scenario file not found", path) from None
    except IsADirectoryError:
        raise InputError("is a directory; expected a scenario .toml file", path) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise InputError(f"byte 0x{raw[exc.start]:02x} is not UTF-8 text", path, row=line) from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"is not valid TOML ({exc})", path) from None


def _absolutize(d: dict, here: Path):
    """Make the table paths of one file absolute (relative to that file)."""
    for sect, key in PATH_KEYS:
        s = d.get(sect)
        if isinstance(s, dict) and isinstance(s.get(key), str) and s[key]:
            s[key] = str((here / s[key]).resolve())
    for fm in d.get("failure_modes", []) or []:
        if isinstance(fm, dict):
            for node in fm.get("nodes", []) or []:
                if isinstance(node, dict) and isinstance(node.get("table"), str) and node["table"]:
                    node["table"] = str((here / node["table"]).resolve())
    for alt in d.get("alternatives", []) or []:
        if isinstance(alt, dict):
            _absolutize(alt, here)
    fut = d.get("future")
    if isinstance(fut, dict):
        _absolutize(fut, here)
    econ = d.get("economics")
    if isinstance(econ, dict) and isinstance(econ.get("future"), dict):
        _absolutize(econ["future"], here)


def _merge(base: dict, top: dict) -> dict:
    out = copy.deepcopy(base)
    for k, v in top.items():
        if isinstance(v, dict) and isinstance(out.get(k), dict):
            out[k] = _merge(out[k], v)
        else:
            out[k] = copy.deepcopy(v)
    return out


def read_scenario_dict(path, _chain=()) -> tuple[dict, list[Path]]:
    """Read a scenario file and its ``base`` chain into one dict with absolute table paths.

    Returns the merged dict and the list of scenario files read.
    """
    path = Path(path).resolve()
    if path in _chain:
        raise InputError("the scenario includes itself through 'base' (" +
                         " -> ".join(p.name for p in (*_chain, path)) + ")", path, key="base")
    d = _read_toml(path)
    _absolutize(d, path.parent)
    files = [path]
    base = d.pop("base", "")
    if base:
        if not isinstance(base, str):
            raise InputError("expected a file name", path, key="base")
        bpath = (path.parent / base).resolve()
        if not bpath.exists():
            raise InputError(f"base scenario '{base}' not found", path, key="base")
        bd, bfiles = read_scenario_dict(bpath, (*_chain, path))
        d = _merge(bd, d)
        files = bfiles + files
    return d, files


@dataclass(frozen=True, eq=False)
class Scenario:
    """A validated scenario: the ensemble, the model and the settings."""

    path: Path
    title: str
    description: str
    seed: int
    units: dict
    ensemble: object
    mode_params: dict
    model: object
    credible_level: float
    grid: dict
    uncertainty: dict
    checks: dict
    outputs: dict
    guidelines: dict
    sensitivity: dict
    alternatives: list
    economics: dict
    files: tuple = ()
    raw: dict = field(default_factory=dict)
    file_hashes: dict = field(default_factory=dict)  # SHA-256 of every input as read, keyed by relative path

    @property
    def variable(self):
        return self.ensemble.quantity


def _table_paths(obj) -> list:
    """Existing table files named anywhere inside alternatives or economics settings (for provenance)."""
    out = []
    if isinstance(obj, dict):
        for v in obj.values():
            out += _table_paths(v)
    elif isinstance(obj, list):
        for v in obj:
            out += _table_paths(v)
    elif isinstance(obj, str) and obj.lower().endswith((".csv", ".xlsx", ".xlsm")) and Path(obj).is_file():
        out.append(Path(obj))
    return out


def _hashes(files, scenario_path) -> dict:
    """SHA-256 of each file, keyed by its path relative to the scenario's folder (unique even when two
    inputs share a file name)."""
    import os

    from ..io import sha256

    here = Path(scenario_path).resolve().parent
    return {Path(os.path.relpath(Path(f).resolve(), here)).as_posix(): sha256(f) for f in files}


def load_scenario(path) -> Scenario:
    """Read and validate a scenario file and every table it names.

    Raises
    ------
    InputError
        On the first problem, with its file, key, row and column.
    """
    path = Path(path)
    d, files = read_scenario_dict(path)
    top = check_section("", d, path, "")
    if top["seed"] < 0:
        raise InputError(f"{top['seed']} is negative; expected an integer >= 0", path, key="seed")
    units = check_section("units", top["units"], path, "units.")
    if units["discharge"] not in DISCHARGE_UNITS:
        raise InputError(f"'{units['discharge']}' is not one of {', '.join(DISCHARGE_UNITS)}", path,
                         key="units.discharge")
    if units["stage"] not in STAGE_UNITS:
        raise InputError(f"'{units['stage']}' is not one of {', '.join(STAGE_UNITS)}", path, key="units.stage")
    if not units["currency"].isalpha():
        raise InputError(f"'{units['currency']}' is not a currency code such as usd or eur", path,
                         key="units.currency")
    units["currency"] = units["currency"].lower()
    hz = check_section("hazard", top["hazard"], path, "hazard.")
    if hz["variable"] not in ("discharge", "stage"):
        raise InputError(f"'{hz['variable']}' is not discharge or stage", path, key="hazard.variable")
    family = hz["family"].strip().lower()
    if family != "table" and family not in FAMILIES:
        raise InputError(f"unknown family '{hz['family']}'; expected one of {', '.join(FAMILIES)} or table", path,
                         key="hazard.family")
    _probability(hz["credible_level"], path, "hazard.credible_level")
    unit = units["discharge"] if hz["variable"] == "discharge" else units["stage"]
    _file_name(hz["ensemble"], path, "hazard.ensemble")
    ens = read_ensemble(hz["ensemble"], family, quantity=hz["variable"], unit=unit)
    if family == "table" and ens.quantity != hz["variable"]:
        raise InputError(f"the curve table gives {ens.quantity} but hazard.variable is {hz['variable']}", path,
                         key="hazard.variable")
    mode = hz["mode"]
    if mode:
        if family == "table":
            raise InputError("explicit mode parameters need a parametric family", path, key="hazard.mode")
        need = FAMILIES[family].parameters
        for k in mode:
            if k not in need:
                raise InputError(f"unknown parameter; expected {', '.join(need)}", path, key=f"hazard.mode.{k}")
        for k in need:
            if k not in mode or not isinstance(mode[k], (int, float)) or isinstance(mode[k], bool):
                raise InputError("missing or not a number", path, key=f"hazard.mode.{k}")
            if not math.isfinite(mode[k]):
                raise InputError(f"{mode[k]} is not finite", path, key=f"hazard.mode.{k}")
            if k in FAMILIES[family].positive and not mode[k] > 0:
                raise InputError(f"{mode[k]} must be greater than 0", path, key=f"hazard.mode.{k}")
    grid = check_section("grid", top["grid"], path, "grid.")
    _probability(grid["aep_max"], path, "grid.aep_max")
    _probability(grid["aep_min"], path, "grid.aep_min")
    if not grid["aep_min"] < grid["aep_max"]:
        raise InputError(f"{grid['aep_min']} must be below grid.aep_max = {grid['aep_max']}", path, key="grid.aep_min")
    if not 50 <= grid["points"] <= 200_000:
        raise InputError(f"{grid['points']} is outside 50 to 200000", path, key="grid.points")
    if grid["rule"] not in ("midpoint", "trapezoid"):
        raise InputError(f"'{grid['rule']}' is not midpoint or trapezoid", path, key="grid.rule")
    model = build_model(d, path, units, hz["variable"])
    unc = check_section("uncertainty", top["uncertainty"], path, "uncertainty.")
    if not 1 <= unc["draws_per_realization"] <= 10_000:
        raise InputError("expected 1 to 10000", path, key="uncertainty.draws_per_realization")
    if unc["workers"] < 0:
        raise InputError(f"{unc['workers']} is negative; expected 0 (the machine's cores) or a number of threads",
                         path, key="uncertainty.workers")
    checks = check_section("checks", top["checks"], path, "checks.")
    _probability(checks["design_aep"], path, "checks.design_aep")
    if not grid["aep_min"] <= checks["design_aep"] <= grid["aep_max"]:
        raise InputError(f"{checks['design_aep']} is outside the grid's AEP range [{grid['aep_min']}, "
                         f"{grid['aep_max']}]", path, key="checks.design_aep")
    if checks["years"] < 1:
        raise InputError("expected a number of years >= 1", path, key="checks.years")
    outputs = check_section("outputs", top["outputs"], path, "outputs.")
    inputs = [Path(hz["ensemble"])]
    if model.rating is not None:
        inputs.append(Path(model.rating.source))
    for m in model.failure_modes:
        inputs += [Path(n.source) for n in m.nodes if n.source]
    inputs.append(Path(model.consequences.source))
    inputs += _table_paths(top["alternatives"]) + _table_paths(top["economics"])
    all_files = tuple(dict.fromkeys([*files, *inputs]))
    return Scenario(path=path, title=top["title"], description=top["description"], seed=top["seed"], units=units,
                    ensemble=ens, mode_params={k: float(v) for k, v in mode.items()}, model=model,
                    credible_level=hz["credible_level"], grid=grid, uncertainty=unc, checks=checks, outputs=outputs,
                    guidelines=top["guidelines"], sensitivity=top["sensitivity"], alternatives=top["alternatives"],
                    economics=top["economics"], files=all_files, raw=d, file_hashes=_hashes(all_files, path))
