"""Views of a comparison of alternatives: comparison.json, tidy tables, the benefit figure, the memo section.

The memo section is a :class:`riskcalc.outputs.memo.Section` of blocks, rendered by the memo's own
Markdown and HTML code (``comparison.md``, and the alternatives section of a run's memo); words, units
and number formats come from :mod:`riskcalc.outputs.labels`.
"""

from __future__ import annotations

from pathlib import Path
import numpy as np
from ..decision import economics as ec
from ..io import to_plain as _plain
from ..config.decision import BASE_NAME
from ..decision.alternatives import (
    Comparison,
    _all_lines,
    _conditions,
    _fn_point,
    _guideline_lines,
    _stats,
    condition_year_figures,
)
from .labels import CAUTION, currency_text, fmt_money, fmt_num, fmt_ratio, output_label
from .memo import Block, Section, blocks_html, blocks_markdown, mode_words, number_figures

#: Title of the alternatives section (comparison.md and the memo).
SECTION_TITLE = "Alternatives and economics"


def without_project(c: Comparison) -> dict:
    """The without-project figures of comparison.json: EAD, ALL and AFP (predictive, mode) and the f-N point.

    These are weighted means of the base plan's per-draw figures, which :class:`Comparison` holds but does not
    summarize; they are computed here once for comparison.json and tables/alternatives.csv.
    """
    sc, w = c.scenario, c.weights
    return {
        "expected_annual_damage_per_yr": {
            "predictive": float(w @ c.equivalent[BASE_NAME]["ead"]),
            "mode": c.equivalent_mode[BASE_NAME]["ead"],
            "ensemble": _stats(c.equivalent[BASE_NAME]["ead"], w),
        },
        "annualized_life_loss_lives_per_yr": {
            "predictive": float(w @ c.equivalent[BASE_NAME]["all"]),
            "mode": c.equivalent_mode[BASE_NAME]["all"],
        },
        "annual_failure_probability_per_yr": {
            "predictive": float(w @ c.equivalent[BASE_NAME]["afp"]),
            "mode": c.equivalent_mode[BASE_NAME]["afp"],
        },
        "fn_point": _fn_point(
            float(w @ c.risks[BASE_NAME][0].values["afp"]),
            float(w @ c.risks[BASE_NAME][0].values["all_incremental"]),
            _guideline_lines(sc),
        ),
        # added: the risk of each condition year, not discounted, against the reference lines
        "condition_years": [
            condition_year_figures(r, w, _all_lines(sc), condition=cnd)
            for r, cnd in zip(c.risks[BASE_NAME], _conditions(c.settings))
        ],
    }


#: How comparison.json's risk figures are to be read (written into it as ``risk_statements``).
RISK_STATEMENTS = (
    "Money (EAD, benefits, costs) is discounted and annualized over the period of analysis. Risk to "
    "life is not discounted: the annual failure probability and the life loss of each condition "
    "year are under condition_years, and tolerable-risk comparisons are made per condition year. "
    "The older keys afp_reduction_per_yr, all_reduction_lives_per_yr, cost_per_statistical_life_saved "
    "and without_project's annual_failure_probability_per_yr and annualized_life_loss_lives_per_yr "
    "are discount-weighted averages over the period, kept for existing scripts; read condition_years, "
    "all_reduction_lives_per_yr_undiscounted and net_cost_per_statistical_life_saved instead."
)


def mode_curve_words(c: Comparison) -> str:
    """How the comparison names the mode curve (:func:`riskcalc.outputs.memo.mode_words` of its mode note)."""
    from ..hazard.curves import mode_curve

    sc = c.scenario
    return mode_words(mode_curve(sc.ensemble, sc.mode_params or None)[1])


def _lines_origin(c: Comparison) -> str:
    from ..decision.guidelines import scenario_guideline_set

    return scenario_guideline_set(c.scenario)[1]


def _lines_note(c: Comparison) -> str:
    from ..decision.guidelines import structure_note

    return structure_note(getattr(c.scenario, "structure", "unspecified") or "unspecified", _lines_origin(c))


def _year_text(y) -> str:
    return "base year" if y is None else str(y)


def comparison_dict(c: Comparison) -> dict:
    """The comparison.json structure (plain JSON types; non-finite numbers become null)."""
    sc, s, w = c.scenario, c.settings, c.weights
    base = without_project(c)
    return _plain(
        {
            "title": sc.title,
            "units": sc.units,
            "economics": {
                "rate": s.rate,
                "period_years": s.period_years,
                "base_year": s.base_year,
                "future_year": s.future_year,
                "damage_factor": s.damage_factor,
                "life_loss_factor": s.life_loss_factor,
                "capital_recovery_factor": float(ec.capital_recovery_factor(s.rate, s.period_years)),
            },
            "draws": int(w.size),
            "draws_per_realization": c.draws_per_realization,
            "seed": sc.seed,
            "without_project": base,
            "alternatives": c.figures,
            "ranking": c.ranking,
            "notes": c.notes,
            "caution": CAUTION,
            # added: how the risk figures are to be read
            "risk_statements": RISK_STATEMENTS,
            "mode_curve": mode_curve_words(c),
            "reference_lines": {
                "structure": getattr(sc, "structure", "unspecified") or "unspecified",
                "lines_from": _lines_origin(c),
                "note": _lines_note(c),
            },
        }
    )


def alternatives_table(c: Comparison):
    """One row an alternative; units in the column names."""
    import pandas as pd

    cur = c.scenario.units["currency"]
    ead_without = without_project(c)["expected_annual_damage_per_yr"]["predictive"]
    rows = []
    for name, f in c.figures.items():
        b, bcr = f["expected_annual_benefit_per_yr"], f["benefit_cost_ratio"]
        rows.append(
            {
                "alternative": name,
                f"first_cost_{cur}": f["costs"]["first_cost"],
                f"annual_om_{cur}_per_yr": f["costs"]["annual_om_per_yr"],
                "construction_months": f["costs"]["construction_months"],
                f"interest_during_construction_{cur}": f["costs"]["interest_during_construction"],
                f"annualized_cost_{cur}_per_yr": f["costs"]["annualized_cost_per_yr"],
                f"ead_without_{cur}_per_yr": ead_without,
                f"ead_with_{cur}_per_yr": f["expected_annual_damage_per_yr"]["predictive"],
                f"benefit_{cur}_per_yr": b["predictive"],
                f"benefit_p05_{cur}_per_yr": b["ensemble"]["p05"],
                f"benefit_p95_{cur}_per_yr": b["ensemble"]["p95"],
                f"benefit_mode_{cur}_per_yr": b["mode"],
                "benefit_ratio_predictive_to_mode": b["ratio_predictive_to_mode"],
                f"net_benefit_{cur}_per_yr": f["net_benefit_per_yr"]["predictive"],
                f"net_benefit_mode_{cur}_per_yr": f["net_benefit_per_yr"]["mode"],
                "bcr": bcr["predictive"],
                "bcr_p05": bcr["ensemble"]["p05"],
                "bcr_p95": bcr["ensemble"]["p95"],
                "bcr_mode": bcr["mode"],
                "afp_reduction_per_yr": f["afp_reduction_per_yr"]["predictive"],
                "all_reduction_lives_per_yr": f["all_reduction_lives_per_yr"]["predictive"],
                f"net_cost_per_life_saved_{cur}": f["cost_per_statistical_life_saved"]["predictive"],
                "afp_base_year_per_yr": f["fn_point"]["afp_per_yr"],
                "fn_point_n_lives": f["fn_point"]["n_lives"],
                "rank_predictive": c.ranking["predictive"].index(name) + 1,
                "rank_mode": c.ranking["mode"].index(name) + 1,
                "response_draws_paired": f["response_draws_paired"],
            }
        )
        # added: undiscounted life-loss reduction, net cost per life on it, and the risk of each condition year
        row = rows[-1]
        row["all_reduction_undiscounted_lives_per_yr"] = f["all_reduction_lives_per_yr_undiscounted"]["predictive"]
        row[f"net_cost_per_life_saved_undiscounted_{cur}"] = f["net_cost_per_statistical_life_saved"]["predictive"]
        for y in f["condition_years"]:
            t = _year_text(y["year"]).replace(" ", "_")
            cnt = y["reference_lines_counts"]
            row[f"afp_{t}_per_yr"] = y["afp_per_yr"]["predictive"]
            row[f"afp_reduction_{t}_per_yr"] = y["afp_reduction_per_yr"]["predictive"]
            row[f"all_{t}_lives_per_yr"] = y["all_lives_per_yr"]["predictive"]
            row[f"all_reduction_{t}_lives_per_yr"] = y["all_reduction_lives_per_yr"]["predictive"]
            row[f"reference_lines_above_{t}_predictive"] = cnt["predictive"]["above"]
            row[f"reference_lines_above_{t}_mode"] = cnt["mode"]["above"]
            row[f"reference_lines_assessed_{t}"] = cnt["lines_assessed"]
    return pd.DataFrame(rows)


def paired_differences_table(c: Comparison):
    """Long table: one row an alternative and a draw, the paired differences from the base.

    Draws are numbered from 1; ``realization`` is the hazard realization's position in the ensemble file,
    numbered from 1, and ``realization_label`` its label.
    """
    import pandas as pd

    cur = c.scenario.units["currency"]
    frames = []
    d = np.arange(1, c.weights.size + 1)
    ens = c.scenario.ensemble
    labels = np.asarray(ens.labels or tuple(str(i + 1) for i in range(ens.size)), dtype=object)[c.realization]
    base = c.equivalent[BASE_NAME]
    for a in c.alternatives:
        eq, res = c.equivalent[a.name], c.economics[a.name]
        frames.append(
            pd.DataFrame(
                {
                    "alternative": a.name,
                    "draw": d,
                    "realization": c.realization + 1,
                    "realization_label": labels,
                    "weight": c.weights,
                    f"benefit_{cur}_per_yr": res.expected_annual_benefit,
                    f"net_benefit_{cur}_per_yr": res.net_benefit,
                    "bcr": res.benefit_cost_ratio,
                    "afp_reduction_per_yr": base["afp"] - eq["afp"],
                    "all_reduction_lives_per_yr": res.life_loss_reduction,
                }
            )
        )
    return pd.concat(frames, ignore_index=True)


def plot_benefit_distributions(c: Comparison, path_stem=None):
    """Weighted histograms of each alternative's annual benefit per draw, with the mean, mode-curve and cost lines.

    Parameters
    ----------
    c : Comparison
    path_stem : path, optional
        Where to save (PNG and SVG via :func:`riskcalc.plots.save`); the figure is returned when omitted.
    """
    from ..outputs.figures import STYLE, plt, save

    cur = currency_text(c.scenario.units["currency"])
    names = [a.name for a in c.alternatives]
    rc = {
        "font.size": 9,
        "axes.titlesize": 10,
        "axes.labelsize": 9,
        "legend.fontsize": 8,
        "axes.spines.top": False,
        "axes.spines.right": False,
        "svg.hashsalt": "riskcalc",
        "svg.fonttype": "none",
    }
    allb = np.concatenate([c.economics[n].expected_annual_benefit for n in names]) / 1e6
    costs = [c.figures[n]["costs"]["annualized_cost_per_yr"] / 1e6 for n in names]
    lo, hi = np.nanpercentile(allb, 0.5), np.nanpercentile(allb, 99.5)
    lo, hi = min(lo, min(costs), 0.0), max(hi, max(costs))
    bins = np.linspace(lo, hi + 1e-12 * max(1.0, abs(hi)), 60)
    with plt.rc_context(rc):
        fig, axes = plt.subplots(len(names), 1, figsize=(7.0, 1.0 + 1.6 * len(names)), sharex=True, squeeze=False)
        for ax, n in zip(axes[:, 0], names):
            b = np.clip(c.economics[n].expected_annual_benefit / 1e6, bins[0], bins[-1])
            f = c.figures[n]
            ax.hist(b, bins=bins, weights=c.weights, color=STYLE["band"]["color"], alpha=0.8, label="paired draws")
            ax.axvline(
                f["expected_annual_benefit_per_yr"]["predictive"] / 1e6,
                **STYLE["predictive"],
                label="predictive (mean)",
            )
            ax.axvline(f["expected_annual_benefit_per_yr"]["mode"] / 1e6, **STYLE["mode"], label="mode curve")
            ax.axvline(
                f["costs"]["annualized_cost_per_yr"] / 1e6,
                color=STYLE["accent"],
                lw=1.4,
                ls=(0, (1, 1.5)),
                label="annualized cost",
            )
            ax.set_ylabel("weight")
            ax.set_title(
                f"{n}: benefit-cost ratio {fmt_ratio(f['benefit_cost_ratio']['predictive'])} "
                f"(mode curve {fmt_ratio(f['benefit_cost_ratio']['mode'])})",
                loc="left",
            )
            ax.grid(True, axis="x", color=STYLE["grid"], lw=0.6)
        axes[0, 0].legend(loc="upper right", frameon=False)
        axes[-1, 0].set_xlabel(
            f"expected annual benefit [million {cur}/yr] (draws beyond the 0.5-99.5 % range are drawn in the end bins)"
        )
        fig.suptitle(f"{c.scenario.title}: benefit distributions", x=0.01, ha="left", fontsize=10)
        if path_stem is None:
            return fig
        return save(fig, path_stem)


def _reduction_by_year(f) -> str:
    """The life-loss reduction of every condition year: ``'0.0123 (2030) / 0.0150 (2070)'``."""
    return " / ".join(
        f"{fmt_num(y['all_reduction_lives_per_yr']['predictive'])} ({_year_text(y['year'])})"
        for y in f["condition_years"]
    )


def _table_rows(c: Comparison):
    cur = c.scenario.units["currency"]
    money = f"[{currency_text(cur)}/yr]"
    all_ = output_label("annualized_life_loss")
    header = [
        "alternative",
        f"annualized cost {money}",
        f"benefit {money}",
        "benefit 5–95 %",
        f"benefit, mode curve {money}",
        "pred/mode",
        f"net benefit {money}",
        "BCR (5–95 %)",
        f"{all_.short} reduction per condition year [{all_.unit_text(cur)}] (a)",
        f"net cost per statistical life saved [{currency_text(cur)}] (b)",
        "rank pred/mode",
    ]
    rows = []
    for n in c.ranking["predictive"]:
        f = c.figures[n]
        b, bcr = f["expected_annual_benefit_per_yr"], f["benefit_cost_ratio"]
        rows.append(
            [
                n,
                fmt_money(f["costs"]["annualized_cost_per_yr"]),
                fmt_money(b["predictive"]),
                f"{fmt_money(b['ensemble']['p05'])} to {fmt_money(b['ensemble']['p95'])}",
                fmt_money(b["mode"]),
                fmt_ratio(b["ratio_predictive_to_mode"]),
                fmt_money(f["net_benefit_per_yr"]["predictive"]),
                f"{fmt_ratio(bcr['predictive'])} ({fmt_ratio(bcr['ensemble']['p05'])}–"
                f"{fmt_ratio(bcr['ensemble']['p95'])})",
                _reduction_by_year(f),
                fmt_money(f["net_cost_per_statistical_life_saved"]["predictive"]),
                f"{c.ranking['predictive'].index(n) + 1} / {c.ranking['mode'].index(n) + 1}",
            ]
        )
    return header, rows


_NET_COST_NOTE = (
    "(a) Reduction in annualized life loss in each condition year, not discounted. (b) Net cost per "
    "statistical life saved = (annualized cost − expected annual benefit) / reduction in annualized "
    "life loss, the life loss not discounted (its mean over the period); a negative value means the "
    "economic benefits alone exceed the cost."
)


def _by_year(c: Comparison):
    """(condition year figures, plan name) by condition year (tolerable-risk comparisons are made per condition
    year), in each year the without-project condition first, then the alternatives by rank."""
    plans = [(BASE_NAME, without_project(c)["condition_years"])]
    plans += [(n, c.figures[n]["condition_years"]) for n in c.ranking["predictive"]]
    for k in range(len(plans[0][1])):
        for name, years in plans:
            yield years[k], name


def _risk_rows(c: Comparison):
    afp, all_ = output_label("annual_failure_probability"), output_label("annualized_life_loss")
    cur = c.scenario.units["currency"]
    header = [
        "condition year",
        "plan",
        f"{afp.short} [{afp.unit_text(cur)}]",
        f"{afp.short}, mode curve",
        f"{all_.short} [{all_.unit_text(cur)}]",
        f"{all_.short} reduction",
        "f-N point N [lives]",
        "lines above: predictive / mode",
    ]
    rows = []
    for y, name in _by_year(c):
        cnt = y["reference_lines_counts"]
        red = y.get("all_reduction_lives_per_yr")
        rows.append(
            [
                _year_text(y["year"]),
                name,
                fmt_num(y["afp_per_yr"]["predictive"]),
                fmt_num(y["afp_per_yr"]["mode"]),
                fmt_num(y["all_lives_per_yr"]["predictive"]),
                fmt_num(red["predictive"]) if red else "",
                fmt_num(y["fn_point"]["n_lives"]),
                f"{cnt['predictive']['above']} / {cnt['mode']['above']} of {cnt['lines_assessed']}",
            ]
        )
    return header, rows


def position_text(check: dict) -> str:
    """A plan's position against one line: ``'above (share of draws above 0.87)'``, ``'not applicable'``."""
    pos = check["predictive"]["position"]
    d = check.get("draws")
    if d is None:
        return pos
    text = f"{pos} (share of draws above {fmt_ratio(d['share_above'])}"
    if d["share_not_applicable"]:
        text += f", not applicable {fmt_ratio(d['share_not_applicable'])}"
    return text + ")"


def _line_rows(c: Comparison):
    header = None
    rows = []
    for y, name in _by_year(c):
        checks = [k for k in y["reference_lines"] if k["kind"] != "individual_risk"]
        if header is None:
            header = ["condition year", "plan"] + [k["line"] for k in checks]
        rows.append([_year_text(y["year"]), name] + [position_text(k) for k in checks])
    return header or ["condition year", "plan"], rows


def _ranking_sentence(c: Comparison) -> str:
    r = c.ranking
    s = (
        f"Ranked by net benefit on the predictive (mean) hazard: {', '.join(r['predictive'])}. This ranking is "
        "economic only: it does not rank the plans' life safety, which is read against the reference lines per "
        "condition year below."
    )
    mode = mode_curve_words(c)
    if r["changes_between_predictive_and_mode"]:
        s += (
            f" On {mode} the order would be {', '.join(r['mode'])}: "
            "justifying or ranking the alternatives on the mode curve would mis-rank them."
        )
    else:
        s += " The order is the same on the mode curve, though the mode curve's benefits differ (see pred/mode)."
    jp, jm = r["justified_predictive"], r["justified_mode"]
    if jp != jm:
        s += (
            f" Net benefit is positive for {', '.join(jp) or 'none'} on the predictive hazard but for "
            f"{', '.join(jm) or 'none'} on the mode curve."
        )
    return s


#: The economics part of the caution, shown with :data:`~riskcalc.outputs.labels.CAUTION` in the section.
ECONOMICS_CAUTION = (
    "The discount rate, the period of analysis and the economic guidance are the governing agency's "
    "to set, and the economic figures need the same review by qualified economists."
)

#: Caption of the benefit figure.
BENEFIT_CAPTION = (
    "Expected annual benefit of each alternative over the paired draws (weighted histogram), with the "
    "predictive (mean) benefit, the mode-curve benefit and the annualized cost marked."
)


def alternatives_section(c: Comparison, *, figures: bool = True) -> Section:
    """The alternatives section of the decision memo (and of comparison.md), as blocks.

    Parameters
    ----------
    c : Comparison
    figures : bool
        Include the benefit figure (``figures/benefit_distributions.png``).
    """
    s = c.settings
    header, rows = _table_rows(c)
    period = (
        f"a {s.period_years}-year period from {s.base_year}"
        if s.base_year is not None
        else f"a {s.period_years}-year period"
    )
    intro = (
        f"Alternatives compared with the without-project condition on the same {c.weights.size} paired draws "
        f"of the hazard ensemble. Money (damage, benefits, costs) is discounted at {100 * s.rate:g} % over "
        f"{period}"
    )
    if s.future_year is not None:
        intro += (
            f", interpolated linearly between {s.base_year} and the future condition of {s.future_year} "
            "and annualized with the capital recovery factor"
        )
    intro += (
        ". Risk to life is not discounted: the annual failure probability and the life loss are given for "
        "each condition year, and each plan is placed against the reference lines per condition year."
    )
    rh, rr = _risk_rows(c)
    lh, lr = _line_rows(c)
    blocks = [
        Block("p", intro),
        Block("table", header=tuple(header), rows=tuple(tuple(r) for r in rows), css="alternatives"),
        Block("p", _NET_COST_NOTE),
        Block("p", _ranking_sentence(c)),
        Block(
            "p",
            "Risk per condition year (predictive figures unless marked; not discounted). The f-N "
            "point's N = ALL_inc / AFP is the average life loss caused by a failure.",
        ),
        Block("table", header=tuple(rh), rows=tuple(tuple(r) for r in rr), css="alternatives"),
        Block(
            "p",
            "Position of each plan's predictive figures against the reference lines, per condition "
            "year, with the weighted share of the paired draws whose figure lies above the line (AFP "
            "lines: the AFP; life-loss lines: the f-N point; F-N limit lines: the F-N curve anywhere in "
            "the line's N range). " + _lines_note(c) + " Individual risk is not assessed.",
        ),
        Block("table", header=tuple(lh), rows=tuple(tuple(r) for r in lr), css="alternatives"),
    ]
    if c.notes:
        blocks += [Block("p", "Notes:"), Block("list", items=tuple(str(t) for t in c.notes))]
    if figures:
        blocks.append(Block("figure", text=BENEFIT_CAPTION, figure="benefit_distributions"))
    blocks.append(Block("caution", f"{CAUTION} {ECONOMICS_CAUTION}"))
    return Section(SECTION_TITLE, "alternatives", tuple(blocks))


def _numbered(sec: Section) -> tuple:
    """The section's blocks with its figures numbered from 1 (as in comparison.md, which stands alone)."""
    return tuple(number_figures(sec.blocks, {f: "" for f in sec.figures})[0])


def memo_section(c: Comparison, *, figures: bool = True) -> dict:
    """The alternatives section rendered by the memo's Markdown and HTML code.

    Returns
    -------
    dict
        ``{"title", "markdown", "html" (an escaped fragment), "figures": [stems]}``; figures are linked as
        ``figures/<stem>.png``, relative to the folder that holds comparison.md.
    """
    sec = alternatives_section(c, figures=figures)
    blocks = _numbered(sec)
    return {
        "title": sec.title,
        "markdown": blocks_markdown(blocks),
        "html": blocks_html(blocks),
        "figures": sec.figures,
    }


def attach_memo_section(result, c: Comparison, *, figures: bool = True) -> Section:
    """Add :func:`alternatives_section` to ``result.extras["memo_sections"]`` (a RiskResult) and return it."""
    sec = alternatives_section(c, figures=figures)
    result.extras.setdefault("memo_sections", []).append(sec)
    return sec


def write_comparison_files(c: Comparison, folder, *, figures=True) -> None:
    """Write comparison.json, comparison.md, tables/alternatives.csv, tables/paired_differences.csv and
    figures/benefit_distributions.* into an existing folder (a run's or a comparison's)."""
    from ..io import write_csv, write_json

    folder = Path(folder)
    write_json(folder / "comparison.json", comparison_dict(c))
    (folder / "tables").mkdir(exist_ok=True)
    write_csv(folder / "tables" / "alternatives.csv", alternatives_table(c))
    write_csv(folder / "tables" / "paired_differences.csv", paired_differences_table(c))
    if figures:
        plot_benefit_distributions(c, folder / "figures" / "benefit_distributions")
    sec = memo_section(c, figures=figures)
    (folder / "comparison.md").write_text(f"# {sec['title']}\n\n{sec['markdown']}\n", encoding="utf-8")


def write_comparison(c: Comparison, out, *, overwrite=False, figures=True) -> Path:
    """Write the comparison's files (:func:`write_comparison_files`) into ``out`` atomically."""
    from ..io import atomic_output_dir

    with atomic_output_dir(out, overwrite=overwrite) as tmp:
        write_comparison_files(c, tmp, figures=figures)
    return Path(out)
