"""Building the response chain (rating, failure modes, consequences, uncertain inputs) from a validated scenario dict."""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from ..errors import InputError
from ..response import FailureMode, FragilityCurve, StageSpread, read_fragility_table, read_rating_table
from ..response import uncertain as unc_
from ..response.chain import ResponseChain
from ..response.consequences import read_consequence_table, with_exposure
from ..response.life_loss import ExposureScenario
from .schema import _file_name, _mode_key, check_section

__all__ = ["build_model", "read_exposure", "read_consequence_set"]


def read_exposure(d: dict, file) -> tuple:
    """The ``[[exposure]]`` scenarios (weights adding up to 1) and the ``[life_loss]`` settings."""
    ll = check_section("life_loss", d.get("life_loss") or {}, file, "life_loss.")
    out, seen = [], set()
    entries = d.get("exposure") or []
    for i, e in enumerate(entries):
        key = f"exposure[{i + 1}]"
        x = check_section("exposure", e, file, key + ".")
        if x["name"].strip().lower() in seen:
            raise InputError(f"exposure scenario '{x['name']}' is named twice", file, key=key + ".name")
        seen.add(x["name"].strip().lower())
        hours = x["warning_hours"] if x["warning_hours"] is not None else ll["warning_hours"]
        out.append(
            ExposureScenario(
                x["name"],
                x["weight"],
                x["population_factor"],
                hours,
                x["understanding"] or ll["understanding"],
            )
        )
    if out:
        total = sum(e.weight for e in out)
        if abs(total - 1.0) > 1e-9:
            raise InputError(
                f"the exposure weights add up to {total:.6g}; expected 1 (each is the scenario's probability given a "
                "failure)",
                file,
                key="exposure",
            )
    elif ll["warning_hours"] is not None:
        out.append(ExposureScenario("all", 1.0, 1.0, ll["warning_hours"], ll["understanding"]))
    return tuple(out), ll


def _exposed(cons, exposure, ll, file, key):
    """The consequence curves with their exposure scenarios (and Graham's rates where the table asks for them)."""
    if not exposure and not cons.needs_rates:
        return cons
    if cons.needs_rates and not exposure:
        raise InputError(
            "the table gives depth x velocity for Graham's fatality rates; set [life_loss] warning_hours (or "
            "warning_hours in every [[exposure]] scenario)",
            file,
            key=key,
        )
    try:
        return with_exposure(cons, exposure, high_severity_from=ll["high_severity_from_m2s"])
    except ValueError as exc:
        raise InputError(str(exc), file, key="exposure") from None


def read_consequence_set(d: dict, file, units: dict, exposure=(), ll=None) -> dict:
    """The named breach-consequence tables of ``[consequence_tables]``, with the exposure scenarios applied."""
    ll = ll or check_section("life_loss", {}, file, "life_loss.")
    named = {}
    for name, path in (d.get("consequence_tables") or {}).items():
        key = f"consequence_tables.{name}"
        _file_name(path, file, key)
        c = read_consequence_table(path, stage_unit=units["stage"], currency=units["currency"])
        named[name] = _exposed(c, exposure, ll, file, key)
    return named


def _multiplier(kind, d, file, key):
    """A consequence multiplier: an uncertain parameter, or a constant factor (None, value)."""
    m = check_section("multiplier", d, file, key + ".")
    dist = m["distribution"]
    if dist not in ("fixed", "triangular", "lognormal"):
        raise InputError(f"multiplier distribution '{dist}' is not fixed, triangular or lognormal", file, key=key)
    if dist == "triangular":
        if not (0 <= m["low"] <= m["mode"] <= m["high"] and m["high"] > m["low"]):
            raise InputError("a triangular multiplier needs 0 <= low <= mode <= high and high > low", file, key=key)
        return unc_.consequence_factor(kind, dist, low=m["low"], mode=m["mode"], high=m["high"]), 1.0
    if dist == "lognormal":
        if not (m["median"] > 0 and m["beta"] >= 0):
            raise InputError("a lognormal multiplier needs median > 0 and beta >= 0", file, key=key)
        if m["beta"] == 0:  # no spread: a constant factor
            return None, m["median"]
        return unc_.consequence_factor(kind, dist, median=m["median"], beta=m["beta"]), 1.0
    return None, m["mode"]


def build_model(d: dict, file, units: dict, variable: str) -> ResponseChain:
    """The response chain from the scenario dict (validated here), with its registry of uncertain inputs.

    Uncertain inputs are declared in the order rating offset, then per failure mode its shift and spread
    factor, then the damage and life-loss multipliers (the order of the Monte Carlo draws). Inputs
    without spread (a zero standard deviation, a range of one value, a fixed multiplier, a lognormal
    multiplier with beta 0) are not uncertain: a constant factor is folded into the curves it scales.
    """
    stage_u, q_u, cur = units["stage"], units["discharge"], units["currency"]
    rating = natural = None
    rd = d.get("rating") or {}
    if variable == "discharge":
        if not rd:
            raise InputError("a discharge hazard needs a [rating] table (discharge to stage)", file, key="rating")
        r = check_section("rating", rd, file, "rating.")
        if r["extrapolation"] not in ("refuse", "extend"):
            raise InputError(f"'{r['extrapolation']}' is not refuse or extend", file, key="rating.extrapolation")
        for k in ("natural_sd", "knowledge_sd"):
            if r[k] < 0:
                raise InputError(f"{r[k]} is negative; expected a standard deviation >= 0", file, key=f"rating.{k}")
        _file_name(r["table"], file, "rating.table")
        rating, spread = read_rating_table(
            r["table"], discharge_unit=q_u, stage_unit=stage_u, extrapolation=r["extrapolation"]
        )
        natural = spread if spread is not None else (StageSpread(sd=r["natural_sd"]) if r["natural_sd"] > 0 else None)
        offset_sd = r["knowledge_sd"]
    else:
        if rd:
            r = check_section("rating", {"table": "-", **rd}, file, "rating.")
            if rd.get("table"):
                raise InputError(
                    "a stage hazard needs no rating table; remove [rating].table", file, key="rating.table"
                )
            natural = StageSpread(sd=r["natural_sd"]) if r["natural_sd"] > 0 else None
            offset_sd = r["knowledge_sd"]
        else:
            offset_sd = 0.0
    fms = d.get("failure_modes")
    if not isinstance(fms, list) or not fms:
        raise InputError("expected at least one [[failure_modes]] entry", file, key="failure_modes")
    modes, seen, own = [], set(), []
    params = [unc_.rating_offset(float(offset_sd))] if offset_sd > 0 else []
    for i, fm in enumerate(fms):
        key = f"failure_modes[{i + 1}]"
        f = check_section("failure_mode", fm, file, key + ".")
        if not f["name"].strip():
            raise InputError("is empty; expected a failure-mode name", file, key=key + ".name")
        if _mode_key(f["name"]) in seen:
            raise InputError(
                f"failure-mode name '{f['name']}' is used twice (names are compared ignoring case and "
                "with spaces as '_', as in the output tables); names must be unique",
                file,
                key=key + ".name",
            )
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
            n = check_section("node", nd, file, nkey + ".")
            if n["kind"] == "table":
                if not n["table"]:
                    raise InputError("a table node needs a 'table' file", file, key=nkey + ".table")
                node = read_fragility_table(n["table"], stage_unit=stage_u, name=n["name"])
            elif n["kind"] in ("normal", "lognormal"):
                if n["table"]:
                    raise InputError(
                        f"a {n['kind']} node takes median and spread, not a table", file, key=nkey + ".table"
                    )
                for k in ("median", "spread"):
                    if math.isnan(n[k]):
                        raise InputError("missing required key", file, key=f"{nkey}.{k}")
                try:
                    node = FragilityCurve(
                        n["kind"], name=n["name"], median=n["median"], spread=n["spread"], datum=n["datum"]
                    )
                except ValueError as exc:
                    raise InputError(str(exc), file, key=nkey) from None
            else:
                raise InputError(f"'{n['kind']}' is not normal, lognormal or table", file, key=nkey + ".kind")
            nodes.append(node)
        mode = FailureMode(f["name"], tuple(nodes))
        own.append(f["consequences"] or None)
        if f["shift_sd"] > 0:
            params.append(unc_.fragility_shift(i, f["name"], float(f["shift_sd"])))
        if sr and mode.has_spread:
            lo, hi = float(sr[0]), float(sr[1])
            if hi > lo:
                params.append(unc_.fragility_spread(i, f["name"], lo, hi))
            elif lo != 1.0:  # a range of one value: a constant factor on the spreads
                mode = FailureMode(
                    mode.name,
                    tuple(dataclasses.replace(n, spread=n.spread * lo) if n.kind != "table" else n for n in mode.nodes),
                )
        modes.append(mode)
    c = check_section("consequences", d.get("consequences"), file, "consequences.")
    _file_name(c["table"], file, "consequences.table")
    cons = read_consequence_table(c["table"], stage_unit=stage_u, currency=cur)
    exposure, ll = read_exposure(d, file)
    cons = _exposed(cons, exposure, ll, file, "consequences.table")
    named = read_consequence_set(d, file, units, exposure, ll)
    mode_cons = []
    for i, name in enumerate(own):
        if name is not None and name not in named:
            have = ", ".join(named) or "none"
            raise InputError(
                f"names consequence table '{name}', which [consequence_tables] does not define (defined: {have})",
                file,
                key=f"failure_modes[{i + 1}].consequences",
            )
        mode_cons.append(None if name is None else named[name])
    dm, d_const = _multiplier("damage", c["damage_multiplier"], file, "consequences.damage_multiplier")
    lm, l_const = _multiplier("life_loss", c["life_loss_multiplier"], file, "consequences.life_loss_multiplier")
    lm = _graham_range(lm, [cons, *named.values()], ll, c["life_loss_multiplier"], file)
    if d_const != 1.0 or l_const != 1.0:
        cons = cons.scaled(d_const, l_const)
        mode_cons = [None if m is None else m.scaled(d_const, l_const) for m in mode_cons]
    params += [p for p in (dm, lm) if p is not None]
    unc = check_section("uncertainty", d.get("uncertainty", {}), file, "uncertainty.")
    if not 2 <= unc["hermite_nodes"] <= 64:
        raise InputError("expected 2 to 64 quadrature nodes", file, key="uncertainty.hermite_nodes")
    return ResponseChain(
        failure_modes=tuple(modes),
        consequences=cons,
        rating=rating,
        natural=natural,
        uncertain=unc_.UncertainInputs(tuple(params), len(modes)),
        hermite_nodes=unc["hermite_nodes"],
        mode_consequences=tuple(mode_cons) if any(m is not None for m in mode_cons) else (),
    )


def _graham_range(lm, tables, ll, given, file=None):
    """The life-loss multiplier: the user's, else triangular over Graham's range where rates come from it.

    Graham (1999) gives a range with each suggested rate; riskcalc takes it as one triangular factor on life
    loss (low, 1, high), low and high the population-weighted life loss at the ends of the ranges relative
    to the suggested rates (one factor for all rows: the rates are taken to err together); with several
    tables, the envelope of their ranges (smallest low, largest high). The factor scales every life loss of
    the scenario, so it is applied only when every table with breach life loss takes its rates from
    Graham's method; mixed tables need the scenario's own multiplier. Graham's ranges are skewed
    upwards, so the factor's mean (low + 1 + high) / 3 exceeds 1: the predictive life loss is larger than
    with the suggested rates alone (e.g. by 7.7 % for a range of 0.22 to 2.01).
    """
    if given or ll["rate_uncertainty"] == "none":
        return lm
    ranges = [t.rate_range for t in tables if t.rate_range is not None]
    if not ranges:
        return lm
    other = [t for t in tables if t.rate_range is None and np.any(t.life_loss_breach != 0)]
    if other:
        raise InputError(
            "some consequence tables take fatality rates from Graham's method and others do not; give "
            "[consequences] life_loss_multiplier (it scales all life loss) or set [life_loss] rate_uncertainty = "
            '"none"',
            file,
            key="consequences.life_loss_multiplier",
        )
    lo = min(r[0] for r in ranges)
    hi = max(r[1] for r in ranges)
    if not hi > lo:
        return lm
    return unc_.consequence_factor("life_loss", "triangular", low=lo, mode=1.0, high=hi)
