"""`riskcalc memo`: rebuild the decision memo of a finished run, and print it to PDF."""

from __future__ import annotations

from pathlib import Path

import typer


def memo(
    outdir: Path = typer.Argument(..., help="Output directory of a finished `riskcalc run`."),
    pdf: bool = typer.Option(False, "--pdf", help="Also print memo.pdf through headless Chromium."),
):
    """Rebuild memo.md and memo.html of a finished run from its summary, tables and figures.

    Example:

        riskcalc memo out/amberlow --pdf

    rewrites out/amberlow/memo.md and memo.html and prints out/amberlow/memo.pdf.
    """
    from ..workflows import memo_workflow

    for path in memo_workflow(outdir, pdf=pdf):
        typer.echo(f"memo: {path}")
