"""The steps a user runs, as plain functions: read inputs, compute, write outputs.

The CLI calls these and nothing else; a notebook can call them too.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

from .errors import InputError
from .hazard import STANDARD_AEPS, hazard_curves, read_ensemble
from .io import atomic_output_dir, write_csv
from .outputs.figures import plot_hazard
from .outputs.tables import hazard_by_aep, hazard_by_quantity, standard_aep_table

__all__ = ["hazard_step"]


def hazard_step(ensemble_path, family, out, *, quantity="discharge", unit=None, level=0.9, aep_max=0.999,
                aep_min=1e-7, n_grid=2000, overwrite=False, figure=True, title=None):
    """Read an ensemble, compute its summary curves and write the hazard tables and figure.

    Returns
    -------
    curves : HazardCurves
    summary : pandas.DataFrame
        Mode, median and predictive quantities at the standard AEPs.
    """
    for name, v in (("aep_max", aep_max), ("aep_min", aep_min)):
        if not 0 < v < 1:
            raise InputError(f"{name} = {v} must be strictly between 0 and 1", key=name)
    if not aep_min < aep_max:
        raise InputError(f"aep_min = {aep_min} must be below aep_max = {aep_max}", key="aep_min")
    if not 0 < level < 1:
        raise InputError(f"credible level {level} must be strictly between 0 and 1", key="level")
    if n_grid < 10:
        raise InputError(f"grid size {n_grid} is too small; expected at least 10 points", key="grid")
    ens = read_ensemble(ensemble_path, family, quantity=quantity, unit=unit)
    try:
        curves = hazard_curves(ens, level=level, aep_max=aep_max, aep_min=aep_min, n_grid=n_grid)
    except ValueError as exc:
        raise InputError(str(exc), ensemble_path) from None
    std = STANDARD_AEPS[(STANDARD_AEPS <= aep_max) & (STANDARD_AEPS >= aep_min)]
    summary = standard_aep_table(curves, std)
    with atomic_output_dir(out, overwrite=overwrite) as tmp:
        write_csv(Path(tmp) / f"hazard_by_{curves.quantity}.csv", hazard_by_quantity(curves))
        write_csv(Path(tmp) / "hazard_by_aep.csv", hazard_by_aep(curves))
        if figure:
            plot_hazard(curves, ens, Path(tmp) / "figures" / "hazard_ensemble",
                        title=title or f"Hazard ensemble ({ens.size} realizations, {ens.family})")
    return curves, summary


def write_run_outputs(result, out, *, overwrite=False, figures=True, sensitivity_report=None, comparison=None):
    """Write summary.json, the tables and the figures of a :class:`RiskResult` into ``out`` atomically."""
    from .io import write_json

    sc = result.scenario
    with atomic_output_dir(out, overwrite=overwrite) as tmp:
        tmp = Path(tmp)
        write_json(tmp / "summary.json", result.summary())
        t = tmp / "tables"
        t.mkdir()
        for name, df in result.tables().items():
            write_csv(t / f"{name}.csv", df)
        if figures and sc.outputs.get("figures", True):
            from .outputs import figures as plots

            plots.run_figures(result, tmp / "figures")
        if sensitivity_report is not None:
            from .outputs.sensitivity import write_sensitivity_outputs

            # the run's figure of the indices comes from plots.run_figures (same function as the command's)
            write_sensitivity_outputs(sensitivity_report, tmp, figures=False)
        if comparison is not None:
            from .outputs.comparison import write_comparison_files

            write_comparison_files(comparison, tmp, figures=figures and sc.outputs.get("figures", True))
        if sc.outputs.get("memo", True):
            try:
                from .outputs.memo import write_memo
            except ImportError:  # the memo arrives with the report module
                write_memo = None
            if write_memo is not None:
                write_memo(result, tmp)
    return Path(out)


def run_scenario(scenario_path, out, *, overwrite=False, workers=None, progress=None, figures=True):
    """Load, validate and assess a scenario, then write its outputs. Returns the :class:`RiskResult`."""
    from .risk.assess import assess
    from .config.scenario import load_scenario

    out = Path(out)
    if out.exists() and out.is_dir() and any(out.iterdir()) and not overwrite:
        raise InputError("output directory is not empty; pass --overwrite to replace it", out)
    sc = load_scenario(scenario_path)
    result = assess(sc, workers=workers, progress=progress)
    report = None
    from .config.settings import sensitivity_enabled
    from .sensitivity.analysis import sensitivity_for_run

    if sensitivity_enabled(sc):
        import dataclasses

        report = sensitivity_for_run(sc, result, workers=workers)
        result = dataclasses.replace(result, sensitivity=report.summary(),
                                     warnings=[*result.warnings, *report.warnings])
    comparison = None
    if sc.alternatives:
        from .decision.alternatives import compare
        from .outputs.comparison import attach_memo_section

        comparison = compare(sc, workers=workers)
        attach_memo_section(result, comparison)
    write_run_outputs(result, out, overwrite=overwrite, figures=figures, sensitivity_report=report,
                      comparison=comparison)
    return result
def sensitivity_workflow(scenario_path, out, *, n=None, seed=None, second_order=None, target_width=None,
                         morris=None, overwrite=False, workers=None, figures=True):
    """``riskcalc sensitivity``: load, run the chain, compute the report and write it into ``out`` atomically.

    Command-line values override the scenario's ``[sensitivity]`` table.

    Returns
    -------
    result : RiskResult
    report : SensitivityReport
    """
    from .config.scenario import load_scenario
    from .config.settings import read_settings
    from .outputs.sensitivity import write_sensitivity_outputs
    from .risk.assess import assess
    from .sensitivity.analysis import sensitivity_for_run
    from .sensitivity.factors import scenario_factors

    out = Path(out)
    if out.exists() and out.is_dir() and any(out.iterdir()) and not overwrite:
        raise InputError("output directory is not empty; pass --overwrite to replace it", out)
    sc_ = load_scenario(scenario_path)
    overrides = {"n": n, "seed": seed, "second_order": second_order or None, "target_width": target_width,
                 "morris": morris or None}
    settings = read_settings(sc_.raw.get("sensitivity"), sc_.path, default_seed=sc_.seed, overrides=overrides,
                             factors=scenario_factors(sc_.model))
    result = assess(sc_, workers=workers)
    report = sensitivity_for_run(sc_, result, settings, workers=workers)
    report = dataclasses.replace(report, provenance={**result.provenance, **report.provenance})
    with atomic_output_dir(out, overwrite=overwrite) as tmp:
        write_sensitivity_outputs(report, tmp, figures=figures, json_name="sensitivity.json")
    return result, report
