"""The files of a frequency fit: ensemble.csv, fit.json, plotting_positions.csv and the figures.

:func:`fit_files` renders the two files whose digests go into a run's provenance as bytes
(byte-stable for the same record, options and seed: no date is written); :func:`write_fit_outputs`
writes them with the plotting-position table and the figures into a folder.
"""

from __future__ import annotations

import io
import json
from pathlib import Path

import numpy as np

from .. import __version__
from ..io import to_plain, unit_suffix, write_csv

__all__ = ["fit_summary", "fit_files", "write_fit_outputs", "positions_table", "fit_display_curves"]

#: AEP range of the fitted curves drawn and tabulated.
DISPLAY_AEP = (0.995, 1e-4)


def fit_display_curves(fit, *, quantity="discharge", level=0.9):
    """Predictive, mode and median curves and the band of the fitted ensemble, AEP 0.995 to 1e-4."""
    from ..hazard import hazard_curves

    return hazard_curves(
        fit.ensemble(quantity=quantity), level=level, aep_max=DISPLAY_AEP[0], aep_min=DISPLAY_AEP[1], n_grid=600
    )


def _quantiles(curves) -> list[dict]:
    from ..hazard import STANDARD_AEPS
    from .tables import standard_aep_table

    std = STANDARD_AEPS[(STANDARD_AEPS <= DISPLAY_AEP[0]) & (STANDARD_AEPS >= DISPLAY_AEP[1])]
    return standard_aep_table(curves, std).to_dict(orient="records")


def fit_summary(fit, curves=None) -> dict:
    """The content of fit.json."""
    import emcee

    from ..hazard.fit import CAUTION_FIT

    rec = fit.record
    out = {
        "riskcalc_version": __version__,
        "emcee_version": emcee.__version__,
        "family": fit.family,
        "parameters": list(fit.names),
        "parameter_note": {
            "lp3": "mean, sd and skew of log10 of the peak",
            "lognormal": "mean and sd of log10 of the peak",
            "gev": "location, scale, shape; hydrology sign (shape > 0 bounded above), as scipy's genextreme c",
            "gumbel": "location, scale",
            "normal": "mean, sd",
        }[fit.family],
        "unit": rec.unit,
        "seed": fit.seed,
        "draws": fit.size,
        "mode": fit.mode,
        "mode_log_posterior": fit.mode_log_posterior,
        "mode_note": "maximum of the posterior density in (parameters, log of the scale); found by Nelder-Mead",
        "mle": fit.mle,
        "mle_log_likelihood": fit.mle_log_likelihood,
        "prior": fit.prior.describe(),
        "data": rec.summary(),
        "likelihood": {
            "exact_years": "log f(x)",
            "interval_years": "log[F(upper) - F(lower)]",
            "below_threshold_years": "n log F(threshold) for the years of a period with no recorded flood",
            "reference": "Stedinger and Cohn (1986), Water Resources Research 22(5), 785-793",
        },
        "posterior": fit.posterior_summary(),
        "diagnostics": fit.diagnostics(),
        "sampler": {
            "method": "ensemble sampler of emcee, differential-evolution (0.8) and snooker (0.2) moves",
            "walkers": fit.walkers,
            "reference": "Foreman-Mackey et al. (2013); ter Braak (2006); ter Braak and Vrugt (2008)",
        },
        "warnings": list(fit.warnings),
        "caution": CAUTION_FIT,
    }
    if curves is not None:
        out["quantiles"] = _quantiles(curves)
    return to_plain(out)


def _csv_bytes(df) -> bytes:
    buf = io.StringIO()
    df.to_csv(buf, index=False, float_format="%.10g", lineterminator="\n")
    return buf.getvalue().encode("utf-8")


def fit_files(fit, curves=None) -> dict[str, bytes]:
    """``{"ensemble.csv": bytes, "fit.json": bytes}``: exactly what :func:`write_fit_outputs` writes."""
    summary = fit_summary(fit, curves)
    return {
        "ensemble.csv": _csv_bytes(fit.ensemble_table()),
        "fit.json": (json.dumps(summary, indent=2, sort_keys=True, allow_nan=False) + "\n").encode("utf-8"),
    }


def positions_table(fit, positions):
    """The plotting positions as a tidy table with the unit in the column names."""
    u = unit_suffix(fit.record.unit)
    df = positions.rename(
        columns={"value": f"peak{u}", "lower": f"peak_lower{u}", "upper": f"peak_upper{u}", "aep": "aep_plotting"}
    ).copy()
    df[f"peak_lower{u}"] = np.where(df["kind"] == "interval", df[f"peak_lower{u}"], np.nan)
    df[f"peak_upper{u}"] = np.where(df["kind"] == "interval", df[f"peak_upper{u}"], np.nan)
    return df


def write_fit_outputs(fit, folder, *, figures=True, quantity="discharge", files=None, curves=None) -> dict:
    """Write the fit's files into ``folder`` (which must exist or be creatable).

    Returns ``{name: bytes}`` of ensemble.csv and fit.json (for provenance digests).
    """
    from ..hazard.fit.plotting import plotting_positions

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    curves = curves if curves is not None else fit_display_curves(fit, quantity=quantity)
    files = files if files is not None else fit_files(fit, curves)
    for name, data in files.items():
        (folder / name).write_bytes(data)
    positions = plotting_positions(fit.record, positive=fit.family in ("lp3", "lognormal") or quantity == "discharge")
    write_csv(folder / "plotting_positions.csv", positions_table(fit, positions))
    if figures:
        from .fit_figures import fit_figures

        fit_figures(fit, curves, positions, folder / "figures", quantity=quantity)
    return files
