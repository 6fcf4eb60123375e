"""Where the risk lies against each tolerable-risk reference line, and with what confidence.

Each line is compared with the figure it limits, and only with that one:

* an annual failure probability line with the AFP;
* a life-loss line ``f N = c`` (an f-N line) with the f-N point ``(AFP, N = ALL_inc / AFP)``, where
  ``ALL_inc`` is the life loss caused by failure (given breach minus given no breach);
* an F-N limit line with the F-N curve, anywhere in the line's N range
  (:func:`riskcalc.decision.guidelines.check_fn_curve`, the curve read as the step function it is);
* an individual-risk line with the individual risk of the most exposed person (the largest over the
  scenario's ``[[individual_risk]]`` groups); without such groups the line is "not assessed".

Every comparison has a *position*: ``"above"`` (ratio computed / line > 1), ``"below"``, ``"not
applicable"`` (an f-N point whose N lies outside the line's N range, or an F-N curve with no point in
it: the line says nothing there, which is not the same as "below") or ``"not assessed"``.

The *confidence* against a line is the weighted share of the epistemic Monte Carlo draws whose figure
lies above it, e.g. ``P(AFP > 1e-4) = 0.62`` [design notes, "Study structure and reporting rules"]:
``sum_d w_d 1[figure_d above the line]`` with the draws' weights (``Propagation.weights``, summing to 1).
The shares below and not applicable are given beside it; the three add up to 1. For an F-N line the
per-draw F-N curves are used when the propagation keeps them (``fn_per_draw``); otherwise the F-N curve
of every hazard realization with the nominal response and the ensemble weights, and the result says so.

Everything here is a pure function of its inputs; :func:`reference_checks` reads a
:class:`~riskcalc.risk.records.RiskResult`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .guidelines import (
    FNLimitLine,
    ProbabilityLine,
    check_fn_curve,
    check_point,
    evaluate_line,
    scenario_guideline_set,
    structure_note,
)

__all__ = [
    "POSITIONS",
    "KIND_TEXT",
    "NOT_ASSESSED",
    "Figures",
    "definition",
    "position",
    "point_ratios",
    "curve_ratios",
    "draw_shares",
    "line_checks",
    "count_positions",
    "reference_checks",
    "draw_fn_curves",
    "summary_line",
]

#: The positions of a figure against a line.
POSITIONS = ("above", "below", "not applicable", "not assessed")

#: What each kind of line is called in tables.
KIND_TEXT = {
    "fn_limit": "F-N limit line",
    "life_loss": "annualized life loss line",
    "probability": "annual failure probability line",
    "individual_risk": "individual risk line",
}

#: Why an individual-risk line has no position.
NOT_ASSESSED = "not assessed (the scenario defines no [[individual_risk]] group)"

_COMPARED = {
    "fn_limit": "F-N curve (anywhere in the line's N range)",
    "life_loss": "f-N point (AFP at N = ALL_inc / AFP)",
    "probability": "AFP",
    "individual_risk": NOT_ASSESSED,
}


@dataclass(frozen=True)
class Figures:
    """The figures placed against the lines: one measure (predictive, mode) or the per-draw sample.

    Attributes
    ----------
    afp : float or ndarray (D,)
        Annual failure probability [1/yr].
    all_incremental : float or ndarray (D,)
        Annualized life loss caused by failure [lives/yr]; negative values (a failure that saves lives on
        the consequence table) are taken as 0.
    fn : ndarray (L,) or (M, L), optional
        F-N curve(s) at the common ``levels`` [1/yr]; None when not available.
    """

    afp: object
    all_incremental: object
    fn: object = None


def _kind(line) -> str:
    if isinstance(line, ProbabilityLine) and not line.on_chart:
        return "individual_risk"
    return line.kind


def definition(line) -> str:
    """The line in one phrase: ``'F = 0.001 × (N / 1)^-1, 1 ≤ N ≤ 1000'``, ``'f × N = 0.01 lives/yr'``."""
    if line.kind == "fn_limit":
        rng = f"{line.n_min:g} ≤ N ≤ {line.n_max:g}" if math.isfinite(line.n_max) else f"N ≥ {line.n_min:g}"
        return f"F = {line.anchor_f:g} × (N / {line.anchor_n:g})^{line.slope:g}, {rng}"
    if line.kind == "life_loss":
        text = f"f × N = {line.value:g} lives/yr"
        if line.n_min > 0 or math.isfinite(line.n_max):
            hi = f"{line.n_max:g}" if math.isfinite(line.n_max) else "∞"
            text += f", {line.n_min:g} {'≤' if line.n_min > 0 else '<'} N ≤ {hi}"
        return text
    if line.measure == "individual_risk":
        return f"individual risk {line.value:g} per year"
    return f"AFP = {line.value:g} per year"


def position(ratio) -> str:
    """``"above"`` for a ratio > 1, ``"below"`` for a finite ratio <= 1, ``"not applicable"`` for NaN/None."""
    if ratio is None or not math.isfinite(float(ratio)):
        return "not applicable"
    return "above" if float(ratio) > 1 else "below"


def point_ratios(line, afp, all_incremental):
    """Ratio computed / line of f-N points or AFP values, vectorized; NaN where the line does not apply.

    Parameters
    ----------
    line : LifeLossLine or ProbabilityLine (annual failure probability)
        F-N limit lines limit curves, not points: refused.
    afp, all_incremental : float or array_like
        Paired; ``all_incremental`` below 0 is taken as 0.

    Returns
    -------
    ratio, n, limit : ndarray
        ``ALL_inc / c`` (life-loss line) or ``AFP / value``; ``N = ALL_inc / AFP``; the line at ``N``.
    """
    if isinstance(line, FNLimitLine):
        raise ValueError(f"'{line.name}' is an F-N limit line: it limits the F-N curve, not an f-N point")
    life = np.maximum(np.asarray(all_incremental, float), 0.0)
    pc = check_point(line, np.asarray(afp, float), life)
    return pc.ratio, pc.n, pc.limit


def curve_ratios(line, levels, fn):
    """Largest ratio of F-N curve(s) to an F-N limit line over the line's N range, vectorized over curves.

    Parameters
    ----------
    line : FNLimitLine
    levels : array_like (L,)
        Life-loss levels of the curves [lives], strictly increasing.
    fn : array_like (L,) or (M, L)
        Annual probability of ``levels[k]`` or more fatalities [1/yr].

    Returns
    -------
    ratio, n_at : ndarray (shape ``fn.shape[:-1]``)
        :func:`~riskcalc.decision.guidelines.check_fn_curve`'s largest ratio and where it is taken. A curve
        with no point in the line's range is 0 (below) when its last value is 0 and the range lies beyond
        its last level (an F-N curve does not rise with N, so it is 0 all the way along the line), and NaN
        (not applicable: the curve is not known there) otherwise.
    """
    if not isinstance(line, FNLimitLine):
        raise ValueError(f"'{line.name}' is not an F-N limit line")
    lv = np.asarray(levels, float)
    f = np.asarray(fn, float)
    cc = check_fn_curve(line, lv, f)
    ratio = np.asarray(cc.max_ratio, float)
    n_at = np.asarray(cc.n_at_max, float)
    zero_beyond = (f[..., -1] == 0) & (line.n_min >= lv[-1])
    ratio = np.where(np.isnan(ratio) & zero_beyond, 0.0, ratio)
    return ratio, n_at


def draw_shares(ratio, weights) -> dict:
    """Weighted shares of draws above, below and not applicable to a line.

    Parameters
    ----------
    ratio : array_like (D,)
        Ratio computed / line of every draw; NaN where the line does not apply.
    weights : array_like (D,)
        Draw weights (normalized here).

    Returns
    -------
    dict
        ``share_above`` = ``sum_d w_d 1[ratio_d > 1] / sum_d w_d``, ``share_below``, ``share_not_applicable``
        and ``count`` (the number of draws).
    """
    r = np.asarray(ratio, float)
    w = np.asarray(weights, float)
    if r.shape != w.shape:
        raise ValueError(f"ratio and weights must be paired; shapes {r.shape} and {w.shape}")
    total = float(w.sum())
    if not total > 0:
        raise ValueError("the draw weights must sum to a positive number")
    na = np.isnan(r)
    above = float(w[~na & (np.where(na, 0.0, r) > 1)].sum()) / total
    n_a = float(w[na].sum()) / total
    return {
        "share_above": above,
        "share_below": max(0.0, 1.0 - above - n_a),
        "share_not_applicable": n_a,
        "count": int(r.size),
    }


def _place(line, levels, fig: Figures):
    """(computed, limit, ratio, n) of one measure against one line; None when the line cannot be checked."""
    k = _kind(line)
    if k == "fn_limit":
        if fig.fn is None:
            return None
        ratio, n = (float(x) for x in curve_ratios(line, levels, fig.fn))
        limit = float(evaluate_line(line, n)) if math.isfinite(n) else math.nan
        return (ratio * limit if math.isfinite(ratio) and math.isfinite(limit) else math.nan), limit, ratio, n
    ratio, n, limit = (float(np.asarray(x)) for x in point_ratios(line, fig.afp, fig.all_incremental))
    if k == "probability":
        return float(fig.afp), line.value, ratio, math.nan
    return float(fig.afp), limit, ratio, n


def line_checks(
    lines,
    levels,
    predictive: Figures,
    mode: Figures,
    draws: Figures,
    weights,
    fn_weights=None,
    fn_basis: str = "",
    individual=(),
) -> list[dict]:
    """Every line against the predictive and mode figures, with the confidence over the draws.

    Parameters
    ----------
    lines : sequence of lines
        :class:`~riskcalc.decision.guidelines.FNLimitLine`, ``LifeLossLine`` and ``ProbabilityLine``.
    levels : array_like (L,) or None
        Life-loss levels of every F-N curve given.
    predictive, mode : Figures
        Scalars (and one F-N curve each).
    draws : Figures
        Arrays ``(D,)`` paired with ``weights``; ``draws.fn`` ``(M, L)`` paired with ``fn_weights``.
    weights : array_like (D,)
    fn_weights : array_like (M,), optional
        Default ``weights``.
    fn_basis : str
        What the rows of ``draws.fn`` are, said in the result.
    individual : sequence of IndividualRisk, optional
        Individual risks (:func:`riskcalc.risk.loadings.individual_risks`); an individual-risk line is
        compared with the largest (predictive, mode and per draw, its draws paired with ``weights``).

    Returns
    -------
    list of dict
        One per line: ``line``, ``source``, ``kind`` (``fn_limit``, ``life_loss``, ``probability`` or
        ``individual_risk``), ``kind_text``, ``definition``, ``compared_with``, ``predictive`` and ``mode``
        (``computed_per_yr``, ``limit_per_yr``, ``ratio``, ``n_lives``, ``position``), and ``draws``
        (:func:`draw_shares` and its ``basis``; None for an individual-risk line or when no per-draw F-N
        curves are kept).
    """
    w = np.asarray(weights, float)
    fw = w if fn_weights is None else np.asarray(fn_weights, float)
    out = []
    for ln in lines:
        k = _kind(ln)
        row = {
            "line": ln.name,
            "source": ln.source,
            "kind": k,
            "kind_text": KIND_TEXT[k],
            "definition": definition(ln),
            "compared_with": _COMPARED[k],
        }
        if k == "individual_risk" and individual:
            pv = max(x.predictive for x in individual)
            mv = max(x.mode for x in individual)
            for name, v in (("predictive", pv), ("mode", mv)):
                ratio = v / ln.value
                row[name] = {
                    "computed_per_yr": v,
                    "limit_per_yr": ln.value,
                    "ratio": ratio,
                    "n_lives": None,
                    "position": position(ratio),
                }
            d = np.max(np.stack([np.asarray(x.draws, float) for x in individual]), axis=0)
            row["draws"] = {
                **draw_shares(d / ln.value, np.asarray(individual[0].weights, float)),
                "basis": "the largest individual risk over the groups in every Monte Carlo draw",
            }
            row["compared_with"] = (
                "individual risk of the most exposed person (largest over the [[individual_risk]] groups)"
            )
            out.append(row)
            continue
        if k == "individual_risk":
            blank = {
                "computed_per_yr": None,
                "limit_per_yr": ln.value,
                "ratio": None,
                "n_lives": None,
                "position": "not assessed",
            }
            out.append({**row, "predictive": dict(blank), "mode": dict(blank), "draws": None})
            continue
        for name, fig in (("predictive", predictive), ("mode", mode)):
            placed = _place(ln, levels, fig)
            if placed is None:
                row[name] = {
                    "computed_per_yr": None,
                    "limit_per_yr": None,
                    "ratio": None,
                    "n_lives": None,
                    "position": "not applicable",
                }
                continue
            comp, limit, ratio, n = placed
            row[name] = {
                "computed_per_yr": comp,
                "limit_per_yr": limit,
                "ratio": ratio,
                "n_lives": n,
                "position": position(ratio),
            }
        if k == "fn_limit":
            if draws.fn is None:
                row["draws"] = None
            else:
                ratio, _ = curve_ratios(ln, levels, draws.fn)
                row["draws"] = {**draw_shares(ratio, fw), "basis": fn_basis or "the F-N curve of every draw"}
        else:
            ratio, _, _ = point_ratios(ln, draws.afp, draws.all_incremental)
            what = "AFP" if k == "probability" else "f-N point (AFP, ALL_inc)"
            row["draws"] = {**draw_shares(ratio, w), "basis": f"the {what} of every Monte Carlo draw"}
        out.append(row)
    return out


def count_positions(checks: list[dict]) -> dict:
    """How many lines the predictive and the mode figures lie above (and how many do not apply).

    Returns
    -------
    dict
        ``{"predictive": {position: count}, "mode": {...}, "lines_assessed": n, "lines_not_assessed": j}``;
        every position of :data:`POSITIONS` but "not assessed" is a key of the inner dicts.
    """
    assessed = [c for c in checks if c["predictive"]["position"] != "not assessed"]
    out = {"lines_assessed": len(assessed), "lines_not_assessed": len(checks) - len(assessed)}
    for m in ("predictive", "mode"):
        out[m] = {p: sum(1 for c in assessed if c[m]["position"] == p) for p in POSITIONS[:3]}
    return out


def draw_fn_curves(result):
    """The per-draw F-N curves of a run, their weights and what they are.

    Returns
    -------
    fn : ndarray (M, L) or None
        ``propagation.fn_per_draw`` when the propagation keeps it (paired with ``propagation.weights``);
        else ``propagation.fn_per_realization`` with the ensemble weights; None when neither is kept.
    weights : ndarray (M,) or None
    basis : str
    """
    prop = result.propagation
    fpd = getattr(prop, "fn_per_draw", None)
    if fpd is not None:
        return np.asarray(fpd, float), np.asarray(prop.weights, float), "the F-N curve of every Monte Carlo draw"
    fpr = getattr(prop, "fn_per_realization", None)
    if fpr is not None:
        basis = "the F-N curve of every hazard realization (ensemble weights)"
        if result.scenario.model.has_knowledge_uncertainty:
            basis += " with the nominal response: the sampled response uncertainty is not in this share"
        return np.asarray(fpr, float), np.asarray(result.scenario.ensemble.weights, float), basis
    return None, None, "the per-draw F-N curves were not kept (too many realizations × levels)"


def reference_checks(result, guidelines=None) -> dict:
    """The reference lines of a run against its predictive and mode figures, with the confidence per line.

    Parameters
    ----------
    result : RiskResult
    guidelines : GuidelineSet, optional
        Default: the scenario's lines (:func:`~riskcalc.decision.guidelines.scenario_guideline_set`: its
        ``[guidelines]``, else the defaults of its ``structure``).

    Returns
    -------
    dict
        Plain JSON values (the ``reference_lines`` block of summary.json): ``structure``, ``lines_from``
        (``"scenario"`` or ``"defaults"``), ``note``, ``lines`` (:func:`line_checks`), ``counts``
        (:func:`count_positions`), ``confidence`` (what the shares mean) and ``individual_risk``.
    """
    from ..io import to_plain

    sc = result.scenario
    structure = getattr(sc, "structure", "unspecified") or "unspecified"
    if guidelines is None:
        gs, origin = scenario_guideline_set(sc)
    else:
        gs, origin = guidelines, "given"
    study = getattr(result, "study", None)
    individual = tuple(getattr(result, "individual_risk", ()) or ())
    if study is None:
        prop = result.propagation
        levels = np.asarray(result.fn["levels"], float)
        vp, vm = result.values_predictive, result.values_mode
        fn_d, fn_w, basis = draw_fn_curves(result)
        pred = Figures(vp["afp"], vp["all_incremental"], np.asarray(result.fn["predictive"], float))
        mode = Figures(vm["afp"], vm["all_incremental"], np.asarray(result.fn["mode"], float))
        draws = Figures(prop.column("afp"), prop.column("all_incremental"), fn_d)
        weights = prop.weights
    else:  # the total over loadings, with paired draws
        levels = np.asarray(study.fn.levels, float)
        tp, tm = study.predictive, study.mode
        pred = Figures(tp["afp"], tp["all_incremental"], np.asarray(study.fn.predictive, float))
        mode = Figures(tm["afp"], tm["all_incremental"], np.asarray(study.fn.mode, float))
        fn_d = study.fn_draws
        draws = Figures(study.draws["afp"], study.draws["all_incremental"], fn_d)
        weights, fn_w = study.weights, study.weights
        basis = (
            "the F-N curve of every paired draw of the loadings (total)"
            if fn_d is not None
            else "the per-draw F-N curves were not kept (too many realizations × levels)"
        )
    checks = line_checks(gs.lines, levels, pred, mode, draws, weights, fn_w, basis, individual=individual)
    return to_plain(
        {
            "structure": structure,
            "lines_from": origin,
            "note": structure_note(structure, "scenario" if origin == "given" else origin),
            "lines": checks,
            "counts": count_positions(checks),
            "confidence": "share of draws above a line = the weighted share of the epistemic Monte Carlo draws whose "
            "figure lies above it (AFP for an AFP line, the f-N point for a life-loss line, the F-N "
            "curve anywhere in the line's N range for an F-N limit line)",
            "individual_risk": [x.as_dict() for x in individual] if individual else NOT_ASSESSED,
        }
    )


def summary_line(ref: dict) -> str:
    """One line for the command line: how many lines the predictive and the mode figures exceed.

    Parameters
    ----------
    ref : dict
        :func:`reference_checks`.
    """
    c = ref["counts"]
    n = c["lines_assessed"]
    p, m = c["predictive"], c["mode"]
    if ref.get("lines_from") == "defaults":
        which = {"dam": "defaults for a dam", "levee": "defaults for a levee"}.get(
            ref.get("structure"), "defaults for a dam; structure not given"
        )
    else:
        which = "the scenario's [guidelines]"
    text = (
        f"Reference lines ({which}): the predictive figures lie above {p['above']} of {n}, the mode-curve "
        f"figures above {m['above']} of {n}"
    )
    na = max(p["not applicable"], m["not applicable"])
    if na:
        text += f" ({p['not applicable']} / {m['not applicable']} not applicable)"
    if isinstance(ref.get("individual_risk"), list):
        text += "; individual risk is assessed (the most exposed person of the [[individual_risk]] groups)"
    else:
        text += "; individual risk is not assessed"
        if c["lines_not_assessed"]:
            text += f" ({c['lines_not_assessed']} individual-risk line{'s' if c['lines_not_assessed'] != 1 else ''})"
    return text + "."
