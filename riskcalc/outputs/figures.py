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

from .labels import (
    HEADLINE_KEYS,
    currency_text,
    fmt_aep_axis,
    fmt_num,
    fmt_quantity,
    output_label,  # noqa: E402
    unit_text,
)

__all__ = [
    "STYLE",
    "SERIES",
    "GUIDE",
    "FIGURE_STEMS",
    "save",
    "probability_axis",
    "plot_hazard",
    "plot_aep_distribution",
    "plot_response",
    "plot_consequences",
    "plot_risk_distributions",
    "plot_fn",
    "plot_contributions",
    "plot_sensitivity",
    "run_figures",
    "scenario_guidelines",
    "merged_chart_lines",
    "short_source",
]

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
    return {
        "legend.frameon": True,
        "legend.framealpha": 0.85,
        "legend.edgecolor": "none",
        "axes.axisbelow": True,
        "font.size": 9,
        "axes.titlesize": 10,
        "axes.labelsize": 9,
        "legend.fontsize": 8,
        "axes.spines.top": False,
        "axes.spines.right": False,
        "svg.hashsalt": "riskcalc",
        "svg.fonttype": "none",
    }


#: Resolution of the PNG files [dots per inch] and of the rasterized dense layers inside the SVG files.
PNG_DPI = 130
SVG_RASTER_DPI = 130


def save(fig, path_stem) -> list[Path]:
    """Save ``fig`` as ``<stem>.png`` and ``<stem>.svg``; returns both paths.

    The tight bounding box is computed once and used for both files (one layout pass fewer per file).
    The PNG is written with an adaptive palette of at most 256 colours (Pillow's fast octree
    quantizer), which keeps a figure of thin grey lines and text several times smaller than a
    full-colour PNG and the memo, which embeds the PNGs, under 1 MB. Layers drawn with
    ``rasterized=True`` (ensemble members, clouds of draws) are embedded in the SVG as one image at
    :data:`SVG_RASTER_DPI`; everything else stays vector.
    """
    import io

    from PIL import Image

    stem = Path(path_stem)
    stem.parent.mkdir(parents=True, exist_ok=True)
    paths = [stem.with_suffix(".png"), stem.with_suffix(".svg")]
    renderer = fig.canvas.get_renderer()
    bbox = fig.get_tightbbox(renderer).padded(0.1)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=PNG_DPI, bbox_inches=bbox, metadata={"Software": None})
    buf.seek(0)
    with Image.open(buf) as img:
        pal = img.convert("RGB").quantize(colors=256, method=Image.Quantize.FASTOCTREE, dither=Image.Dither.NONE)
        pal.save(paths[0], format="PNG", optimize=False, compress_level=9)
    fig.savefig(paths[1], dpi=SVG_RASTER_DPI, bbox_inches=bbox, metadata={"Date": None, "Creator": None})
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
    ax.set_xticklabels([fmt_aep_axis(t) for t in ticks])
    ax.set_xlim(paper_x(aep_max), paper_x(aep_min))
    ax.set_xlabel("annual exceedance probability (normal probability scale)")
    ax.grid(True, color=STYLE["grid"], lw=0.6)


def quantity_label(quantity, unit):
    """Axis label of a hazard quantity: ``'peak discharge [m³/s]'``."""
    return f"peak {quantity}" + (f" [{unit_text(unit)}]" if unit else "")


def members_collection(ax, xs, ens, aeps, *, max_members=150, seed=1):
    """Draw a weighted subsample of the ensemble's members as one rasterized LineCollection.

    At most ``max_members`` members are drawn, chosen with probability proportional to their weights
    (seeded, so that a figure is byte-stable); the legend entry says how many of how many are shown.
    One artist for all members keeps drawing time and file size independent of the ensemble's size.

    Returns
    -------
    LineCollection
    """
    from matplotlib.collections import LineCollection

    rng = np.random.default_rng(seed)
    idx = np.arange(ens.size)
    if ens.size > max_members:
        idx = np.sort(rng.choice(ens.size, max_members, replace=False, p=ens.weights))
    qm = ens.quantile(aeps, idx)
    segs = np.stack([np.broadcast_to(xs, qm.shape), qm], axis=-1)
    st = STYLE["member"]
    shown = f"all {ens.size:,}" if idx.size == ens.size else f"{idx.size:,} of {ens.size:,}, drawn by weight"
    lc = LineCollection(
        segs,
        colors=st["color"],
        linewidths=st["lw"],
        alpha=st["alpha"],
        rasterized=True,
        label=f"ensemble members ({shown})",
        zorder=2,
    )
    ax.add_collection(lc, autolim=True)
    ax.autoscale_view()
    return lc


def draw_summary_curves(ax, curves, xs, zorder=3):
    """The credible band and the predictive, median and mode curves on probability paper (x = ``xs``)."""
    lo, hi = curves.band_names
    ax.fill_between(
        xs,
        curves.quantity_lower,
        curves.quantity_upper,
        color=STYLE["band"]["color"],
        alpha=STYLE["band"]["alpha"],
        lw=0,
        zorder=zorder,
        label=f"{round(100 * curves.level)} % credible band ({lo}–{hi})",
    )
    ax.plot(xs, curves.quantity_predictive, **STYLE["predictive"], label="predictive (mean AEP)", zorder=zorder + 2)
    ax.plot(xs, curves.quantity_median, **STYLE["median"], label="median curve", zorder=zorder + 2)
    ax.plot(xs, curves.quantity_mode, **STYLE["mode"], label="mode curve", zorder=zorder + 2)


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
            members_collection(ax, xs, ens, curves.aeps, max_members=max_members, seed=seed)
        draw_summary_curves(ax, curves, xs, zorder=3)
        if curves.log_scale:
            log_axis(ax, "y")
        probability_axis(ax, curves.aeps.min(), curves.aeps.max())
        ax.set_ylabel(quantity_label(curves.quantity, curves.unit))
        ax.set_title(title)
        leg = ax.legend(loc="upper left")
        for h, txt in zip(leg.legend_handles, leg.get_texts()):  # faint member lines: a visible swatch
            if txt.get_text().startswith("ensemble members"):
                h.set_alpha(0.9)
                h.set_linewidth(1.0)
        if path_stem is None:
            return fig
        return save(fig, path_stem)


# --------------------------------------------------------------------------
# Figures of a risk run
# --------------------------------------------------------------------------
#: Failure modes and other categorical series: hue and lightness both differ, with a line style each.
SERIES = (
    {"color": "#2166ac", "ls": (0, (5, 1.5))},
    {"color": "#d6604d", "ls": (0, (1.5, 1.2))},
    {"color": "#4d9221", "ls": (0, (6, 1.5, 1.5, 1.5))},
    {"color": "#8c510a", "ls": (0, (3, 3))},
    {"color": "#762a83", "ls": (0, (8, 2, 1, 2, 1, 2))},
)
#: Tolerable-risk reference lines: greys of different weight and dash, so they never look like results.
GUIDE = (
    {"color": "#5a5a5a", "lw": 1.3, "ls": (0, (8, 3))},
    {"color": "#8a8a8a", "lw": 1.3, "ls": (0, (2, 2))},
    {"color": "#3a3a3a", "lw": 1.0, "ls": (0, (10, 2, 2, 2))},
    {"color": "#a0a0a0", "lw": 1.6, "ls": (0, (4, 1.5))},
    {"color": "#6e6e6e", "lw": 1.0, "ls": (0, (1, 1.5))},
)
#: Bars of AFP, EAD and ALL: three lightness levels plus hatching.
BARS = (
    {"color": "#1b1b1b", "hatch": ""},
    {"color": "#b35806", "hatch": "///"},
    {"color": "#92c5de", "hatch": "..."},
)
#: Markers for the predictive, mode and median values.
MARK = {
    "predictive": {"color": "#111111", "marker": "o", "ms": 7},
    "mode": {"color": "#b35806", "marker": "s", "ms": 6},
    "median": {"color": "#2166ac", "marker": "^", "ms": 6},
}

#: File stems written by :func:`run_figures`, in memo order.
FIGURE_STEMS = (
    "hazard_ensemble",
    "aep_at_design_discharge",
    "response_curves",
    "consequence_curves",
    "risk_distributions",
    "fn_chart",
    "risk_by_aep_band",
    "risk_by_loading",
    "sensitivity_indices",
)

#: Stems written only when the run has them: the loading breakdown (a scenario with [[loadings]]) and the
#: sensitivity indices (a run with Sobol results).
OPTIONAL_STEMS = ("risk_by_loading", "sensitivity_indices")

_SUP = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def _pow10(x, _pos=None) -> str:
    """Tick label ``10⁻⁴`` in plain Unicode (no mathtext: faster and identical in PNG and SVG)."""
    if not x > 0:
        return ""
    e = np.log10(x)
    if abs(e - round(e)) > 1e-6:
        return ""
    e = int(round(e))
    return "1" if e == 0 else "10" if e == 1 else "10" + str(e).translate(_SUP)


def log_axis(ax, which="x"):
    """Log scale on ``which`` ("x", "y" or "xy") with decade labels 10ⁿ and unlabelled minor ticks at 2 and 5.

    Two minor ticks a decade (not Matplotlib's eight) read as well on a risk chart and leave a quarter of
    the tick artists to lay out, which is most of the drawing time of a log-log figure.
    """
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    for a in which:
        axis = ax.xaxis if a == "x" else ax.yaxis
        (ax.set_xscale if a == "x" else ax.set_yscale)("log")
        axis.set_major_locator(LogLocator(base=10, numticks=12))
        axis.set_major_formatter(FuncFormatter(_pow10))
        axis.set_minor_locator(LogLocator(base=10, subs=(2.0, 5.0), numticks=12))
        axis.set_minor_formatter(NullFormatter())


def _t(s) -> str:
    """User text for Matplotlib: a literal ``$`` must not start mathtext."""
    return str(s).replace("$", r"\$")


def scenario_guidelines(scenario):
    """The tolerable-risk lines of a scenario: its ``[guidelines]`` section, else the defaults of its structure.

    Returns
    -------
    GuidelineSet
        From :func:`riskcalc.decision.guidelines.scenario_guideline_set`: the scenario's non-empty
        ``[guidelines]`` section; otherwise the display defaults for its ``structure``
        (:func:`riskcalc.decision.guidelines.default_guidelines`: a dam and an unspecified structure get the
        USACE, USBR and ANCOLD lines, a levee the USACE lines only).
    """
    from ..decision.guidelines import scenario_guideline_set

    return scenario_guideline_set(scenario)[0]


def short_source(source) -> str:
    """A line's source as a legend shows it: the citation up to its first comma, and "[from memory]" when the
    citation says it was recalled (``'US Bureau of Reclamation (2011) [from memory]'``)."""
    from ..decision.guidelines import UNVERIFIED

    text = str(source)
    recalled = UNVERIFIED in text or "[from memory" in text
    head = text.replace(UNVERIFIED, "").split(",")[0].strip()
    return head + (" [from memory]" if recalled else "")


def _geometry(line):
    d = {k: v for k, v in vars(line).items() if k not in ("name", "source")}
    return (line.kind, tuple(sorted(d.items())))


def merged_chart_lines(gs, *, with_source: bool = False):
    """Chart lines with identical geometry merged into one: ``[(line, "label A / label B"), ...]``.

    With ``with_source`` each name is followed by its source in brackets (:func:`short_source`).
    """
    out: dict = {}
    for ln in gs.chart_lines:
        key = _geometry(ln)
        name = f"{ln.name} ({short_source(ln.source)})" if with_source else ln.name
        if key in out:
            out[key] = (out[key][0], out[key][1] + " / " + name)
        else:
            out[key] = (ln, name)
    return list(out.values())


def _weighted_hist(ax, values, weights, *, log=True, bins=40, color="#9a9a9a", label=None):
    """Weighted histogram (probability per bin); zero or negative values are counted and left out on a log axis."""
    v = np.asarray(values, float)
    w = np.asarray(weights, float)
    ok = np.isfinite(v) & ((v > 0) if log else True)
    n_out = int((~ok).sum())
    if not ok.any():
        ax.text(0.5, 0.5, "no positive values", transform=ax.transAxes, ha="center", va="center")
        return n_out, None
    lo, hi = np.min(v[ok]), np.max(v[ok])
    if log:
        lo_l, hi_l = np.log10(lo), np.log10(hi)
        if hi_l - lo_l < 0.2:
            lo_l, hi_l = lo_l - 0.1, hi_l + 0.1
        edges = np.logspace(lo_l, hi_l, bins + 1)
        log_axis(ax, "x")
    else:
        if hi - lo <= 0:
            lo, hi = lo - 0.5, hi + 0.5
        edges = np.linspace(lo, hi, bins + 1)
    counts, _ = np.histogram(v[ok], bins=edges, weights=w[ok])
    ax.stairs(counts, edges, fill=True, color=color, lw=0, label=label)  # one artist, not one patch a bin
    ax.set_ylabel("probability (weight) per bin")
    ax.grid(True, axis="x", color=STYLE["grid"], lw=0.6)
    return n_out, edges


def _vline(ax, x, key, label):
    st = STYLE[key] if key != "median" else STYLE["median"]
    ax.axvline(
        x, color=st["color"], lw=st["lw"] + (0.4 if key == "predictive" else 0), ls=st["ls"], label=label, zorder=5
    )


def plot_aep_distribution(result, path_stem=None):
    """AEP of one discharge (the mode curve's design-AEP discharge) across the ensemble: weighted histogram.

    The weighted mean of the member AEPs is the predictive AEP of that
    discharge; the mode curve gives the design AEP itself.
    """
    sc, crest = result.scenario, result.crest
    ens = sc.ensemble
    q = ens.quantity
    x = crest.mode.quantity
    p = ens.aep(np.array([x]))[:, 0]
    with plt.rc_context(_rc()):
        fig, ax = plt.subplots(figsize=(7.0, 4.0))
        n_out, _ = _weighted_hist(ax, p, ens.weights, label=f"{ens.size} realizations (weighted)")
        _vline(
            ax,
            crest["mode"]["aep_on_predictive"],
            "predictive",
            f"mean (predictive) AEP {fmt_num(crest['mode']['aep_on_predictive'])}",
        )
        _vline(ax, crest["design_aep"], "mode", f"mode curve AEP {fmt_num(crest['design_aep'])}")
        p_med = float(result.curves.median.aep(np.array([x]))[0, 0])
        _vline(ax, p_med, "median", f"median curve AEP {fmt_num(p_med)}")
        ax.set_xlabel("annual exceedance probability of this flood under each realization [1/yr]")
        u = unit_text(ens.unit)
        ax.set_title(
            f"AEP of {q} {fmt_quantity(x, q)} {u} "
            f"(the mode curve's {fmt_aep_axis(crest['design_aep'])}-AEP flood) "
            "across the ensemble"
        )
        if n_out:
            ax.plot([], [], " ", label=f"({n_out} realization(s) with AEP 0 not shown)")
        ax.legend(loc="upper left")
        return fig if path_stem is None else save(fig, path_stem)


def plot_response(result, path_stem=None):
    """Rating curve (stage against discharge) and failure probability per mode and of the system against stage."""
    from .tables import response_table

    sc = result.scenario
    df = response_table(result)
    u = sc.units
    q = sc.ensemble.quantity
    qcol = df.columns[0]
    stage = df[f"stage_{u['stage']}"].to_numpy() if q == "discharge" else df[qcol].to_numpy()
    aep = df["aep_predictive"].to_numpy()
    plausible = (aep >= 1e-6) & (aep <= 0.9)
    if plausible.sum() < 5:
        plausible[:] = True
    su = unit_text(u["stage"])
    crest = result.crest["mode"]
    with plt.rc_context(_rc()):
        ncol = 2 if q == "discharge" else 1
        fig, axes = plt.subplots(1, ncol, figsize=(10.0 if ncol == 2 else 6.0, 4.2), squeeze=False)
        axes = axes[0]
        if q == "discharge":
            ax = axes[0]
            xq = df[qcol].to_numpy()
            ax.plot(xq[plausible], stage[plausible], color=STYLE["predictive"]["color"], lw=1.8, label="rating curve")
            top = result.extrapolation.get("rating_table_top")
            if top:
                ax.axvline(
                    top,
                    color=GUIDE[1]["color"],
                    ls=GUIDE[1]["ls"],
                    lw=1.0,
                    label=f"top of rating table ({fmt_quantity(top)} {unit_text(u['discharge'])}); extrapolated above",
                )
            ax.plot(
                [crest["discharge"]],
                [crest["stage"]],
                ls="none",
                **MARK["mode"],
                label=f"mode curve's {fmt_aep_axis(result.crest['design_aep'])}-AEP flood",
            )
            log_axis(ax, "x")
            ax.set_xlabel(quantity_label("discharge", u["discharge"]))
            ax.set_ylabel(f"peak stage [{su}]")
            ax.set_title("Rating: peak stage against peak discharge")
            ax.grid(True, color=STYLE["grid"], lw=0.6)
            ax.legend(loc="upper left")
        ax = axes[-1]
        h = stage[plausible]
        modes = sc.model.failure_mode_names
        if len(modes) > 1:
            for i, name in enumerate(modes):
                st = SERIES[i % len(SERIES)]
                ax.plot(
                    h,
                    df[f"p_failure_{name.replace(' ', '_')}"].to_numpy()[plausible],
                    color=st["color"],
                    ls=st["ls"],
                    lw=1.5,
                    label=f"failure mode: {_t(name)}",
                )
            ax.plot(
                h,
                df["p_failure_lower_bound"].to_numpy()[plausible],
                color="#9a9a9a",
                lw=1.0,
                ls=(0, (1, 1)),
                label="lower bound maxᵢ Pᵢ (fully dependent failure modes)",
            )
            sys_label = "system, independent failure modes 1 − Π(1 − Pᵢ)"
        else:
            sys_label = f"system (one mode: {_t(modes[0])})"
        ax.plot(h, df["p_failure_system"].to_numpy()[plausible], **STYLE["predictive"], label=sys_label)
        ax.axvline(
            crest["stage"],
            color=MARK["mode"]["color"],
            lw=0.9,
            ls=(0, (4, 2)),
            label=f"stage of the mode curve's {fmt_aep_axis(result.crest['design_aep'])}-AEP flood",
        )
        ax.set_ylim(-0.02, 1.02)
        ax.set_xlabel(f"peak stage [{su}]")
        ax.set_ylabel("probability of failure given stage [-]")
        ax.set_title("System response: failure probability given stage")
        ax.grid(True, color=STYLE["grid"], lw=0.6)
        ax.legend(loc="center left")
        fig.tight_layout()
        return fig if path_stem is None else save(fig, path_stem)


def _money_scale(v):
    m = float(np.nanmax(np.abs(v))) if np.size(v) else 0.0
    for f, name in ((1e9, "billion"), (1e6, "million"), (1e3, "thousand")):
        if m >= 10 * f:
            return f, f" {name}"
    return 1.0, ""


def plot_consequences(result, path_stem=None):
    """Damage and life loss against stage, given breach and given no breach (the consequence table)."""
    sc = result.scenario
    c = sc.model.consequences
    cur = currency_text(sc.units["currency"])
    su = unit_text(sc.units["stage"])
    h = np.asarray(c.stage, float)
    pad = 0.05 * (h[-1] - h[0] if h[-1] > h[0] else 1.0)
    hh = np.concatenate([[h[0] - pad], h, [h[-1] + pad]])
    db, dn, lb, ln = c.at(hh)
    with plt.rc_context(_rc()):
        fig, (a1, a2) = plt.subplots(1, 2, figsize=(10.0, 4.0))
        f, name = _money_scale(np.r_[db, dn])
        db0, dn0, lb0, ln0 = c.at(h)
        a1.plot(hh, db / f, **STYLE["predictive"], label="given breach")
        a1.plot(h, db0 / f, ls="none", marker="o", ms=3.5, color=STYLE["predictive"]["color"])
        a1.plot(hh, dn / f, **STYLE["mode"], label="given no breach")
        a1.plot(h, dn0 / f, ls="none", marker="s", ms=3.5, color=STYLE["mode"]["color"])
        a1.set_ylabel(f"damage [{cur}{name}]")
        a1.set_title("Economic damage against peak stage")
        if np.any(lb > 0) or np.any(ln > 0):
            a2.plot(hh, lb, **STYLE["predictive"], label="given breach")
            a2.plot(h, lb0, ls="none", marker="o", ms=3.5, color=STYLE["predictive"]["color"])
            a2.plot(hh, ln, **STYLE["mode"], label="given no breach")
            a2.plot(h, ln0, ls="none", marker="s", ms=3.5, color=STYLE["mode"]["color"])
        else:
            a2.text(0.5, 0.5, "no life loss in the consequence table", transform=a2.transAxes, ha="center")
        a2.set_ylabel("life loss [lives]")
        a2.set_title("Life loss against peak stage")
        for ax in (a1, a2):
            ax.set_xlabel(f"peak stage [{su}]")
            ax.grid(True, color=STYLE["grid"], lw=0.6)
            ax.legend(loc="upper left")
            ax.set_ylim(bottom=0)
        txt = [
            f"{p.description.split(',')[0]} per draw"
            for p in sc.model.uncertain.parameters
            if p.source == "consequences"
        ]
        if txt:
            fig.text(
                0.5,
                -0.02,
                "Points: consequence table rows; values held beyond its ends. Nominal curves; "
                + "; ".join(txt)
                + " (knowledge uncertainty).",
                ha="center",
                fontsize=7.5,
            )
        fig.tight_layout()
        return fig if path_stem is None else save(fig, path_stem)


def plot_risk_distributions(result, path_stem=None):
    """AFP, EAD and ALL across the Monte Carlo draws (weighted histograms, log axes), predictive and mode marked."""
    prop = result.propagation
    study = getattr(result, "study", None)
    cur = result.scenario.units["currency"]
    panels = (("afp", "annual_failure_probability"), ("ead", "expected_annual_damage"), ("all", "annualized_life_loss"))
    with plt.rc_context(_rc()):
        fig, axes = plt.subplots(1, 3, figsize=(10.0, 4.0))
        for ax, (n, key) in zip(axes, panels):
            o = output_label(key)
            fmt, label = o.fmt, o.axis(cur)
            h = result.overall[key]  # the total over loadings when the scenario has several
            e = h["ensemble"]
            vals, wts = (prop.column(n), prop.weights) if study is None else (study.draws[n], study.weights)
            n_out, _ = _weighted_hist(ax, vals, wts)
            if e["p95"] > 0 and e["p05"] > 0:
                ax.axvspan(e["p05"], e["p95"], color=STYLE["band"]["color"], alpha=0.25, lw=0, label="5–95 % of draws")
            if h["predictive"] > 0:
                _vline(ax, h["predictive"], "predictive", f"predictive {fmt(h['predictive'])}")
            if h["mode"] > 0:
                _vline(ax, h["mode"], "mode", f"mode curve {fmt(h['mode'])}")
            ax.set_xlabel(label)
            ax.set_title(f"{o.short} across the ensemble" + (" (total)" if study is not None else ""))
            if n_out:
                ax.plot([], [], " ", label=f"({n_out} draw(s) at 0 not shown)")
            ax.legend(loc="upper left", fontsize=7.5)
            ax.set_ylim(top=ax.get_ylim()[1] * 1.35)
        for ax in axes[1:]:
            ax.set_ylabel("")
        fig.suptitle(f"Risk of each of {prop.values.shape[0]:,} Monte Carlo draws (weighted)", fontsize=10)
        fig.tight_layout()
        return fig if path_stem is None else save(fig, path_stem)


def plot_fn(result, guidelines=None, path_stem=None, *, seed=1, max_points=1500):
    """F-N curves with the tolerable-risk F-N lines, and the f-N point with the life-loss and AFP lines.

    Parameters
    ----------
    result : RiskResult
    guidelines : GuidelineSet, optional
        Default :func:`scenario_guidelines`. Only ``chart_lines`` are drawn:
        F-N limit lines on the F-N axes; life-loss and annual failure
        probability lines on the f-N axes.
    """
    from ..decision.guidelines import FNLimitLine, evaluate_line

    from ..decision.guidelines import scenario_guideline_set

    if guidelines is None:
        gs, origin = scenario_guideline_set(result.scenario)
    else:
        gs, origin = guidelines, "given"
    lines = merged_chart_lines(gs, with_source=True)
    structure = getattr(result.scenario, "structure", "unspecified") or "unspecified"
    fn = result.overall_fn  # the total over loadings when the scenario has several
    N = np.asarray(fn["levels"], float)
    with plt.rc_context(_rc()):
        fig, (a1, a2) = plt.subplots(1, 2, figsize=(10.0, 6.0))
        # --- F-N
        xmax = max(N.max() * 3, 100.0)
        if "p05" in fn:
            a1.fill_between(
                N,
                np.maximum(fn["p05"], 1e-300),
                np.maximum(fn["p95"], 1e-300),
                step="post",
                color=STYLE["band"]["color"],
                alpha=STYLE["band"]["alpha"],
                lw=0,
                label="5–95 % of realizations",
            )
        for key, lab, st in (
            ("predictive", "predictive", STYLE["predictive"]),
            ("mode", "mode curve", STYLE["mode"]),
            ("median_curve", "median curve", STYLE["median"]),
        ):
            f = np.asarray(fn[key], float)
            a1.step(N, np.where(f > 0, f, np.nan), where="post", label=lab, **st, zorder=5)
        positive = [np.asarray(fn[k])[np.asarray(fn[k]) > 0] for k in ("predictive", "mode", "p05") if k in fn]
        positive = np.concatenate(positive) if positive else np.array([])
        ymin = positive.min() / 3 if positive.size else 1e-8
        ymax = min(1.0, 30 * positive.max()) if positive.size else 1.0
        k = 0
        nn = np.geomspace(1.0, xmax, 200)
        for ln, label in lines:
            if isinstance(ln, FNLimitLine):
                f = evaluate_line(ln, nn)
                st = GUIDE[k % len(GUIDE)]
                k += 1
                a1.plot(nn, f, **st, label=_t(label))
                fin = f[np.isfinite(f)]
                if fin.size:
                    ymin = min(ymin, fin.min() / 3)
        log_axis(a1, "xy")
        a1.set_xlim(1, xmax)
        a1.set_ylim(max(ymin, ymax * 1e-7), ymax)
        a1.set_xlabel("number of fatalities N [lives]")
        a1.set_ylabel("annual probability of N or more fatalities F [1/yr]")
        a1.set_title("F-N curve: annual probability of N or more fatalities")
        a1.grid(True, which="major", color=STYLE["grid"], lw=0.6)
        _legend_below(a1)
        # --- f-N
        study = getattr(result, "study", None)
        if study is None:
            af, al, dw = (
                result.propagation.column("afp"),
                result.propagation.column("all_incremental"),
                result.propagation.weights,
            )
        else:
            af, al, dw = study.draws["afp"], study.draws["all_incremental"], study.weights
        ok = (af > 0) & (al > 0)
        idx = np.flatnonzero(ok)
        if idx.size > max_points:
            rng = np.random.default_rng(seed)
            w = dw[idx] / dw[idx].sum()
            idx = np.sort(rng.choice(idx, max_points, replace=False, p=w))
        if idx.size:
            a2.scatter(
                al[idx] / af[idx],
                af[idx],
                s=4,
                color="#b8b8b8",
                lw=0,
                alpha=0.6,
                label=f"draws ({idx.size:,} of {int(ok.sum()):,} shown)",
                zorder=2,
                rasterized=True,
            )
        pts = []
        vp, vm, vmed = (
            (result.values_predictive, result.values_mode, result.values_median)
            if study is None
            else (study.predictive, study.mode, study.median_curve)
        )
        for v, key, lab in (
            (vp, "predictive", "predictive"),
            (vm, "mode", "mode curve"),
            (vmed, "median", "median curve"),
        ):
            if v["afp"] > 0 and v["all_incremental"] > 0:
                pts.append((v["all_incremental"] / v["afp"], v["afp"]))
                a2.plot([pts[-1][0]], [pts[-1][1]], ls="none", mec="white", mew=0.6, **MARK[key], label=lab, zorder=6)
        allx = np.r_[[p[0] for p in pts], al[idx] / af[idx] if idx.size else []]
        ally = np.r_[[p[1] for p in pts], af[idx] if idx.size else []]
        x0 = 10 ** np.floor(np.log10(allx.min())) if allx.size else 0.1
        x1 = 10 ** np.ceil(np.log10(allx.max() * 1.5)) if allx.size else 1000
        x0, x1 = min(x0, 1.0), max(x1, 100.0)
        y0 = 10 ** np.floor(np.log10(ally.min())) if ally.size else 1e-7
        y1 = min(1.0, 10 ** np.ceil(np.log10(ally.max() * 1.5))) if ally.size else 1e-1
        y0, y1 = min(y0, 1e-6), max(y1, 1e-2)
        nn = np.geomspace(x0, x1, 200)
        k = 0
        for ln, label in lines:
            if isinstance(ln, FNLimitLine):
                continue
            f = evaluate_line(ln, nn)
            st = GUIDE[(k + 2) % len(GUIDE)]
            k += 1
            a2.plot(nn, f, **st, label=_t(label))
        log_axis(a2, "xy")
        a2.set_xlim(x0, x1)
        a2.set_ylim(y0, y1)
        a2.set_xlabel("life loss given failure N = ALL / AFP [lives] (incremental)")
        a2.set_ylabel("annual failure probability f [1/yr]")
        a2.set_title("f-N point: AFP against life loss given failure")
        a2.grid(True, which="major", color=STYLE["grid"], lw=0.6)
        _legend_below(a2)
        fig.tight_layout()
        which = {
            "dam": "display defaults for a dam from published guidance",
            "levee": "display defaults for a levee from published guidance (USACE only)",
        }.get(structure, "display defaults for a dam from published guidance (structure kind not given)")
        if origin != "defaults":
            which = "the scenario's [guidelines]"
        fig.text(
            0.5,
            1.0,
            f"Reference lines: {which}; the governing agency's current policy decides which lines "
            "apply."
            + ("" if getattr(result, "individual_risk", ()) else " Individual risk is not assessed.")
            + (" Curves and points: total over loadings." if study is not None else ""),
            ha="center",
            va="bottom",
            fontsize=7.5,
            color="#444444",
        )
        return fig if path_stem is None else save(fig, path_stem)


def _legend_below(ax, width=44):
    """Legend under the axes in two columns, long labels wrapped."""
    import textwrap

    handles, labels = ax.get_legend_handles_labels()
    labels = ["\n".join(textwrap.wrap(lab, width)) or lab for lab in labels]
    ax.legend(handles, labels, loc="upper center", bbox_to_anchor=(0.5, -0.13), ncol=2, fontsize=7.5)


def band_labels(bands):
    """``[(hi, lo), ...]`` AEP bands as text: ``'0.1–0.01'``, ``'< 1e-6'``."""
    out = []
    for hi, lo in bands:
        out.append(f"< {fmt_aep_axis(hi)}" if lo <= 0 else f"{fmt_aep_axis(hi)}–{fmt_aep_axis(lo)}")
    return out


def plot_contributions(result, path_stem=None):
    """Share of AFP, EAD and ALL from each AEP band of the predictive curve (grouped bars)."""
    c = result.contributions
    keys = tuple((k, output_label(k).short) for k in HEADLINE_KEYS)
    labels = band_labels(c["annual_failure_probability"]["bands"])
    x = np.arange(len(labels))
    wbar = 0.26
    with plt.rc_context(_rc()):
        fig, ax = plt.subplots(figsize=(8.0, 4.0))
        for i, (key, name) in enumerate(keys):
            v = np.asarray(c[key]["values"], float)
            tot = v.sum()
            share = 100 * v / tot if tot > 0 else np.zeros_like(v)
            st = BARS[i]
            ax.bar(
                x + (i - 1) * wbar,
                share,
                wbar,
                color=st["color"],
                hatch=st["hatch"],
                edgecolor="#555555",
                lw=0.5,
                label=name + ("" if tot > 0 else " (zero)"),
            )
        ax.set_xticks(x)
        ax.set_xticklabels(labels)
        ax.set_xlabel("AEP band of the predictive curve (floods in this range of annual exceedance probability)")
        ax.set_ylabel("share of the predictive total [%]")
        ax.set_ylim(0, 100)
        ax.set_title("Where the risk comes from: contribution of each AEP band")
        ax.grid(True, axis="y", color=STYLE["grid"], lw=0.6)
        ax.legend(loc="upper right")
        return fig if path_stem is None else save(fig, path_stem)


def plot_sensitivity(sensitivity, path_stem=None, *, panel_notes=None, top=12):
    """Sobol total and first-order indices with their intervals, ranked by total effect, one panel per output.

    Parameters
    ----------
    sensitivity : dict
        ``{output: {factor: {"S1", "S1_conf", "ST", "ST_conf"}}}`` (summary.json's ``sensitivity``).
    path_stem : path, optional
        Where to save (PNG and SVG); the figure is returned when omitted.
    panel_notes : dict, optional
        ``{output: text}`` added to each panel's title (e.g. the sample size).
    top : int
        Largest number of factors shown per panel.

    Returns ``None`` when there is nothing to draw.
    """
    outs = [k for k, v in (sensitivity or {}).items() if isinstance(v, dict) and v]
    if not outs:
        return None

    def short(o):
        try:
            return output_label(o).short
        except KeyError:
            return o.replace("_", " ")

    def col(d, factors, k):
        return np.array([np.nan if d[f].get(k) is None else d[f][k] for f in factors], float)

    with plt.rc_context(_rc()):
        nf = min(top, max(len(sensitivity[o]) for o in outs))
        fig, axes = plt.subplots(1, len(outs), figsize=(3.9 * len(outs), 0.36 * nf + 1.7), squeeze=False)
        for ax, o in zip(axes[0], outs):
            d = sensitivity[o]
            factors = list(d)
            st, st_c = col(d, factors, "ST"), col(d, factors, "ST_conf")
            s1, s1_c = col(d, factors, "S1"), col(d, factors, "S1_conf")
            idx = np.argsort(-np.nan_to_num(st, nan=-np.inf), kind="stable")[:top][::-1]
            y = np.arange(idx.size)
            ax.barh(
                y,
                np.nan_to_num(st[idx]),
                xerr=np.nan_to_num(st_c[idx]),
                color=STYLE["band"]["color"],
                edgecolor=STYLE["predictive"]["color"],
                lw=0.5,
                error_kw={"lw": 0.8, "capsize": 2},
                label="total ST",
            )
            ax.errorbar(
                np.nan_to_num(s1[idx]),
                y,
                xerr=np.nan_to_num(s1_c[idx]),
                fmt="o",
                ms=4,
                color=STYLE["accent"],
                lw=0.8,
                capsize=2,
                label="first order S1",
            )
            ax.set_yticks(y)
            ax.set_yticklabels([_t(factors[i]) for i in idx], fontsize=8)
            ax.axvline(0, color=STYLE["predictive"]["color"], lw=0.6)
            lo = np.nanmin(np.concatenate([s1 - np.nan_to_num(s1_c), [0.0]]))
            ax.set_xlim(min(-0.05, float(lo) - 0.02), 1.05)
            ax.set_xlabel("Sobol index [-]")
            note = (panel_notes or {}).get(o)
            ax.set_title(_t(short(o) + (f" ({note})" if note else "")), fontsize=9)
            ax.grid(True, axis="x", color=STYLE["grid"], lw=0.6)
        axes[0][0].legend(loc="lower right", frameon=False)
        fig.suptitle(
            "What drives the risk: Sobol indices, ranked by total effect (bars: confidence intervals)", fontsize=10
        )
        fig.tight_layout()
        return fig if path_stem is None else save(fig, path_stem)


def run_figures(result, folder, *, progress=None):
    """The figures of a risk run (PNG and SVG) into ``folder``; returns the written paths.

    Writes the stems of :data:`FIGURE_STEMS` (the sensitivity figure only
    when ``result.sensitivity`` is present). Repeated runs give identical
    files (fixed SVG hash salt, no dates in metadata, seeded subsampling).
    ``progress(done, total)`` is called after each figure.
    """
    folder = Path(folder)
    sc = result.scenario
    steps = [
        lambda: plot_hazard(
            result.curves,
            sc.ensemble,
            folder / "hazard_ensemble",
            title=f"{_t(sc.title)}: hazard ensemble ({sc.ensemble.size} realizations)",
        ),
        lambda: plot_aep_distribution(result, folder / "aep_at_design_discharge"),
        lambda: plot_response(result, folder / "response_curves"),
        lambda: plot_consequences(result, folder / "consequence_curves"),
        lambda: plot_risk_distributions(result, folder / "risk_distributions"),
        lambda: plot_fn(result, None, folder / "fn_chart"),  # None: the lines and their origin from the scenario
        lambda: plot_contributions(result, folder / "risk_by_aep_band"),
    ]
    if getattr(result, "study", None) is not None:
        from .study_figures import plot_loadings

        steps.append(lambda: plot_loadings(result, folder / "risk_by_loading"))
    if result.sensitivity:
        steps.append(lambda: plot_sensitivity(result.sensitivity, folder / "sensitivity_indices"))
    paths: list = []
    for i, step in enumerate(steps, start=1):
        paths += step() or []
        if progress is not None:
            progress(i, len(steps))
    return paths
