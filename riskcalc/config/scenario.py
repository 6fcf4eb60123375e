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

from ..response.consequences import Multiplier, read_consequence_table
from ..errors import InputError
from ..hazard import read_ensemble
from ..hazard.families import FAMILIES
from ..response.chain import RiskModel
from ..response import FailureMode, FragilityCurve, StageSpread, read_fragility_table, read_rating_table

__all__ = ["Scenario", "load_scenario", "read_scenario_dict", "SCHEMA"]

DISCHARGE_UNITS = ("m3s", "cfs")
STAGE_UNITS = ("m", "ft")

#: The keys each section accepts: key -> (type, default). None default: required.
SCHEMA = {
    "": {"title": (str, "untitled scenario"), "description": (str, ""), "seed": (int, 20240601),
         "base": (str, ""), "units": (dict, {}), "hazard": (dict, None), "grid": (dict, {}),
         "rating": (dict, {}), "failure_modes": (list, None), "consequences": (dict, None),
         "uncertainty": (dict, {}), "checks": (dict, {}), "outputs": (dict, {}), "guidelines": (dict, {}),
         "sensitivity": (dict, {}), "alternatives": (list, []), "economics": (dict, {})},
    "units": {"discharge": (str, "m3s"), "stage": (str, "m"), "currency": (str, "usd")},
    "hazard": {"variable": (str, "discharge"), "family": (str, None), "ensemble": (str, None),
               "credible_level": (float, 0.9), "mode": (dict, {})},
    "grid": {"points": (int, 2000), "aep_max": (float, 0.999), "aep_min": (float, 1e-7),
             "rule": (str, "midpoint")},
    "rating": {"table": (str, None), "extrapolation": (str, "extend"), "natural_sd": (float, 0.0),
               "knowledge_sd": (float, 0.0)},
    "failure_mode": {"name": (str, None), "shift_sd": (float, 0.0), "spread_range": (list, []),
                     "nodes": (list, None)},
    "node": {"name": (str, "node"), "kind": (str, None), "median": (float, math.nan),
             "spread": (float, math.nan), "datum": (float, 0.0), "table": (str, "")},
    "consequences": {"table": (str, None), "damage_multiplier": (dict, {}), "life_loss_multiplier": (dict, {})},
    "multiplier": {"distribution": (str, "fixed"), "low": (float, 1.0), "mode": (float, 1.0), "high": (float, 1.0),
                   "median": (float, 1.0), "beta": (float, 0.0)},
    "uncertainty": {"draws_per_realization": (int, 1), "hermite_nodes": (int, 16), "workers": (int, 0)},
    "checks": {"design_aep": (float, 0.01), "years": (int, 50)},
    "outputs": {"figures": (bool, True), "memo": (bool, True)},
}

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


def _check(section: str, d, file, prefix: str):
    """Validate keys and types of one table against SCHEMA[section]; returns a dict with defaults filled."""
    spec = SCHEMA[section]
    if not isinstance(d, dict):
        raise InputError("expected a table of settings", file, key=prefix.rstrip(".") or section)
    out = {}
    for k in d:
        if k not in spec:
            raise InputError(f"unknown key; expected one of {', '.join(sorted(spec))}", file, key=prefix + k)
    for k, (typ, default) in spec.items():
        if k not in d:
            if default is None:
                raise InputError("missing required key", file, key=prefix + k)
            out[k] = copy.deepcopy(default)
            continue
        v = d[k]
        if typ is float and isinstance(v, int) and not isinstance(v, bool):
            v = float(v)
        if typ is float and isinstance(v, float) and not math.isfinite(v):
            raise InputError(f"{v} is not finite", file, key=prefix + k)
        if typ is int and isinstance(v, bool) or not isinstance(v, typ):
            raise InputError(f"expected {_typename(typ)}, got {_typename(type(v))} {v!r}"[:160], file, key=prefix + k)
        out[k] = v
    return out


def _typename(t):
    return {str: "text", int: "an integer", float: "a number", bool: "true or false", dict: "a table",
            list: "a list"}.get(t, t.__name__)


def _file_name(v, file, key):
    """Refuse an empty table path (it would otherwise resolve to the scenario's folder)."""
    if not str(v).strip():
        raise InputError("is empty; expected the name of a .csv or .xlsx table", file, key=key)
    return v


def _mode_key(name: str) -> str:
    """A failure-mode name as it appears in table columns and summary keys (spaces -> '_', any case)."""
    return "_".join(str(name).split()).lower()


def _probability(v, file, key, open_=True):
    if not (0 < v < 1 if open_ else 0 <= v <= 1):
        raise InputError(f"{v} is outside {'(0, 1)' if open_ else '[0, 1]'}; expected a probability", file, key=key)


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
    model: RiskModel
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


def _multiplier(d, file, key):
    m = _check("multiplier", d, file, key + ".")
    try:
        return Multiplier(**m)
    except ValueError as exc:
        raise InputError(str(exc), file, key=key) from None


def build_model(d: dict, file, units: dict, variable: str) -> RiskModel:
    """The response and consequence model from the scenario dict (validated here)."""
    stage_u, q_u, cur = units["stage"], units["discharge"], units["currency"]
    rating = natural = None
    rd = d.get("rating") or {}
    if variable == "discharge":
        if not rd:
            raise InputError("a discharge hazard needs a [rating] table (discharge to stage)", file, key="rating")
        r = _check("rating", rd, file, "rating.")
        if r["extrapolation"] not in ("refuse", "extend"):
            raise InputError(f"'{r['extrapolation']}' is not refuse or extend", file, key="rating.extrapolation")
        for k in ("natural_sd", "knowledge_sd"):
            if r[k] < 0:
                raise InputError(f"{r[k]} is negative; expected a standard deviation >= 0", file, key=f"rating.{k}")
        _file_name(r["table"], file, "rating.table")
        rating, spread = read_rating_table(r["table"], discharge_unit=q_u, stage_unit=stage_u,
                                           extrapolation=r["extrapolation"])
        natural = spread if spread is not None else (StageSpread(sd=r["natural_sd"]) if r["natural_sd"] > 0 else None)
        offset_sd = r["knowledge_sd"]
    else:
        if rd:
            r = _check("rating", {"table": "-", **rd}, file, "rating.")
            if rd.get("table"):
                raise InputError("a stage hazard needs no rating table; remove [rating].table", file,
                                 key="rating.table")
            natural = StageSpread(sd=r["natural_sd"]) if r["natural_sd"] > 0 else None
            offset_sd = r["knowledge_sd"]
        else:
            offset_sd = 0.0
    fms = d.get("failure_modes")
    if not isinstance(fms, list) or not fms:
        raise InputError("expected at least one [[failure_modes]] entry", file, key="failure_modes")
    modes, seen = [], set()
    for i, fm in enumerate(fms):
        key = f"failure_modes[{i + 1}]"
        f = _check("failure_mode", fm, file, key + ".")
        if not f["name"].strip():
            raise InputError("is empty; expected a failure-mode name", file, key=key + ".name")
        if _mode_key(f["name"]) in seen:
            raise InputError(f"failure-mode name '{f['name']}' is used twice (names are compared ignoring case and "
                             "with spaces as '_', as in the output tables); names must be unique", file,
                             key=key + ".name")
        seen.add(_mode_key(f["name"]))
        if f["shift_sd"] < 0:
            raise InputError("expected a standard deviation >= 0", file, key=key + ".shift_sd")
        sr = f["spread_range"]
        if sr:
            if len(sr) != 2 or not all(isinstance(v, (int, float)) for v in sr) or not 0 < sr[0] <= sr[1]:
                raise InputError("expected [low, high] with 0 < low <= high", file, key=key + ".spread_range")
        if not f["nodes"]:
            raise InputError("expected at least one [[failure_modes.nodes]] entry", file, key=key + ".nodes")
        nodes = []
        for j, nd in enumerate(f["nodes"]):
            nkey = f"{key}.nodes[{j + 1}]"
            n = _check("node", nd, file, nkey + ".")
            if n["kind"] == "table":
                if not n["table"]:
                    raise InputError("a table node needs a 'table' file", file, key=nkey + ".table")
                node = read_fragility_table(n["table"], stage_unit=stage_u, name=n["name"])
            elif n["kind"] in ("normal", "lognormal"):
                if n["table"]:
                    raise InputError(f"a {n['kind']} node takes median and spread, not a table", file,
                                     key=nkey + ".table")
                for k in ("median", "spread"):
                    if math.isnan(n[k]):
                        raise InputError("missing required key", file, key=f"{nkey}.{k}")
                try:
                    node = FragilityCurve(n["kind"], name=n["name"], median=n["median"], spread=n["spread"],
                                          datum=n["datum"])
                except ValueError as exc:
                    raise InputError(str(exc), file, key=nkey) from None
            else:
                raise InputError(f"'{n['kind']}' is not normal, lognormal or table", file, key=nkey + ".kind")
            nodes.append(node)
        modes.append(FailureMode(f["name"], tuple(nodes), f["shift_sd"], tuple(float(v) for v in sr) if sr else None))
    c = _check("consequences", d.get("consequences"), file, "consequences.")
    _file_name(c["table"], file, "consequences.table")
    cons = read_consequence_table(c["table"], stage_unit=stage_u, currency=cur)
    dm = _multiplier(c["damage_multiplier"], file, "consequences.damage_multiplier")
    lm = _multiplier(c["life_loss_multiplier"], file, "consequences.life_loss_multiplier")
    cons = type(cons)(**{**cons.__dict__, "damage_multiplier": dm, "life_loss_multiplier": lm})
    unc = _check("uncertainty", d.get("uncertainty", {}), file, "uncertainty.")
    if not 2 <= unc["hermite_nodes"] <= 64:
        raise InputError("expected 2 to 64 quadrature nodes", file, key="uncertainty.hermite_nodes")
    return RiskModel(modes=tuple(modes), consequences=cons, rating=rating, natural=natural,
                     rating_offset_sd=offset_sd, hermite_nodes=unc["hermite_nodes"])


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
    top = _check("", d, path, "")
    if top["seed"] < 0:
        raise InputError(f"{top['seed']} is negative; expected an integer >= 0", path, key="seed")
    units = _check("units", top["units"], path, "units.")
    if units["discharge"] not in DISCHARGE_UNITS:
        raise InputError(f"'{units['discharge']}' is not one of {', '.join(DISCHARGE_UNITS)}", path,
                         key="units.discharge")
    if units["stage"] not in STAGE_UNITS:
        raise InputError(f"'{units['stage']}' is not one of {', '.join(STAGE_UNITS)}", path, key="units.stage")
    if not units["currency"].isalpha():
        raise InputError(f"'{units['currency']}' is not a currency code such as usd or eur", path,
                         key="units.currency")
    units["currency"] = units["currency"].lower()
    hz = _check("hazard", top["hazard"], path, "hazard.")
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
    grid = _check("grid", top["grid"], path, "grid.")
    _probability(grid["aep_max"], path, "grid.aep_max")
    _probability(grid["aep_min"], path, "grid.aep_min")
    if not grid["aep_min"] < grid["aep_max"]:
        raise InputError(f"{grid['aep_min']} must be below grid.aep_max = {grid['aep_max']}", path, key="grid.aep_min")
    if not 50 <= grid["points"] <= 200_000:
        raise InputError(f"{grid['points']} is outside 50 to 200000", path, key="grid.points")
    if grid["rule"] not in ("midpoint", "trapezoid"):
        raise InputError(f"'{grid['rule']}' is not midpoint or trapezoid", path, key="grid.rule")
    model = build_model(d, path, units, hz["variable"])
    unc = _check("uncertainty", top["uncertainty"], path, "uncertainty.")
    if not 1 <= unc["draws_per_realization"] <= 10_000:
        raise InputError("expected 1 to 10000", path, key="uncertainty.draws_per_realization")
    if unc["workers"] < 0:
        raise InputError(f"{unc['workers']} is negative; expected 0 (the machine's cores) or a number of threads",
                         path, key="uncertainty.workers")
    checks = _check("checks", top["checks"], path, "checks.")
    _probability(checks["design_aep"], path, "checks.design_aep")
    if not grid["aep_min"] <= checks["design_aep"] <= grid["aep_max"]:
        raise InputError(f"{checks['design_aep']} is outside the grid's AEP range [{grid['aep_min']}, "
                         f"{grid['aep_max']}]", path, key="checks.design_aep")
    if checks["years"] < 1:
        raise InputError("expected a number of years >= 1", path, key="checks.years")
    outputs = _check("outputs", top["outputs"], path, "outputs.")
    inputs = [Path(hz["ensemble"])]
    if model.rating is not None:
        inputs.append(Path(model.rating.source))
    for m in model.modes:
        inputs += [Path(n.source) for n in m.nodes if n.source]
    inputs.append(Path(model.consequences.source))
    inputs += _table_paths(top["alternatives"]) + _table_paths(top["economics"])
    all_files = tuple(dict.fromkeys([*files, *inputs]))
    return Scenario(path=path, title=top["title"], description=top["description"], seed=top["seed"], units=units,
                    ensemble=ens, mode_params={k: float(v) for k, v in mode.items()}, model=model,
                    credible_level=hz["credible_level"], grid=grid, uncertainty=unc, checks=checks, outputs=outputs,
                    guidelines=top["guidelines"], sensitivity=top["sensitivity"], alternatives=top["alternatives"],
                    economics=top["economics"], files=all_files, raw=d, file_hashes=_hashes(all_files, path))
