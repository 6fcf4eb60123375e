"""Scenario skeletons: the commented templates that ``riskcalc new`` copies into a new folder.

The templates live in ``riskcalc/templates/<structure>/`` (package data): a ``scenario.toml`` with
every key commented and the tables it names. Every value in them is an invented placeholder, and
each file says so.
"""

from __future__ import annotations

import shutil
import tempfile
from importlib import resources
from pathlib import Path

from .errors import InputError

__all__ = ["STRUCTURES", "template_files", "write_skeleton"]

#: Kinds of structure with a template.
STRUCTURES = ("dam", "levee")


def template_files(structure: str) -> list:
    """The template files of ``structure`` (importlib.resources traversables), sorted by name."""
    if structure not in STRUCTURES:
        raise InputError(f"unknown structure '{structure}'; expected one of {', '.join(STRUCTURES)}", key="--structure")
    root = resources.files("riskcalc").joinpath("templates").joinpath(structure)
    return sorted((f for f in root.iterdir() if f.is_file()), key=lambda f: f.name)


def write_skeleton(folder, structure: str) -> list[Path]:
    """Copy the templates of ``structure`` into ``folder`` (created); returns the written paths.

    The files are written into a temporary folder beside ``folder`` and renamed into place, so a
    failure leaves nothing half-written.

    Raises
    ------
    InputError
        An unknown structure, or ``folder`` exists and is not an empty folder.
    """
    files = template_files(structure)
    folder = Path(folder)
    if folder.exists():
        if not folder.is_dir():
            raise InputError("exists and is not a folder; choose a new folder name", folder)
        if any(folder.iterdir()):
            raise InputError("folder is not empty; choose a new or empty folder (nothing was written)", folder)
    parent = folder.resolve().parent
    if not parent.is_dir():
        raise InputError("parent folder does not exist", parent)
    tmp = Path(tempfile.mkdtemp(prefix=f".{folder.name}.", dir=parent))
    try:
        for f in files:
            (tmp / f.name).write_bytes(f.read_bytes())
        if folder.exists():
            folder.rmdir()  # empty, checked above
        tmp.replace(folder)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return [folder / f.name for f in files]
