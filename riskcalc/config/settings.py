"""The ``[sensitivity]`` table of a scenario: validated settings of a sensitivity analysis."""

from __future__ import annotations

import math
from dataclasses import dataclass
from ..errors import InputError
from ..sensitivity.factors import select_factors


@dataclass(frozen=True)
class SensitivitySettings:
    """Validated settings of a sensitivity analysis (see :func:`read_settings` for the keys)."""

    enabled: bool = False
    n: int = 1024
    seed: int = 1
    second_order: bool = False
    target_width: float | None = None
    n_max: int = 16384
    n_resamples: int = 100
    conf_level: float = 0.95
    groups: tuple = ()
    include: tuple = ()
    exclude: tuple = ()
    morris: bool = False
    morris_trajectories: int = 20
    morris_levels: int = 4
    gap_samples: int = 1024


#: key -> (type, what is expected)
_SETTINGS = {
    "enabled": (bool, "true or false"),
    "n": (int, "a power of two >= 16, e.g. 1024"),
    "seed": (int, "an integer >= 1"),
    "second_order": (bool, "true or false"),
    "target_width": (float, "a confidence half-width in (0, 1), e.g. 0.05"),
    "n_max": (int, "a power of two >= n"),
    "n_resamples": (int, "an integer from 10 to 10000"),
    "conf_level": (float, "a level in (0, 1), e.g. 0.95"),
    "groups": (dict, "a table of group = [factor names]"),
    "include": (list, "a list of factor names"),
    "exclude": (list, "a list of factor names"),
    "morris": (bool, "true or false"),
    "morris_trajectories": (int, "an integer from 4 to 1000"),
    "morris_levels": (int, "an even integer from 2 to 20"),
    "gap_samples": (int, "a power of two from 64 to 65536"),
}


def _pow2(v):
    return v >= 2 and not v & (v - 1)


def read_settings(raw, file=None, *, default_seed: int = 1, factors=None, overrides=None) -> SensitivitySettings:
    """Validate a scenario's ``[sensitivity]`` table.

    Parameters
    ----------
    raw : dict
        The table as read from TOML (``scenario.sensitivity``); empty for defaults.
    file : path, optional
        The scenario file, for messages.
    default_seed : int
        Seed when the table gives none (the scenario's seed; 0 becomes 1, since
        SALib treats seed 0 as no seed).
    factors : sequence of RiskFactor, optional
        When given, names in ``groups``, ``include`` and ``exclude`` are checked against them.
    overrides : dict, optional
        Values from the command line (keys as in the table, checked the same way, named ``--key``).

    Keys
    ----
    enabled (false), n (1024), seed, second_order (false), target_width (none: no doubling),
    n_max (16384), n_resamples (100), conf_level (0.95), groups ({}), include ([]), exclude ([]),
    morris (false), morris_trajectories (20), morris_levels (4), gap_samples (1024).

    Raises
    ------
    InputError
        Naming the file and the key ``sensitivity.<key>`` and what was expected.
    """
    raw = {} if raw is None else raw
    if not isinstance(raw, dict):
        raise InputError("expected a table of settings", file, key="sensitivity")
    vals = {}
    sources = [(raw, lambda k: f"sensitivity.{k}")]
    if overrides:
        sources.append(({k: v for k, v in overrides.items() if v is not None},
                        lambda k: f"--{k.replace('_', '-')}"))
    for d, keyname in sources:
        for k, v in d.items():
            if k not in _SETTINGS:
                raise InputError(f"unknown key; expected one of {', '.join(sorted(_SETTINGS))}", file, key=keyname(k))
            typ, what = _SETTINGS[k]
            if typ is float and isinstance(v, int) and not isinstance(v, bool):
                v = float(v)
            if (typ is int and isinstance(v, bool)) or not isinstance(v, typ):
                raise InputError(f"got {v!r}; expected {what}"[:160], file, key=keyname(k))
            _check_value(k, v, what, file, keyname(k))
            vals[k] = (v, keyname(k))
    get = {k: v for k, (v, _) in vals.items()}
    seed = get.get("seed", default_seed if default_seed and default_seed > 0 else 1)
    n = get.get("n", 1024)
    n_max = get.get("n_max", max(16384, n))
    if n_max < n:
        raise InputError(f"{n_max} is below n = {n}; expected a power of two >= n", file,
                         key=vals["n_max"][1] if "n_max" in vals else "sensitivity.n_max")
    groups = get.get("groups", {})
    gkey = vals["groups"][1] if "groups" in vals else "sensitivity.groups"
    gtuple, seen = [], {}
    for g, members in groups.items():
        if not isinstance(members, list) or not members or not all(isinstance(m, str) for m in members):
            raise InputError("expected a non-empty list of factor names", file, key=f"{gkey}.{g}")
        for m in members:
            if m in seen:
                raise InputError(f"factor '{m}' is already in group '{seen[m]}'; a factor belongs to one group",
                                 file, key=f"{gkey}.{g}")
            seen[m] = g
        gtuple.append((str(g), tuple(members)))
    lists = {}
    for k in ("include", "exclude"):
        items = get.get(k, [])
        if not all(isinstance(m, str) for m in items):
            raise InputError("expected a list of factor names (text)", file,
                             key=vals[k][1] if k in vals else f"sensitivity.{k}")
        lists[k] = tuple(items)
    s = SensitivitySettings(
        enabled=get.get("enabled", False), n=n, seed=seed, second_order=get.get("second_order", False),
        target_width=get.get("target_width"), n_max=n_max, n_resamples=get.get("n_resamples", 100),
        conf_level=get.get("conf_level", 0.95), groups=tuple(gtuple), include=lists["include"],
        exclude=lists["exclude"], morris=get.get("morris", False),
        morris_trajectories=get.get("morris_trajectories", 20), morris_levels=get.get("morris_levels", 4),
        gap_samples=get.get("gap_samples", 1024))
    if factors is not None:
        select_factors(factors, s, file, keys={k: v[1] for k, v in vals.items()})
    return s


def _check_value(k, v, what, file, key):
    ok = True
    if k == "n":
        ok = _pow2(v) and v >= 16
    elif k == "n_max":
        ok = _pow2(v) and v >= 16
    elif k == "seed":
        ok = v >= 1
    elif k == "target_width":
        ok = math.isfinite(v) and 0 < v < 1
    elif k == "conf_level":
        ok = 0 < v < 1
    elif k == "n_resamples":
        ok = 10 <= v <= 10000
    elif k == "morris_trajectories":
        ok = 4 <= v <= 1000
    elif k == "morris_levels":
        ok = 2 <= v <= 20 and v % 2 == 0
    elif k == "gap_samples":
        ok = _pow2(v) and 64 <= v <= 65536
    if not ok:
        raise InputError(f"got {v!r}; expected {what}", file, key=key)


def sensitivity_enabled(scenario) -> bool:
    """True when the scenario's ``[sensitivity]`` table says ``enabled = true`` (the run then adds indices)."""
    s = getattr(scenario, "sensitivity", None) or {}
    return isinstance(s, dict) and s.get("enabled") is True
