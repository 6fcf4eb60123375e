"""The results workbook: one sheet a table, for readers who work in spreadsheets.

``results.xlsx`` holds a ``summary`` sheet (the headline figures, one column a figure with its unit in
the header, one row a statistic) and one sheet for each tidy table of the run (``per_draw``,
``fn_curve``, the hazard, response and AEP-band breakdowns, and the sensitivity, comparison and
tolerable-risk tables when the run has them), with the same columns and values as the CSV files under
``tables/`` (their column names carry the units). A ``read_me`` sheet says what the
sheets are and carries the caution. Written with openpyxl through pandas; numbers stay numbers.
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["SUMMARY_ROWS", "summary_sheet", "workbook_tables", "write_workbook"]

#: Rows of the summary sheet: (label, how to read the value from a headline entry of summary.json).
SUMMARY_ROWS = (
    ("predictive (mean hazard)", ("predictive",)),
    ("mode curve", ("mode",)),
    ("median curve", ("median_curve",)),
    ("ensemble mean of draws", ("ensemble", "mean")),
    ("ensemble 5 %", ("ensemble", "p05")),
    ("ensemble 50 %", ("ensemble", "p50")),
    ("ensemble 95 %", ("ensemble", "p95")),
    ("ratio predictive / mode [-]", ("ratio_predictive_to_mode",)),
    ("Monte Carlo standard error", ("mc_standard_error",)),
)


def _get(d, path):
    for k in path:
        if not isinstance(d, dict) or k not in d:
            return None
        d = d[k]
    return d


def summary_sheet(summary: dict):
    """The summary sheet as a DataFrame: a column a headline figure (unit in the header), a row a statistic.

    The grid error (Richardson estimate, ``summary["grid_error"]``) is the last row, in the figure's units.
    """
    import pandas as pd

    from .labels import HEADLINE_KEYS, output_label

    cur = summary.get("units", {}).get("currency", "")
    cols = {}
    for key in HEADLINE_KEYS:
        o = output_label(key)
        h = summary[key]
        values = [_get(h, path) for _, path in SUMMARY_ROWS]
        values.append(_get(summary.get("grid_error") or {}, (key, "predictive")))
        cols[o.text(cur)] = values
    index = [label for label, _ in SUMMARY_ROWS] + ["grid error of the predictive figure (estimate)"]
    df = pd.DataFrame(cols, index=index)
    df.index.name = "statistic"
    return df.reset_index()


def _sheet_name(name: str, used: set) -> str:
    base = "".join(c if c not in "[]:*?/\\" else "_" for c in name)[:31] or "sheet"
    out, k = base, 2
    while out in used:
        suffix = f"_{k}"
        out, k = base[: 31 - len(suffix)] + suffix, k + 1
    used.add(out)
    return out


def workbook_tables(tables: dict, folder) -> dict:
    """The run's tables (DataFrames) followed by every other ``*.csv`` in ``folder`` (sensitivity,
    comparison, tolerable-risk tables written by later steps), read as the CSV files hold them."""
    import pandas as pd

    out = dict(tables)
    for p in sorted(Path(folder).glob("*.csv")):
        if p.stem not in out:
            out[p.stem] = pd.read_csv(p)
    return out


def write_workbook(path, summary: dict, tables: dict) -> Path:
    """Write ``results.xlsx``: read_me, summary and one sheet for each table of ``tables``.

    Parameters
    ----------
    path : path
        The workbook to write (inside the run's temporary output directory, so it appears atomically).
    summary : dict
        The summary.json structure.
    tables : dict of str to pandas.DataFrame
        The run's tidy tables (:func:`riskcalc.outputs.tables.run_tables`), keyed by sheet name.

    Returns
    -------
    Path
    """
    import pandas as pd

    from .labels import CAUTION

    path = Path(path)
    used: set = set()
    readme = pd.DataFrame(
        {
            "sheet": ["summary", *tables],
            "holds": [
                "headline figures: one column a figure (unit in the header), one row a statistic",
                *(f"the table tables/{name}.csv (units in the column names)" for name in tables),
            ],
        }
    )
    with pd.ExcelWriter(path, engine="openpyxl") as xw:
        pd.concat(
            [readme, pd.DataFrame({"sheet": ["title", "caution"], "holds": [summary.get("title", ""), CAUTION]})],
            ignore_index=True,
        ).to_excel(xw, sheet_name=_sheet_name("read_me", used), index=False)
        summary_sheet(summary).to_excel(xw, sheet_name=_sheet_name("summary", used), index=False)
        for name, df in tables.items():
            df.to_excel(xw, sheet_name=_sheet_name(name, used), index=False)
        for ws in xw.book.worksheets:
            ws.freeze_panes = "A2"
            for col in ws.iter_cols(min_row=1, max_row=1):
                cell = col[0]
                ws.column_dimensions[cell.column_letter].width = min(48, max(10, len(str(cell.value or "")) + 2))
    return path
