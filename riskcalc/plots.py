"""Figures for reports: probability-paper axes, a palette that survives greyscale printing.

Every figure is written as PNG and SVG. Matplotlib runs on the Agg backend, so
no display is needed.
"""

from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.ticker import FixedLocator, NullLocator  # noqa: E402
from scipy import special as sc  # noqa: E402

__all__ = ["STYLE", "save", "probability_axis", "plot_hazard"]

#: riskcalc's palette: distinct in hue and in lightness, so it also reads in greyscale.
STYLE = {
    "predictive": {"color": "#111111", "lw": 2.2, "ls": "-"},
    "mode": {"color": "#b35806", "lw": 1.8, "ls": (0, (6, 2))},
    "median": {"color": "#2166ac", "lw": 1.6, "ls": (0, (1.5, 1.5))},
    "band": {"color": "#8fb8a8", "alpha": 0.45},
    "member": {"color": "#b0b0b0", "lw": 0.35, "alpha": 0.3},
    "accent": "#542788",
    "grid": "#e0e0e0",
}

_AEP_TICKS = [0.99, 0.9, 0.5, 0.1, 0.01, 1e-3, 1e-4, 1e-5, 1e-7]


def _rc():
    return {"font.size": 9, "axes.titlesize": 10, "axes.labelsize": 9, "legend.fontsize": 8,
            "axes.spines.top": False, "axes.spines.right": False, "svg.hashsalt": "riskcalc",
            "svg.fonttype": "none"}


def save(fig, path_stem) -> list[Path]:
    """Save ``fig`` as ``<stem>.png`` (150 dpi) and ``<stem>.svg``; returns both paths."""
    stem = Path(path_stem)
    stem.parent.mkdir(parents=True, exist_ok=True)
    paths = [stem.with_suffix(".png"), stem.with_suffix(".svg")]
    fig.savefig(paths[0], dpi=150, bbox_inches="tight", metadata={"Software": None})
    fig.savefig(paths[1], bbox_inches="tight", metadata={"Date": None, "Creator": None})
    plt.close(fig)
    return paths


def paper_x(p):
    """Horizontal coordinate of AEP ``p`` on probability paper: the normal deviate of 1 - p."""
    return -sc.ndtri(np.asarray(p, dtype=float))


def probability_axis(ax, aep_min=1e-7, aep_max=0.999):
    """Label the x axis of ``ax`` in AEP on a normal-probability scale (values already in :func:`paper_x`)."""
    ticks = [t for t in _AEP_TICKS if aep_min * 0.999 <= t <= aep_max * 1.001]
    ax.xaxis.set_major_locator(FixedLocator(paper_x(ticks)))
    ax.xaxis.set_minor_locator(NullLocator())
    ax.set_xticklabels([f"{t:g}" if t >= 0.01 else f"1e{int(round(np.log10(t)))}" for t in ticks])
    ax.set_xlim(paper_x(aep_max), paper_x(aep_min))
    ax.set_xlabel("annual exceedance probability (normal probability scale)")
    ax.grid(True, color=STYLE["grid"], lw=0.6)


def quantity_label(quantity, unit):
    names = {"m3s": "m³/s", "cfs": "ft³/s", "m": "m", "ft": "ft"}
    return f"peak {quantity}" + (f" [{names.get(unit, unit)}]" if unit else "")


def plot_hazard(curves, ens=None, path_stem=None, *, title="Hazard ensemble", max_members=150, seed=1):
    """The ensemble on probability paper with predictive, mode and median curves and the credible band.

    Parameters
    ----------
    curves : HazardCurves
    ens : HazardEnsemble, optional
        Members drawn as thin lines (at most ``max_members``, chosen with ``seed``).
    path_stem : path, optional
        Where to save (PNG and SVG); the figure is returned when omitted.
    """
    with plt.rc_context(_rc()):
        fig, ax = plt.subplots(figsize=(7.0, 4.6))
        xs = paper_x(curves.aeps)
        if ens is not None:
            rng = np.random.default_rng(seed)
            idx = np.arange(ens.size)
            if ens.size > max_members:
                idx = np.sort(rng.choice(ens.size, max_members, replace=False, p=ens.weights))
            qm = ens.quantile(curves.aeps, idx)
            for k, row in enumerate(qm):
                ax.plot(xs, row, **STYLE["member"], label="ensemble members" if k == 0 else None)
        lo, hi = curves.band_names
        ax.fill_between(xs, curves.quantity_lower, curves.quantity_upper, color=STYLE["band"]["color"],
                        alpha=STYLE["band"]["alpha"], lw=0, zorder=3,
                        label=f"{round(100 * curves.level)} % credible band ({lo}–{hi})")
        ax.plot(xs, curves.quantity_predictive, **STYLE["predictive"], label="predictive (mean AEP)", zorder=5)
        ax.plot(xs, curves.quantity_median, **STYLE["median"], label="median curve", zorder=5)
        ax.plot(xs, curves.quantity_mode, **STYLE["mode"], label="mode curve", zorder=5)
        if curves.log_scale:
            ax.set_yscale("log")
        probability_axis(ax, curves.aeps.min(), curves.aeps.max())
        ax.set_ylabel(quantity_label(curves.quantity, curves.unit))
        ax.set_title(title)
        ax.legend(loc="upper left", frameon=False)
        if path_stem is None:
            return fig
        return save(fig, path_stem)


def run_figures(result, folder):
    """The figures of a risk run (PNG and SVG) into ``folder``; returns the written paths."""
    folder = Path(folder)
    sc = result.scenario
    paths = plot_hazard(result.curves, sc.ensemble, folder / "hazard_ensemble",
                        title=f"{sc.title}: hazard ensemble ({sc.ensemble.size} realizations)")
    return paths
