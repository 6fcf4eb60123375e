"""Building the response chain (rating, failure modes, consequences, uncertain inputs) from a validated scenario dict."""

from __future__ import annotations

import math
from ..response.consequences import Multiplier, read_consequence_table
from ..errors import InputError
from .schema import _file_name, _mode_key, check_section
from ..response.chain import RiskModel
from ..response import FailureMode, FragilityCurve, StageSpread, read_fragility_table, read_rating_table


def _multiplier(d, file, key):
    m = check_section("multiplier", d, file, key + ".")
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
        r = check_section("rating", rd, file, "rating.")
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
            r = check_section("rating", {"table": "-", **rd}, file, "rating.")
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
        f = check_section("failure_mode", fm, file, key + ".")
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
            n = check_section("node", nd, file, nkey + ".")
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
    c = check_section("consequences", d.get("consequences"), file, "consequences.")
    _file_name(c["table"], file, "consequences.table")
    cons = read_consequence_table(c["table"], stage_unit=stage_u, currency=cur)
    dm = _multiplier(c["damage_multiplier"], file, "consequences.damage_multiplier")
    lm = _multiplier(c["life_loss_multiplier"], file, "consequences.life_loss_multiplier")
    cons = type(cons)(**{**cons.__dict__, "damage_multiplier": dm, "life_loss_multiplier": lm})
    unc = check_section("uncertainty", d.get("uncertainty", {}), file, "uncertainty.")
    if not 2 <= unc["hermite_nodes"] <= 64:
        raise InputError("expected 2 to 64 quadrature nodes", file, key="uncertainty.hermite_nodes")
    return RiskModel(modes=tuple(modes), consequences=cons, rating=rating, natural=natural,
                     rating_offset_sd=offset_sd, hermite_nodes=unc["hermite_nodes"])
