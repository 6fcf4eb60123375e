"""Views of a sensitivity report: tables and the figure of the indices."""

from __future__ import annotations

from pathlib import Path
from ..sensitivity.analysis import SensitivityReport


def plot_indices(report: SensitivityReport, path_stem=None, *, top: int = 12):
    """Ranked total and first-order indices with their intervals, one panel per output
    (:func:`riskcalc.plots.plot_sensitivity` with each panel's sample size and level).

    Returns the figure when ``path_stem`` is None, else the written paths (PNG and SVG).
    """
    from ..outputs.figures import plot_sensitivity

    notes = {k: f"N = {r.n}, {round(100 * r.conf_level)} % intervals" for k, r in report.sobol.items()}
    return plot_sensitivity(report.summary(), path_stem, panel_notes=notes, top=top)


def write_sensitivity_outputs(report: SensitivityReport, folder, *, figures: bool = True, json_name=None):
    """Write the tables (and the figure) of a report into an existing folder (e.g. a run's temporary folder).

    Writes ``tables/sobol_indices.csv``, ``tables/mean_mode_gap_by_source.csv``, with second order
    ``tables/sobol_second_order.csv``, with Morris ``tables/morris_screening.csv``,
    ``figures/sensitivity_indices.png|svg``, and with ``json_name`` that JSON file.
    """
    from ..io import write_csv, write_json

    folder = Path(folder)
    t = folder / "tables"
    t.mkdir(parents=True, exist_ok=True)
    write_csv(t / "sobol_indices.csv", report.frame())
    write_csv(t / "mean_mode_gap_by_source.csv", report.gap_frame())
    if report.settings.second_order:
        write_csv(t / "sobol_second_order.csv", report.s2_frame())
    if report.morris:
        write_csv(t / "morris_screening.csv", report.morris_frame())
    if figures:
        plot_indices(report, folder / "figures" / "sensitivity_indices")
    if json_name:
        write_json(folder / json_name, report.as_json())
