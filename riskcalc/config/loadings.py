"""Reading ``[[loadings]]`` (seismic, static and further flood loadings) and ``[[individual_risk]]``.

The scenario's own ``[hazard]``, ``[rating]``, ``[[failure_modes]]`` and
``[consequences]`` are its first loading, a flood; ``[[loadings]]`` adds others::

    [[loadings]]
    name = "earthquake"
    kind = "seismic"
    hazard = { table = "seismic_hazard.csv", weights = { low = 0.3, central = 0.5, high = 0.2 } }
    pool = { table = "pool_duration.csv", bins = 12 }
      [[loadings.failure_modes]]
      name = "crest settlement"
      median = 0.45              # median peak ground acceleration [g]
      beta = 0.35                # randomness
      median_log_sd = 0.3        # knowledge uncertainty of the median
      consequences = "seismic"   # a [consequence_tables] entry (default: the loading's, else [consequences])

    [[loadings]]
    name = "normal operation"
    kind = "static"
    pool = { stage = 214.5 }
      [[loadings.failure_modes]]
      name = "internal erosion at normal pool"
      annual_probability = { distribution = "lognormal", median = 2e-5, beta = 1.0 }

    [[loadings]]
    name = "second river"
    kind = "flood"
    scenario = "other_river.toml"   # that scenario's hazard, rating, failure modes and consequences
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InputError
from ..hazard.seismic import fixed_pool, read_pool_duration, read_seismic_hazard
from ..response.loadings import (
    AnnualProbability,
    FloodLoading,
    SeismicFragility,
    SeismicLoading,
    StaticFailureMode,
    StaticLoading,
)
from ..io import read_table
from .build import read_consequence_set, read_exposure
from .schema import _mode_key, check_section

__all__ = ["read_loadings", "read_individual_risk", "IndividualRiskGroup"]


def _pool(p, file, key, units, required):
    if p["table"] and p["stage"] is not None:
        raise InputError("give a pool-duration table or a fixed stage, not both", file, key=key)
    if p["table"]:
        return read_pool_duration(p["table"], p["bins"], units["stage"])
    if p["stage"] is not None:
        return fixed_pool(p["stage"])
    if required:
        raise InputError("expected a pool table (pool-duration table) or a fixed pool stage", file, key=key)
    return None


def _probability(a, file, key) -> AnnualProbability:
    d = a["distribution"]
    need = {
        "fixed": ("value",),
        "lognormal": ("median", "beta"),
        "triangular": ("low", "mode", "high"),
        "loguniform": ("low", "high"),
    }[d]
    for k in need:
        if a[k] is None:
            raise InputError(f"a {d} annual probability needs '{k}'", file, key=f"{key}.{k}")
    if d == "triangular" and not (a["low"] <= a["mode"] <= a["high"] and a["high"] > a["low"]):
        raise InputError("expected low <= mode <= high and high > low", file, key=key)
    if d == "loguniform" and not 0 < a["low"] < a["high"]:
        raise InputError("expected 0 < low < high", file, key=key)
    return AnnualProbability(d, **{k: float(a[k]) for k in need})


def _fragility_table(path, units, file, key):
    """A seismic fragility table: stage_<unit>, median, beta (median and β against pool level)."""
    what = "seismic fragility table"
    t = read_table(path, what=what)
    sc = t.stage_column(what=what, stage_unit=units["stage"])
    med_col = [c for c in t.columns if c == "median" or c.startswith("median_")]
    t.require((sc, med_col[0] if med_col else "median", "beta"), what=what)
    h = t.numbers(sc, what="a reservoir level")
    t.require_increasing(sc, h, what=what)
    med = t.numbers(med_col[0], positive=True, what="a median ground motion > 0")
    beta = t.numbers("beta", positive=True, what="a logarithmic standard deviation > 0")
    return h, med, beta


def read_loadings(d: dict, file, units: dict, chain, read_flood) -> tuple:
    """The ``[[loadings]]`` of a scenario dict as loading objects (validated, tables read).

    Parameters
    ----------
    read_flood : callable
        ``read_flood(path)`` loads the scenario of a further flood loading.
    """
    entries = d.get("loadings") or []
    if not entries:
        return ()
    exposure, ll = read_exposure(d, file)
    named = read_consequence_set(d, file, units, exposure, ll)
    out, seen = [], {"flood"}
    for i, e in enumerate(entries):
        key = f"loadings[{i + 1}]"
        if isinstance(e, dict) and "kind" in e and e["kind"] not in ("flood", "seismic", "static"):
            raise InputError(
                f"unknown loading kind '{e['kind']}'; expected flood, seismic or static", file, key=key + ".kind"
            )
        x = check_section("loading", e, file, key + ".")
        name = x["name"].strip()
        if name.lower() in seen:
            raise InputError(
                f"loading name '{name}' is used twice ('flood' is the scenario's own loading)", file, key=key + ".name"
            )
        seen.add(name.lower())
        kind = x["kind"]

        def cons_of(ref, k):
            if not ref:
                return None
            if ref not in named:
                have = ", ".join(named) or "none"
                raise InputError(
                    f"names consequence table '{ref}', which [consequence_tables] does not define (defined: {have})",
                    file,
                    key=k,
                )
            return named[ref]

        if kind == "flood":
            if not x["scenario"]:
                raise InputError(
                    "a flood loading needs 'scenario', the file of its scenario", file, key=key + ".scenario"
                )
            for k in ("hazard", "pool", "failure_modes", "consequences"):
                if x[k]:
                    raise InputError(
                        f"a flood loading takes '{k}' from its scenario file; remove it here", file, key=f"{key}.{k}"
                    )
            sub = read_flood(x["scenario"])
            if getattr(sub, "loadings", ()):
                raise InputError("the scenario of a flood loading must not have loadings itself", file, key=key)
            if sub.units != units:
                raise InputError("the loading's scenario uses other units than this one", file, key=key + ".scenario")
            out.append(FloodLoading(name, sub))
            continue
        if x["scenario"]:
            raise InputError(f"a {kind} loading takes no 'scenario'", file, key=key + ".scenario")
        default_cons = cons_of(x["consequences"], key + ".consequences") or chain.consequences
        fms = x["failure_modes"]
        if not fms:
            raise InputError("expected at least one [[loadings.failure_modes]] entry", file, key=key + ".failure_modes")
        pool = _pool(check_section("pool", x["pool"], file, key + ".pool."), file, key + ".pool", units, True)
        modes, names = [], set()
        for j, f in enumerate(fms):
            fk = f"{key}.failure_modes[{j + 1}]"
            fm = check_section("loading_failure_mode", f, file, fk + ".")
            if _mode_key(fm["name"]) in names:
                raise InputError(
                    f"failure-mode name '{fm['name']}' is used twice in this loading", file, key=fk + ".name"
                )
            names.add(_mode_key(fm["name"]))
            cons = cons_of(fm["consequences"], fk + ".consequences")
            if kind == "static":
                for k in ("median", "beta", "table"):
                    if fm[k] not in (None, ""):
                        raise InputError(
                            f"a static failure mode takes annual_probability, not '{k}'", file, key=f"{fk}.{k}"
                        )
                if not fm["annual_probability"]:
                    raise InputError(
                        "a static failure mode needs annual_probability", file, key=fk + ".annual_probability"
                    )
                a = check_section("annual_probability", fm["annual_probability"], file, fk + ".annual_probability.")
                modes.append(StaticFailureMode(fm["name"], _probability(a, file, fk + ".annual_probability"), cons))
            else:
                if fm["annual_probability"]:
                    raise InputError(
                        "a seismic failure mode takes a fragility (median and beta, or a table), not annual_probability",
                        file,
                        key=fk + ".annual_probability",
                    )
                if fm["table"]:
                    if fm["median"] is not None or fm["beta"] is not None:
                        raise InputError("give median and beta or a table, not both", file, key=fk + ".table")
                    h, med, beta = _fragility_table(fm["table"], units, file, fk)
                else:
                    for k in ("median", "beta"):
                        if fm[k] is None:
                            raise InputError(f"a seismic failure mode needs '{k}' (or a table)", file, key=f"{fk}.{k}")
                    h, med, beta = np.zeros(1), np.array([fm["median"]]), np.array([fm["beta"]])
                modes.append(SeismicFragility(fm["name"], h, med, beta, float(fm["median_log_sd"]), cons))
        if kind == "static":
            if x["hazard"]:
                raise InputError("a static loading has no hazard curve; remove 'hazard'", file, key=key + ".hazard")
            out.append(StaticLoading(name, pool, tuple(modes), default_cons, draws=x["draws"]))
        else:
            if not x["hazard"]:
                raise InputError(
                    "a seismic loading needs hazard = { table = ..., weights = {...} }", file, key=key + ".hazard"
                )
            hz = check_section("seismic_hazard", x["hazard"], file, key + ".hazard.")
            haz = read_seismic_hazard(hz["table"], hz["weights"], hz["mode"], file=file, key=key + ".hazard")
            out.append(
                SeismicLoading(name, haz, pool, tuple(modes), default_cons, points=hz["points"], draws=x["draws"])
            )
    return tuple(out)


class IndividualRiskGroup:
    """A location or group for individual risk: exposure, fatality rate given failure, failure modes counted."""

    def __init__(self, name, exposure, fatality_rate, failure_modes=()):
        self.name = name
        self.exposure = float(exposure)
        self.fatality_rate = float(fatality_rate)
        self.failure_modes = tuple(failure_modes)

    def __repr__(self):
        return f"IndividualRiskGroup({self.name!r}, {self.exposure}, {self.fatality_rate}, {self.failure_modes})"


def read_individual_risk(d: dict, file, all_modes) -> tuple:
    """The ``[[individual_risk]]`` groups; their failure-mode names checked against ``all_modes``.

    ``all_modes`` holds ``(loading, failure mode)`` pairs; a group names failure modes as
    ``"mode"`` (any loading) or ``"loading: mode"``.
    """
    out = []
    known = {_mode_key(m) for _, m in all_modes} | {_mode_key(f"{ln}: {m}") for ln, m in all_modes}
    for i, e in enumerate(d.get("individual_risk") or []):
        key = f"individual_risk[{i + 1}]"
        x = check_section("individual_risk", e, file, key + ".")
        for j, m in enumerate(x["failure_modes"]):
            if _mode_key(m) not in known:
                raise InputError(
                    f"'{m}' is not a failure mode of the study (name it as 'mode' or 'loading: mode')",
                    file,
                    key=f"{key}.failure_modes[{j + 1}]",
                )
        if not (math.isfinite(x["exposure"]) and math.isfinite(x["fatality_rate"])):
            raise InputError("expected finite numbers", file, key=key)
        out.append(IndividualRiskGroup(x["name"], x["exposure"], x["fatality_rate"], x["failure_modes"]))
    return tuple(out)
