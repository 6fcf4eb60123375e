"""Views of a comparison of alternatives: comparison.json, tidy tables, the benefit figure, the memo section."""

from __future__ import annotations

import html
from pathlib import Path
import numpy as np
from ..decision import economics as ec
from .summary import CAUTION_TEXT
from ..io import to_plain as _plain
from ..config.decision import BASE_NAME
from ..decision.alternatives import Comparison, _fn_point, _guideline_lines, _stats


def comparison_dict(c: Comparison) -> dict:
    """The comparison.json structure (plain JSON types; non-finite numbers become null)."""
    sc, s, w = c.scenario, c.settings, c.weights
    base = {"expected_annual_damage_per_yr": {"predictive": float(w @ c.equivalent[BASE_NAME]["ead"]),
                                              "mode": c.equivalent_mode[BASE_NAME]["ead"],
                                              "ensemble": _stats(c.equivalent[BASE_NAME]["ead"], w)},
            "annualized_life_loss_lives_per_yr": {"predictive": float(w @ c.equivalent[BASE_NAME]["all"]),
                                                  "mode": c.equivalent_mode[BASE_NAME]["all"]},
            "annual_failure_probability_per_yr": {"predictive": float(w @ c.equivalent[BASE_NAME]["afp"]),
                                                  "mode": c.equivalent_mode[BASE_NAME]["afp"]},
            "fn_point": _fn_point(float(w @ c.risks[BASE_NAME][0].values["afp"]),
                                  float(w @ c.risks[BASE_NAME][0].values["all_incremental"]),
                                  _guideline_lines(sc))}
    return _plain({
        "title": sc.title, "units": sc.units,
        "economics": {"rate": s.rate, "period_years": s.period_years, "base_year": s.base_year,
                      "future_year": s.future_year, "damage_factor": s.damage_factor,
                      "life_loss_factor": s.life_loss_factor,
                      "capital_recovery_factor": float(ec.capital_recovery_factor(s.rate, s.period_years))},
        "draws": int(w.size), "draws_per_realization": c.draws_per_realization, "seed": sc.seed,
        "without_project": base, "alternatives": c.figures, "ranking": c.ranking, "notes": c.notes,
        "caution": CAUTION_TEXT,
    })


def alternatives_table(c: Comparison):
    """One row an alternative; units in the column names."""
    import pandas as pd

    cur = c.scenario.units["currency"]
    rows = []
    for name, f in c.figures.items():
        b, bcr = f["expected_annual_benefit_per_yr"], f["benefit_cost_ratio"]
        rows.append({
            "alternative": name,
            f"first_cost_{cur}": f["costs"]["first_cost"],
            f"annual_om_{cur}_per_yr": f["costs"]["annual_om_per_yr"],
            "construction_months": f["costs"]["construction_months"],
            f"interest_during_construction_{cur}": f["costs"]["interest_during_construction"],
            f"annualized_cost_{cur}_per_yr": f["costs"]["annualized_cost_per_yr"],
            f"ead_without_{cur}_per_yr": float(c.weights @ c.equivalent[BASE_NAME]["ead"]),
            f"ead_with_{cur}_per_yr": f["expected_annual_damage_per_yr"]["predictive"],
            f"benefit_{cur}_per_yr": b["predictive"],
            f"benefit_p05_{cur}_per_yr": b["ensemble"]["p05"],
            f"benefit_p95_{cur}_per_yr": b["ensemble"]["p95"],
            f"benefit_mode_{cur}_per_yr": b["mode"],
            "benefit_ratio_predictive_to_mode": b["ratio_predictive_to_mode"],
            f"net_benefit_{cur}_per_yr": f["net_benefit_per_yr"]["predictive"],
            f"net_benefit_mode_{cur}_per_yr": f["net_benefit_per_yr"]["mode"],
            "bcr": bcr["predictive"], "bcr_p05": bcr["ensemble"]["p05"], "bcr_p95": bcr["ensemble"]["p95"],
            "bcr_mode": bcr["mode"],
            "afp_reduction_per_yr": f["afp_reduction_per_yr"]["predictive"],
            "all_reduction_lives_per_yr": f["all_reduction_lives_per_yr"]["predictive"],
            f"net_cost_per_life_saved_{cur}": f["cost_per_statistical_life_saved"]["predictive"],
            "afp_base_year_per_yr": f["fn_point"]["afp_per_yr"],
            "fn_point_n_lives": f["fn_point"]["n_lives"],
            "rank_predictive": c.ranking["predictive"].index(name) + 1,
            "rank_mode": c.ranking["mode"].index(name) + 1,
            "response_draws_paired": f["response_draws_paired"],
        })
    return pd.DataFrame(rows)


def paired_differences_table(c: Comparison):
    """Long table: one row an alternative and a draw, the paired differences from the base."""
    import pandas as pd

    cur = c.scenario.units["currency"]
    frames = []
    d = np.arange(c.weights.size)
    base = c.equivalent[BASE_NAME]
    for a in c.alternatives:
        eq, res = c.equivalent[a.name], c.economics[a.name]
        frames.append(pd.DataFrame({
            "alternative": a.name, "draw": d, "realization": c.realization, "weight": c.weights,
            f"benefit_{cur}_per_yr": res.expected_annual_benefit,
            f"net_benefit_{cur}_per_yr": res.net_benefit,
            "bcr": res.benefit_cost_ratio,
            "afp_reduction_per_yr": base["afp"] - eq["afp"],
            "all_reduction_lives_per_yr": res.life_loss_reduction,
        }))
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

    cur = c.scenario.units["currency"].upper()
    names = [a.name for a in c.alternatives]
    rc = {"font.size": 9, "axes.titlesize": 10, "axes.labelsize": 9, "legend.fontsize": 8,
          "axes.spines.top": False, "axes.spines.right": False, "svg.hashsalt": "riskcalc", "svg.fonttype": "none"}
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
            ax.hist(b, bins=bins, weights=c.weights, color=STYLE["band"]["color"], alpha=0.8,
                    label="paired draws")
            ax.axvline(f["expected_annual_benefit_per_yr"]["predictive"] / 1e6, **STYLE["predictive"],
                       label="predictive (mean)")
            ax.axvline(f["expected_annual_benefit_per_yr"]["mode"] / 1e6, **STYLE["mode"], label="mode curve")
            ax.axvline(f["costs"]["annualized_cost_per_yr"] / 1e6, color=STYLE["accent"], lw=1.4,
                       ls=(0, (1, 1.5)), label="annualized cost")
            ax.set_ylabel("weight")
            ax.set_title(f"{n}: benefit-cost ratio {f['benefit_cost_ratio']['predictive']:.2f} "
                         f"(mode curve {f['benefit_cost_ratio']['mode']:.2f})", loc="left")
            ax.grid(True, axis="x", color=STYLE["grid"], lw=0.6)
        axes[0, 0].legend(loc="upper right", frameon=False)
        axes[-1, 0].set_xlabel(f"expected annual benefit [million {cur}/yr] (draws beyond the 0.5-99.5 % range "
                               "are drawn in the end bins)")
        fig.suptitle(f"{c.scenario.title}: benefit distributions", x=0.01, ha="left", fontsize=10)
        if path_stem is None:
            return fig
        return save(fig, path_stem)


def _money(v):
    if v is None or not np.isfinite(v):
        return "n/a" if v is None or np.isnan(v) else ("∞" if v > 0 else "−∞")
    return f"{v:,.0f}"


def _g(v, digits=3):
    if v is None or not np.isfinite(v):
        return "n/a"
    return f"{v:.{digits}g}"


def _table_rows(c: Comparison):
    cur = c.scenario.units["currency"]
    header = ["alternative", f"annualized cost [{cur}/yr]", f"benefit [{cur}/yr]", "benefit 5–95 %",
              f"benefit, mode curve [{cur}/yr]", "pred/mode", f"net benefit [{cur}/yr]", "BCR (5–95 %)",
              "AFP reduction [1/yr]", "ALL reduction [lives/yr]", f"net cost per statistical life saved [{cur}] (a)", "rank pred/mode"]
    rows = []
    for n in c.ranking["predictive"]:
        f = c.figures[n]
        b, bcr = f["expected_annual_benefit_per_yr"], f["benefit_cost_ratio"]
        rows.append([n, _money(f["costs"]["annualized_cost_per_yr"]), _money(b["predictive"]),
                     f"{_money(b['ensemble']['p05'])} to {_money(b['ensemble']['p95'])}", _money(b["mode"]),
                     _g(b["ratio_predictive_to_mode"]), _money(f["net_benefit_per_yr"]["predictive"]),
                     f"{bcr['predictive']:.2f} ({bcr['ensemble']['p05']:.2f}–{bcr['ensemble']['p95']:.2f})",
                     _g(f["afp_reduction_per_yr"]["predictive"]), _g(f["all_reduction_lives_per_yr"]["predictive"]),
                     _money(f["cost_per_statistical_life_saved"]["predictive"]),
                     f"{c.ranking['predictive'].index(n) + 1} / {c.ranking['mode'].index(n) + 1}"])
    return header, rows


_NET_COST_NOTE = ("(a) Net cost per statistical life saved = (annualized cost − expected annual benefit) / reduction "
                  "in annualized life loss; a negative value means the economic benefits alone exceed the cost.")


def _ranking_sentence(c: Comparison) -> str:
    r = c.ranking
    s = f"Ranked by net benefit on the predictive (mean) hazard: {', '.join(r['predictive'])}."
    if r["changes_between_predictive_and_mode"]:
        s += (f" On the single most likely (mode) curve the order would be {', '.join(r['mode'])}: "
              "justifying or ranking the alternatives on the mode curve would mis-rank them.")
    else:
        s += " The order is the same on the mode curve, though the mode curve's benefits differ (see pred/mode)."
    jp, jm = r["justified_predictive"], r["justified_mode"]
    if jp != jm:
        s += (f" Net benefit is positive for {', '.join(jp) or 'none'} on the predictive hazard but for "
              f"{', '.join(jm) or 'none'} on the mode curve.")
    return s


def memo_section(c: Comparison) -> dict:
    """The alternatives section of the decision memo.

    Returns
    -------
    dict
        ``{"title", "markdown", "html" (an escaped fragment), "figures": [stems]}``;
        the figure stems are relative to the figures folder.
    """
    s = c.settings
    header, rows = _table_rows(c)
    period = (f"a {s.period_years}-year period from {s.base_year}" if s.base_year is not None
              else f"a {s.period_years}-year period")
    intro = (f"Alternatives compared with the without-project condition on the same {c.weights.size} paired draws "
             f"of the hazard ensemble, at a discount rate of {100 * s.rate:g} % over {period}.")
    if s.future_year is not None:
        intro += (f" Risk is interpolated linearly between {s.base_year} and the future condition of {s.future_year} "
                  "and annualized with the capital recovery factor.")
    fn_lines = []
    for n in c.ranking["predictive"]:
        p = c.figures[n]["fn_point"]
        worst = max(p["checks"], key=lambda ch: -1 if ch["ratio"] is None or not np.isfinite(ch["ratio"])
                    else ch["ratio"], default=None)
        text = f"{n}: f-N point AFP {_g(p['afp_per_yr'])} per year, N {_g(p['n_lives'])}"
        if worst is not None and np.isfinite(worst["ratio"]):
            text += f"; largest ratio to a reference line {worst['ratio']:.2f} ({worst['line']})"
        fn_lines.append(text)
    caution = ("These figures support, and never replace, the judgment of qualified, licensed engineers and "
               "economists; the governing agency's current policy, discount rate and local codes decide. "
               + CAUTION_TEXT)
    md = [intro, "", "| " + " | ".join(header) + " |", "|" + "---|" * len(header)]
    md += ["| " + " | ".join(r) + " |" for r in rows]
    md += ["", _NET_COST_NOTE, "", _ranking_sentence(c), "", "f-N points (base year, predictive):", ""]
    md += [f"- {t}" for t in fn_lines]
    if c.notes:
        md += ["", "Notes:", ""] + [f"- {t}" for t in c.notes]
    md += ["", "![Benefit distributions](figures/benefit_distributions.png)", "", f"*{caution}*", ""]
    e = html.escape
    h = [f"<section class=\"alternatives\"><h2>{e('Alternatives and economics')}</h2>", f"<p>{e(intro)}</p>",
         "<table><thead><tr>" + "".join(f"<th>{e(x)}</th>" for x in header) + "</tr></thead><tbody>"]
    h += ["<tr>" + "".join(f"<td>{e(x)}</td>" for x in r) + "</tr>" for r in rows]
    h += ["</tbody></table>", f"<p class=\"note\">{e(_NET_COST_NOTE)}</p>", f"<p>{e(_ranking_sentence(c))}</p>",
          "<ul>" + "".join(f"<li>{e(t)}</li>" for t in fn_lines) + "</ul>"]
    if c.notes:
        h.append("<ul>" + "".join(f"<li>{e(t)}</li>" for t in c.notes) + "</ul>")
    h += [f"<p class=\"caution\"><em>{e(caution)}</em></p>", "</section>"]
    return {"title": "Alternatives and economics", "markdown": "\n".join(md), "html": "\n".join(h),
            "figures": ["benefit_distributions"]}


def attach_memo_section(result, c: Comparison) -> dict:
    """Add :func:`memo_section` to ``result.extras["memo_sections"]`` (a RiskResult) and return the section."""
    sec = memo_section(c)
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
    sec = memo_section(c)
    (folder / "comparison.md").write_text(f"# {sec['title']}\n\n{sec['markdown']}", encoding="utf-8")


def write_comparison(c: Comparison, out, *, overwrite=False, figures=True) -> Path:
    """Write the comparison's files (:func:`write_comparison_files`) into ``out`` atomically."""
    from ..io import atomic_output_dir

    with atomic_output_dir(out, overwrite=overwrite) as tmp:
        write_comparison_files(c, tmp, figures=figures)
    return Path(out)
