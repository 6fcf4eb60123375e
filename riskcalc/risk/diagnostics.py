"""Diagnostics of a risk run: the warnings and notes that say where a figure may mislead.

Each check is a small pure function returning a list of messages;
:func:`riskcalc.risk.assess.assess` adds them up in a fixed order. Thresholds are module constants so that the docs and tests can name them.
"""

from __future__ import annotations

import numpy as np

from .records import HEADLINES

__all__ = [
    "REL_SE_WARN",
    "TRUNCATION_WARN",
    "EXTRAPOLATION_WARN",
    "ESS_WARN",
    "monte_carlo_warnings",
    "ensemble_size_warnings",
    "truncation_warnings",
    "extrapolation_warnings",
    "grid_bottom_warnings",
    "always_failing_warnings",
    "mode_outside_band_warnings",
]

#: Relative Monte Carlo standard error above which the run warns.
REL_SE_WARN = 0.05
#: Share of a headline figure from the tail cell above the grid above which the run warns.
TRUNCATION_WARN = 0.01
#: Share of AFP from beyond the rating table above which the run warns.
EXTRAPOLATION_WARN = 0.01
#: Share of EAD or ALL from above the consequence table above which the run warns.
CONSEQUENCE_WARN = 0.01
#: Effective ensemble size below which percentiles and the predictive tail are flagged.
ESS_WARN = 200


def _unit(code) -> str:
    from ..outputs.labels import unit_text

    u = unit_text(code) if code else ""
    return f" {u}" if u else ""


def _words(key):
    return key.replace("_", " ")


def monte_carlo_warnings(headline: dict, n_realizations: int) -> list:
    out = []
    for key, h in headline.items():
        pv, se = h.predictive, h.mc_standard_error
        if pv > 0 and se / pv > REL_SE_WARN:
            out.append(
                f"{_words(key)}: the Monte Carlo standard error is {100 * se / pv:.1f} % of the predictive "
                f"value; the ensemble ({n_realizations} realizations) is too small for the AEPs that carry "
                "this risk"
            )
    return out


def ensemble_size_warnings(weights) -> list:
    ess = 1.0 / float(np.sum(np.asarray(weights, float) ** 2))
    if ess < ESS_WARN * (1 - 1e-9):
        return [
            f"the ensemble's effective size is {ess:.0f} realizations; percentiles and the predictive tail are "
            f"uncertain below about {ESS_WARN}"
        ]
    return []


def truncation_warnings(tail: dict, totals: dict, aep_above_grid: float) -> list:
    out = []
    for key, n, _ in HEADLINES:
        tot = totals[n]
        if tot > 0 and tail[n] / tot > TRUNCATION_WARN:
            out.append(
                f"{100 * tail[n] / tot:.1f} % of the {_words(key)} comes from floods above the grid (AEP "
                f"{aep_above_grid:.2g}); lower grid.aep_min"
            )
    return out


def extrapolation_warnings(aep_beyond: float, share: float, top: float, unit: str = "") -> list:
    if aep_beyond > 0 and share > EXTRAPOLATION_WARN:
        return [
            f"{100 * share:.1f} % of the annual failure probability comes from discharges above the rating table "
            f'({top:g}{_unit(unit)}), where stage is extrapolated (rating.extrapolation = "extend")'
        ]
    return []


def grid_bottom_warnings(G, names, totals: dict, aep_below: float) -> list:
    """The response already active at the bottom of the grid, where the mass below is counted as carrying none."""
    out = []
    for key, n, _ in HEADLINES:
        tot = totals[n]
        col = G[:, names.index(n)]
        g0 = col[0]
        if tot > 0 and g0 > 0.01 * col.max():
            out.append(
                f"the {_words(key)} integrand is already {g0:.3g} at the bottom of the grid, where the "
                f"response should be inactive; the {aep_below:.2g} of annual peaks below the grid are counted "
                f"as carrying no risk (up to {100 * aep_below * g0 / tot:.2g} % more); check the response "
                "tables and the hazard variable, or raise grid.aep_max"
            )
    return out


def short(key) -> str:
    return {"annual_failure_probability": "AFP", "expected_annual_damage": "EAD", "annualized_life_loss": "ALL"}[key]


def consequence_table_warnings(shares: dict, top_stage: float, stage_unit: str) -> list:
    out = []
    for key, s in shares.items():
        if s > CONSEQUENCE_WARN:
            out.append(
                f"{100 * s:.1f} % of the {_words(key)} comes from stages above the consequence table's last "
                f"stage ({top_stage:g}{_unit(stage_unit)}), where consequences are held constant; extend the table"
            )
    return out


def autocorrelation_warnings(size) -> list:
    if size.assumes_independent_members or not size.effective_size_mcmc:
        return []
    worst = min(size.effective_size_mcmc.values())
    if worst < ESS_WARN * (1 - 1e-9):
        return [
            f"the ensemble's MCMC sample is worth about {worst:.0f} independent realizations (autocorrelation); "
            "the Monte Carlo standard errors, which treat members as independent, are too small"
        ]
    return []


def always_failing_warnings(pf) -> list:
    if np.all(np.asarray(pf) > 0.999):
        return [
            "the system failure probability is above 0.999 over the whole grid: the structure fails for every "
            "flood considered; check the fragility curves, stage datum and hazard variable"
        ]
    return []


def mode_outside_band_warnings(x_mode, lo_b, hi_b, design_aep, quantity, level, unit: str = "") -> list:
    if not lo_b <= x_mode <= hi_b:
        u = _unit(unit)
        return [
            f"the mode curve's {design_aep:g}-AEP {quantity} ({x_mode:.4g}{u}) lies outside the ensemble's "
            f"{round(100 * level)} % band ({lo_b:.4g} to {hi_b:.4g}{u}); check the explicit mode parameters"
        ]
    return []
