"""`riskcalc new`: write a commented scenario skeleton and template tables into a new folder."""

from __future__ import annotations

from pathlib import Path

import typer


def new(
    folder: Path = typer.Argument(..., help="Folder to create (it must not exist, or be empty)."),
    structure: str = typer.Option(..., "--structure", "-s", help="Kind of structure: dam or levee."),
):
    """Write a commented scenario skeleton and template tables, every value an invented placeholder.

    Example:

        riskcalc new my_levee --structure levee
        riskcalc check my_levee/scenario.toml
        riskcalc run my_levee/scenario.toml --out my_levee/results

    writes my_levee/scenario.toml (each key commented) and its tables (ensemble, rating or routing,
    fragility, consequences). The skeleton passes `riskcalc check` and runs as it is, so each table can
    be replaced one at a time. Its numbers describe nothing real: results need review by licensed
    engineers and the governing agency. An existing folder that is not empty is refused.
    """
    from ..scaffold import write_skeleton

    files = write_skeleton(folder, structure)
    typer.echo(f"wrote {len(files)} files into {folder}/ (every value an invented placeholder: replace them)")
    typer.echo(f"next: riskcalc check {Path(folder) / 'scenario.toml'}")
