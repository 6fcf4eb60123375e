"""The ``[sensitivity]`` table of a scenario: validated settings of a sensitivity analysis."""

from __future__ import annotations

from dataclasses import dataclass, fields
from ..errors import InputError
from ..sensitivity.factors import select_factors
from .schema import SCHEMA, check_value, validate


@dataclass(frozen=True)
class SensitivitySettings:
    """Validated settings of a sensitivity analysis (see :func:`read_settings`; the keys are declared in
    ``SCHEMA["sensitivity"]`` of :mod:`riskcalc.config.schema`)."""

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
    grow: bool = True
    estimator: str = "janon"
    grid_target_error: float = 0.01

    @property
    def target(self) -> float | None:
        """The half-width the sample grows to: ``target_width``, else the warning level when ``grow``."""
        if self.target_width is not None:
            return self.target_width
        if self.grow:
            from ..sensitivity.salib import WIDE_INTERVAL

            return WIDE_INTERVAL
        return None


def settings_table(s: SensitivitySettings) -> dict:
    """A :class:`SensitivitySettings` as a ``[sensitivity]`` table (the inverse of :func:`read_settings`)."""
    out = {}
    for f in fields(s):
        v = getattr(s, f.name)
        if f.name == "groups":
            v = {g: list(m) for g, m in v}
        elif isinstance(v, tuple):
            v = list(v)
        if v is not None:
            out[f.name] = v
    return out


def read_settings(raw, file=None, *, default_seed: int = 1, factors=None, overrides=None) -> SensitivitySettings:
    """Validate a scenario's ``[sensitivity]`` table.

    Parameters
    ----------
    raw : dict or SensitivitySettings
        The table as read from TOML; empty or None for defaults. Settings
        already validated (``scenario.sensitivity``) are taken as a table of
        every value.
    file : path, optional
        The scenario file, for messages.
    default_seed : int
        Seed when the table gives none (the scenario's seed; 0 becomes 1, since
        SALib treats seed 0 as no seed).
    factors : sequence of RiskFactor, optional
        When given, names in ``groups``, ``include`` and ``exclude`` are checked against them.
    overrides : dict, optional
        Values from the command line (keys as in the table, checked by the same
        schema, named ``--key``); None values are ignored.

    Keys
    ----
    enabled (false), n (1024: the first sample size), seed, second_order (false), target_width (none:
    the warning level 0.1 when ``grow``), n_max (16384, or n when larger), n_resamples (100),
    conf_level (0.95), groups ({}), include ([]), exclude ([]), morris (false), morris_trajectories (20),
    morris_levels (4), gap_samples (1024), grow (true: double n until every confidence half-width is
    below the target or n reaches n_max; false with no target_width: one sample of size n),
    estimator ("janon" or "saltelli"), grid_target_error (0.01: the indices are computed on the grid of
    every second node when its grid error is below this share of every headline figure).

    Raises
    ------
    InputError
        Naming the file and the key ``sensitivity.<key>`` (or ``--key``) and what was expected.
    """
    if isinstance(raw, SensitivitySettings):
        raw = settings_table(raw)
    raw = {} if raw is None else raw
    if not isinstance(raw, dict):
        raise InputError("expected a table of settings", file, key="sensitivity")
    spec = SCHEMA["sensitivity"]
    vals = validate("sensitivity", raw, file, "sensitivity.")
    keys = {k: f"sensitivity.{k}" for k in spec}
    for k, v in (overrides or {}).items():
        if v is None:
            continue
        key = "--" + k.replace("_", "-")
        if k not in spec:
            raise InputError(f"unknown option; expected one of {', '.join(sorted(spec))}", file, key=key)
        vals[k] = check_value(spec[k], v, file, key)
        keys[k] = key
    if vals["seed"] is None:
        vals["seed"] = default_seed if default_seed and default_seed > 0 else 1
    n = vals["n"]
    if vals["n_max"] is None:
        vals["n_max"] = max(16384, n)
    elif vals["n_max"] < n:
        raise InputError(f"{vals['n_max']} is below n = {n}; expected a power of two >= n", file, key=keys["n_max"])
    seen: dict = {}
    for g, members in vals["groups"].items():
        for m in members:
            if m in seen:
                raise InputError(
                    f"factor '{m}' is already in group '{seen[m]}'; a factor belongs to one group",
                    file,
                    key=f"{keys['groups']}.{g}",
                )
            seen[m] = g
    vals["groups"] = tuple((g, tuple(m)) for g, m in vals["groups"].items())
    vals["include"], vals["exclude"] = tuple(vals["include"]), tuple(vals["exclude"])
    s = SensitivitySettings(**vals)
    if factors is not None:
        select_factors(factors, s, file, keys=keys)
    return s


def sensitivity_enabled(scenario) -> bool:
    """True when the scenario's ``[sensitivity]`` table says ``enabled = true`` (the run then adds indices)."""
    s = getattr(scenario, "sensitivity", None)
    if isinstance(s, SensitivitySettings):
        return s.enabled
    return isinstance(s, dict) and s.get("enabled") is True
