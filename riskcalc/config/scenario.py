"""Scenario files: one TOML file that names the tables and settings of a risk run.

Table paths are relative to the file that names them. A scenario may start
from another with ``base = "other.toml"``: its tables are merged key by key
under this file's (lists, such as ``failure_modes``, are replaced whole). An
annotated example is ``docs/scenario-format.md``.

Every problem is an :class:`~riskcalc.errors.InputError` naming the file and
the key (and row and column for tables).
"""

from __future__ import annotations

from typing import Any

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
from .schema import SCHEMA, check_section, validate


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
    if text.startswith("\ufeff"):  # a byte-order mark, as some Windows editors write
        text = text[1:]
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
    hz = d.get("hazard")
    fit = hz.get("fit") if isinstance(hz, dict) else None
    if isinstance(fit, dict):
        for key in ("peaks", "thresholds"):
            if isinstance(fit.get(key), str) and fit[key]:
                fit[key] = str((here / fit[key]).resolve())
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
    ct = d.get("consequence_tables")
    if isinstance(ct, dict):
        for k, v in ct.items():
            if isinstance(v, str) and v:
                ct[k] = str((here / v).resolve())
    for ld in d.get("loadings", []) or []:
        if not isinstance(ld, dict):
            continue
        if isinstance(ld.get("scenario"), str) and ld["scenario"]:
            ld["scenario"] = str((here / ld["scenario"]).resolve())
        for sect in ("hazard", "pool"):
            s = ld.get(sect)
            if isinstance(s, dict) and isinstance(s.get("table"), str) and s["table"]:
                s["table"] = str((here / s["table"]).resolve())
        for fm in ld.get("failure_modes", []) or []:
            if isinstance(fm, dict) and isinstance(fm.get("table"), str) and fm["table"]:
                fm["table"] = str((here / fm["table"]).resolve())
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
        raise InputError(
            "the scenario includes itself through 'base' (" + " -> ".join(p.name for p in (*_chain, path)) + ")",
            path,
            key="base",
        )
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
    """A validated scenario: the ensemble, the model and the settings.

    Attributes
    ----------
    path : Path
    title, description : str
    seed : int
    units : dict
        ``discharge``, ``stage``, ``currency`` (lower case).
    ensemble : HazardEnsemble
    mode_params : dict
        Explicit mode-curve parameters (empty: the largest log posterior).
    model : ResponseChain
    credible_level : float
    grid, uncertainty, checks, outputs : dict
        The sections with their defaults filled.
    guidelines : GuidelineSet or None
        The ``[guidelines]`` section; None when the scenario has none (the
        published display defaults are then used).
    sensitivity : SensitivitySettings
        The ``[sensitivity]`` section, its factor names checked against the model.
    alternatives : tuple of Alternative
        The ``[[alternatives]]`` entries; every plan's model has been built once
        to validate it.
    economics : EconomicSettings or None
        The ``[economics]`` section; None when the scenario has none.
    structure : {"dam", "levee", "unspecified"}
        The kind of structure (chooses the default reference lines).
    files : tuple of Path
        Every file read (scenario chain and tables).
    raw : dict
        The merged scenario dict with absolute table paths (alternatives merge over it).
    file_hashes : dict
        SHA-256 of every input as read, keyed by relative path.
    hazard_fit : FitResult or None
        The frequency fit that made ``ensemble``, when ``[hazard]`` has a ``fit`` table.
    """

    path: Path
    title: str
    description: str
    seed: int
    units: dict
    ensemble: Any
    mode_params: dict
    model: Any
    credible_level: float
    grid: dict
    uncertainty: dict
    checks: dict
    outputs: dict
    guidelines: Any
    sensitivity: Any
    alternatives: tuple
    economics: Any
    structure: str = "unspecified"
    loadings: tuple = ()
    individual_risk: tuple = ()
    files: tuple = ()
    raw: dict = field(default_factory=dict)
    file_hashes: dict = field(default_factory=dict)  # SHA-256 of every input as read, keyed by relative path
    hazard_fit: Any = None  # the FitResult when [hazard] has a fit table

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


def read_units(d, file) -> dict:
    """The ``[units]`` section, the currency in lower case."""
    units = validate("units", d, file, "units.")
    if not units["currency"].isalpha():
        raise InputError(f"'{units['currency']}' is not a currency code such as usd or eur", file, key="units.currency")
    units["currency"] = units["currency"].lower()
    return units


def read_hazard(d, file, prefix: str = "hazard.") -> tuple:
    """Validate a ``[hazard]`` section without reading its ensemble.

    Returns
    -------
    hz : dict
        The section with defaults filled.
    family : str
        The family in lower case (``"table"`` for a curve table).
    mode_params : dict
        Explicit mode-curve parameters as floats (empty when none are given).
    """
    hz = validate("hazard", d, file, prefix)
    if "fit" in hz:
        if "ensemble" in hz:
            raise InputError("give either an ensemble file or a fit table, not both", file, key=prefix + "ensemble")
        hz.setdefault("family", hz["fit"]["family"])
        if hz["family"].strip().lower() != hz["fit"]["family"]:
            raise InputError(
                f"'{hz['family']}' differs from {prefix}fit.family = '{hz['fit']['family']}'; expected the same family",
                file,
                key=prefix + "family",
            )
    for k in ("family", "ensemble"):
        if k not in hz and not (k == "ensemble" and "fit" in hz):
            expect = SCHEMA["hazard"][k].expect
            raise InputError(f"missing required key; expected {expect}", file, key=prefix + k)
    family = hz["family"].strip().lower()
    if family != "table" and family not in FAMILIES:
        raise InputError(
            f"unknown family '{hz['family']}'; expected one of {', '.join(FAMILIES)} or table",
            file,
            key=prefix + "family",
        )
    mode = hz["mode"]
    if mode:
        if family == "table":
            raise InputError("explicit mode parameters need a parametric family", file, key=prefix + "mode")
        need = FAMILIES[family].parameters
        for k in mode:
            if k not in need:
                raise InputError(f"unknown parameter; expected {', '.join(need)}", file, key=f"{prefix}mode.{k}")
        for k in need:
            if k not in mode or not isinstance(mode[k], (int, float)) or isinstance(mode[k], bool):
                raise InputError("missing or not a number", file, key=f"{prefix}mode.{k}")
            if not math.isfinite(mode[k]):
                raise InputError(f"{mode[k]} is not finite", file, key=f"{prefix}mode.{k}")
            if k in FAMILIES[family].positive and not mode[k] > 0:
                raise InputError(f"{mode[k]} must be greater than 0", file, key=f"{prefix}mode.{k}")
    return hz, family, {k: float(v) for k, v in mode.items()}


def read_hazard_fit(hz: dict, file, units: dict, seed: int, prefix: str = "hazard."):
    """Run the fit of a validated ``[hazard]`` section's ``fit`` table; returns the ``FitResult``.

    The fit's seed is ``fit.seed``, else the scenario's ``seed``.
    """
    from ..hazard.fit import fit_from_files

    f = hz["fit"]
    unit = units["discharge"] if hz["variable"] == "discharge" else units["stage"]
    p = prefix + "fit."
    fit = fit_from_files(
        f["peaks"],
        f["family"],
        thresholds=f.get("thresholds"),
        draws=f["draws"],
        seed=seed if f["seed"] is None else f["seed"],
        shape_prior=f["shape_prior"],
        regional_skew=f["regional_skew"],
        regional_skew_mse=f["regional_skew_mse"],
        where=file,
        keys={k: p + k for k in ("family", "draws", "shape_prior", "regional_skew", "regional_skew_mse")},
    )
    if fit.record.unit is not None and fit.record.unit != unit:
        raise InputError(
            f"the peaks are in '{fit.record.unit}' but the scenario's unit is '{unit}'", file, key=p + "peaks"
        )
    return fit


def read_hazard_ensemble(hz: dict, family: str, file, units: dict, prefix: str = "hazard.", seed: int = 0):
    """Read the ensemble a validated ``[hazard]`` section names (see :func:`read_hazard`), or fit it."""
    if "fit" in hz:
        return read_hazard_fit(hz, file, units, seed, prefix).ensemble(quantity=hz["variable"])
    unit = units["discharge"] if hz["variable"] == "discharge" else units["stage"]
    ens = read_ensemble(hz["ensemble"], family, quantity=hz["variable"], unit=unit)
    if family == "table" and ens.quantity != hz["variable"]:
        raise InputError(
            f"the curve table gives {ens.quantity} but hazard.variable is {hz['variable']}",
            file,
            key=prefix + "variable",
        )
    return ens


def load_scenario(path) -> Scenario:
    """Read and validate a scenario file and every table it names, refusing all that a run would refuse.

    Every section is validated against :data:`riskcalc.config.schema.SCHEMA`
    before any table is read; then the ensemble and the tables are read, the
    model is built, the ``[sensitivity]`` factor names are checked against the
    model's active factors, and every alternative's model (and the future-year
    condition of ``[economics]``, its ensemble included) is built once. Nothing
    is computed beyond reading and checking the inputs.

    Raises
    ------
    InputError
        On the first problem, with its file, key, row and column.
    """
    from ..sensitivity.factors import scenario_factors, select_factors
    from .decision import check_plans, read_alternatives, read_economics
    from .guidelines import read_guidelines
    from .settings import read_settings

    path = Path(path)
    d, files = read_scenario_dict(path)
    top = check_section("", d, path, "")
    units = read_units(top["units"], path)
    hz, family, mode = read_hazard(top["hazard"], path)
    grid = validate("grid", top["grid"], path, "grid.")
    if not grid["aep_min"] < grid["aep_max"]:
        raise InputError(f"{grid['aep_min']} must be below grid.aep_max = {grid['aep_max']}", path, key="grid.aep_min")
    unc = validate("uncertainty", top["uncertainty"], path, "uncertainty.")
    checks = validate("checks", top["checks"], path, "checks.")
    if not grid["aep_min"] <= checks["design_aep"] <= grid["aep_max"]:
        raise InputError(
            f"{checks['design_aep']} is outside the grid's AEP range [{grid['aep_min']}, {grid['aep_max']}]",
            path,
            key="checks.design_aep",
        )
    outputs = validate("outputs", top["outputs"], path, "outputs.")
    sensitivity = read_settings(top["sensitivity"], path, default_seed=top["seed"])
    guidelines = read_guidelines(top["guidelines"], path) if top["guidelines"] else None
    alternatives = read_alternatives(top["alternatives"], path, unc) if top["alternatives"] else ()
    economics = read_economics(top["economics"], path) if top["economics"] or alternatives else None
    # the tables (a [hazard] fit table is fitted here, once)
    hazard_fit = read_hazard_fit(hz, path, units, top["seed"]) if "fit" in hz else None
    if hazard_fit is not None:
        ens = hazard_fit.ensemble(quantity=hz["variable"])
    else:
        ens = read_hazard_ensemble(hz, family, path, units)
    model = build_model(d, path, units, hz["variable"])
    select_factors(scenario_factors(model), sensitivity, path)
    check_plans(d, path, units, ens, mode, unc["draws_per_realization"], economics, alternatives)
    # the grid (cheap): an ensemble that spans no range, a rating table under "refuse" that does not cover it
    from ..risk.assess import build_grid

    build_grid(ens, (model,), grid, mode)
    from .loadings import read_individual_risk, read_loadings

    loadings = read_loadings(d, path, units, model, load_scenario)
    all_modes = [("flood", m) for m in model.failure_mode_names] + [
        (ld.name, m) for ld in loadings for m in ld.failure_mode_names
    ]
    individual = read_individual_risk(d, path, all_modes)
    if hazard_fit is not None:
        inputs = [Path(hz["fit"]["peaks"])] + ([Path(hz["fit"]["thresholds"])] if "thresholds" in hz["fit"] else [])
    else:
        inputs = [Path(hz["ensemble"])]
    if model.rating is not None:
        inputs.append(Path(model.rating.source))
    for m in model.failure_modes:
        inputs += [Path(n.source) for n in m.nodes if n.source]
    inputs.append(Path(model.consequences.source))
    inputs += _table_paths(top["alternatives"]) + _table_paths(top["economics"])
    inputs += _table_paths(top["consequence_tables"]) + _table_paths(top["loadings"])
    for ld in loadings:
        if ld.kind == "flood":
            inputs += list(ld.scenario.files)
    all_files = tuple(dict.fromkeys([*files, *inputs]))
    return Scenario(
        path=path,
        title=top["title"],
        description=top["description"],
        seed=top["seed"],
        units=units,
        ensemble=ens,
        mode_params=mode,
        model=model,
        credible_level=hz["credible_level"],
        grid=grid,
        uncertainty=unc,
        checks=checks,
        outputs=outputs,
        guidelines=guidelines,
        sensitivity=sensitivity,
        alternatives=alternatives,
        economics=economics,
        structure=top["structure"],
        loadings=loadings,
        individual_risk=individual,
        files=all_files,
        raw=d,
        file_hashes=_hashes(all_files, path),
        hazard_fit=hazard_fit,
    )
