"""The scenario schema: the keys each section accepts, their types and defaults, and the one-line errors."""

from __future__ import annotations

import copy
import math
from ..errors import InputError


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


def check_section(section: str, d, file, prefix: str):
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
