"""Figures of a study with several loadings: where the risk comes from."""

from __future__ import annotations

import numpy as np

from ..risk.records import HEADLINES
from .figures import _rc, _t, save
from .labels import output_label

__all__ = ["plot_loadings"]

#: Fill colours of the loadings (grey scale with one accent; readable in print).
_FILLS = ("#4d4d4d", "#b35806", "#9ecae1", "#d9d9d9", "#2166ac", "#fdb863")


def plot_loadings(result, path_stem=None):
    """Stacked bars of AFP, EAD and ALL by loading and failure mode, predictive beside mode.

    Each panel has two bars, on the predictive measure and on the mode curves (nominal response); each
    bar is split into the loadings, so the stack shows both the total and where it comes from (the
    failure-mode split is in ``tables/risk_by_loading.csv``).
    """
    import matplotlib.pyplot as plt

    study = result.study
    cur = result.scenario.units["currency"]
    with plt.rc_context(_rc()):
        fig, axes = plt.subplots(1, 3, figsize=(10.0, 4.6))
        for ax, (key, n, _) in zip(axes, HEADLINES):
            o = output_label(key)
            handles = []
            for j, measure in enumerate(("predictive", "mode")):
                bottom = 0.0
                for i, ld in enumerate(study.loadings):
                    v = float(getattr(ld, measure)[n])
                    h = ax.bar(
                        j,
                        v,
                        bottom=bottom,
                        color=_FILLS[i % len(_FILLS)],
                        edgecolor="white",
                        width=0.6,
                        label=_t(ld.name) if j == 0 else None,
                    )
                    if j == 0:
                        handles.append(h)
                    bottom += v
                ax.text(j, bottom, o.fmt(bottom), ha="center", va="bottom", fontsize=8)
            ax.set_xticks([0, 1], ["predictive", "mode curve"])
            ax.set_ylabel(o.axis(cur))
            ax.set_title(f"{o.short} by loading")
            top = max(float(study.predictive[n]), float(study.mode[n]))
            ax.set_ylim(0, top * 1.18 if top > 0 else 1.0)
            ax.grid(True, axis="y", color="#e0e0e0", lw=0.6)
            ax.set_axisbelow(True)
        axes[0].legend(loc="upper right", fontsize=7.5, title="loading", title_fontsize=7.5)
        fig.suptitle(
            "Risk by loading: predictive (mean over the ensemble and response draws) and mode curves; totals on top",
            fontsize=9,
        )
        fig.tight_layout()
        return fig if path_stem is None else save(fig, path_stem)


def loading_shares(study, n="afp") -> np.ndarray:
    """Share of each loading in the predictive total of output ``n``."""
    v = np.array([ld.predictive[n] for ld in study.loadings], float)
    t = v.sum()
    return v / t if t > 0 else np.zeros_like(v)
