"""Figures of a frequency fit: the record on probability paper with the fitted curves, and the chains.

* :func:`plot_fit_curves`: the recorded peaks at their plotting positions (systematic years,
  years of threshold periods, interval years as bars), the perception thresholds, and the
  predictive, mode and median curves with the credible band of the fitted ensemble, on the
  probability paper of :func:`riskcalc.outputs.figures.plot_hazard`.
* :func:`plot_fit_chains`: for each parameter, the trace of every walker and the marginal
  posterior with the mode, the MLE and (when it is not flat) the prior density.
"""

from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.ticker import MaxNLocator  # noqa: E402

from .figures import STYLE, _rc, draw_summary_curves, log_axis, paper_x, probability_axis, quantity_label, save  # noqa: E402

__all__ = ["plot_fit_curves", "plot_fit_chains", "fit_figures", "FIT_FIGURE_STEMS"]

#: File stems of the figures :func:`fit_figures` writes.
FIT_FIGURE_STEMS = ("fit_probability_paper", "fit_chains")

_POINTS = {
    "systematic": {"marker": "o", "color": "#111111", "ms": 4.5, "mfc": "white", "ls": "none"},
    "threshold period": {"marker": "^", "color": "#762a83", "ms": 6, "ls": "none"},
    "interval": {"marker": "s", "color": "#2166ac", "ms": 4.5, "ls": "none"},
}
_LABELS = {
    "systematic": "recorded peaks (plotting position)",
    "threshold period": "peaks of threshold periods",
    "interval": "interval years (bar: the interval; arrow: no upper bound)",
}


def plot_fit_curves(fit, curves, positions, path_stem=None, *, quantity="discharge", title=None):
    """The record at its plotting positions with the fitted curves and band.

    Parameters
    ----------
    fit : FitResult
    curves : HazardCurves
        Of ``fit.ensemble()``.
    positions : pandas.DataFrame
        From :func:`riskcalc.hazard.fit.plotting.plotting_positions`.
    path_stem : path, optional
        Where to save (PNG and SVG); the figure is returned when omitted.
    """
    rec = fit.record
    with plt.rc_context(_rc()):
        fig, ax = plt.subplots(figsize=(7.0, 4.8))
        xs = paper_x(curves.aeps)
        draw_summary_curves(ax, curves, xs, zorder=2)
        for kind, style in _POINTS.items():
            rows = positions[positions["kind"] == kind]
            if rows.empty:
                continue
            px = paper_x(rows["aep"].to_numpy())
            if kind == "interval":
                lower = np.where(np.isfinite(rows["lower"]), rows["lower"], rows["value"])
                upper = np.where(np.isfinite(rows["upper"]), rows["upper"], rows["value"])
                lower = np.where(lower > 0, lower, rows["value"]) if curves.log_scale else lower
                ax.vlines(px, lower, upper, color=style["color"], lw=1.2, zorder=5)
                for xi, v, u in zip(px, rows["value"], rows["upper"]):
                    if not np.isfinite(u):  # known only to exceed a level: an arrow upwards
                        ax.annotate(
                            "",
                            xy=(xi, v * 1.35 if curves.log_scale else v + 0.1 * abs(v)),
                            xytext=(xi, v),
                            arrowprops={"arrowstyle": "->", "color": style["color"], "lw": 1.2},
                            zorder=5,
                        )
            ax.plot(px, rows["value"], **style, zorder=6, label=_LABELS[kind])
        for k, ((a, b), t) in enumerate(zip(rec.periods, rec.thresholds)):
            ax.axhline(
                t,
                color="#7f7f7f",
                lw=1.0,
                ls=(0, (4, 2)),
                zorder=3,
                label=f"perception threshold ({a}–{b}), {int(rec.below[k])} years below" if k < 3 else None,
            )
        if curves.log_scale:
            log_axis(ax, "y")
        probability_axis(ax, curves.aeps.min(), curves.aeps.max())
        ax.set_ylabel(quantity_label(quantity, rec.unit))
        n_info = f"{rec.n_exact} peaks" + (f", {rec.n_interval} intervals" if rec.n_interval else "")
        if rec.n_below:
            n_info += f", {rec.n_below} years below a threshold"
        ax.set_title(title or f"Fitted {fit.family} frequency curves ({n_info}; {fit.size} posterior draws)")
        ax.legend(loc="upper left")
        if path_stem is None:
            return fig
        return save(fig, path_stem)


def _prior_curve(fit, j, grid):
    """The prior density of parameter j on ``grid`` when it is not flat, else None."""
    p = fit.prior
    if j != 2 or p.family not in ("gev", "lp3"):
        return None
    if p.family == "gev" and p.shape_prior == "geophysical":
        from scipy import stats

        from ..hazard.fit.priors import GEOPHYSICAL_P, GEOPHYSICAL_Q

        return stats.beta.pdf(grid + 0.5, GEOPHYSICAL_P, GEOPHYSICAL_Q)
    if p.family == "lp3" and p.regional_skew is not None:
        from scipy import stats

        return stats.norm.pdf(grid, p.regional_skew, np.sqrt(p.regional_skew_mse))
    return None


def plot_fit_chains(fit, path_stem=None, *, unit_label=""):
    """Trace (every walker) and marginal posterior of each parameter, with the mode and the MLE."""
    names = fit.names
    with plt.rc_context(_rc()):
        fig, axes = plt.subplots(len(names), 2, figsize=(8.0, 2.1 * len(names)), squeeze=False)
        for j, name in enumerate(names):
            at, am = axes[j]
            for c in np.unique(fit.chain):
                sel = fit.chain == c
                at.plot(fit.iteration[sel], fit.draws[sel, j], lw=0.4, alpha=0.6)
            label = _param_label(fit, name, unit_label)
            at.set_ylabel(label)
            at.set_xlabel("sampler step (each line a walker)")
            at.xaxis.set_major_locator(MaxNLocator(5))
            at.grid(True, color=STYLE["grid"], lw=0.6)
            v = fit.draws[:, j]
            am.hist(v, bins=50, density=True, color="#9a9a9a", alpha=0.8, label="posterior draws")
            am.axvline(fit.mode[name], **{**STYLE["mode"], "lw": 1.6}, label="posterior mode")
            am.axvline(fit.mle[name], color=STYLE["accent"], lw=1.2, ls=(0, (1, 1.2)), label="MLE")
            grid = np.linspace(v.min(), v.max(), 200)
            prior = _prior_curve(fit, j, grid)
            if prior is not None:
                am.plot(grid, prior, color="#4d9221", lw=1.3, label="prior density")
            am.set_xlabel(label)
            am.set_ylabel("density")
            am.grid(True, color=STYLE["grid"], lw=0.6)
            if j == 0 or prior is not None:
                am.legend(loc="upper right")
        d = fit.diagnostics()
        fig.suptitle(
            f"Posterior draws of the {fit.family} parameters: {fit.walkers} walkers, thinning {d['thin']}, "
            f"min bulk ESS {d['ess_bulk_min']:.0f}, max R-hat {d['rank_normalized_split_rhat_max']:.3f}",
            fontsize=9,
        )
        fig.tight_layout()
        if path_stem is None:
            return fig
        return save(fig, path_stem)


def _param_label(fit, name, unit_label):
    if fit.family in ("lp3", "lognormal"):
        return f"{name} of log10 Q" if name != "skew" else "skew of log10 Q"
    if name in ("location", "scale", "mean", "sd") and unit_label:
        return f"{name} [{unit_label}]"
    return name


def fit_figures(fit, curves, positions, folder, *, quantity="discharge") -> list[Path]:
    """Write both figures (PNG and SVG) into ``folder``; returns the paths."""
    from .labels import unit_text

    folder = Path(folder)
    paths = plot_fit_curves(fit, curves, positions, folder / FIT_FIGURE_STEMS[0], quantity=quantity)
    paths += plot_fit_chains(fit, folder / FIT_FIGURE_STEMS[1], unit_label=unit_text(fit.record.unit))
    return paths
