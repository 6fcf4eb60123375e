"""Tables in: CSV and XLSX read cell by cell, so that every error names its place.

A table is a header row followed by data rows. Lines starting with ``#`` are
comments; blank lines are skipped. Row numbers in messages are the line (CSV)
or sheet row (XLSX) a user sees, the header being row 1 when nothing precedes
it. Column names are matched case-insensitively after stripping spaces.

Units travel in column names: ``discharge_m3s``, ``stage_ft``,
``damage_usd``. :func:`split_unit` takes a name apart.
"""

from __future__ import annotations

import contextlib
import json
import os
import shutil
import tempfile

import csv
import hashlib
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import InputError

__all__ = ["Table", "read_table", "sha256", "split_unit", "UNIT_CODES"]

#: Unit codes accepted in column names, with what they mean.
UNIT_CODES = {
    "m3s": "cubic metres per second",
    "cfs": "cubic feet per second",
    "m": "metres",
    "ft": "feet",
    "people": "people",
    "lives": "lives",
}


def sha256(path) -> str:
    """SHA-256 hex digest of a file's bytes."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def split_unit(name: str, quantities) -> tuple[str, str | None] | None:
    """Split ``'stage_ft'`` into ``('stage', 'ft')`` when it starts with a known quantity.

    Returns ``None`` when the name is not one of ``quantities`` with or without
    a unit suffix.
    """
    for q in quantities:
        if name == q:
            return q, None
        if name.startswith(q + "_") and len(name) > len(q) + 1:
            return q, name[len(q) + 1 :]
    return None


@dataclass(frozen=True)
class Table:
    """A table read from a file: column names and raw cell strings with their row numbers."""

    path: Path
    columns: tuple[str, ...]
    cells: list[list[str]]
    rows: list[int]  # file row number of each data row
    header_row: int = 1
    original: tuple[str, ...] = field(default=())

    def __len__(self):
        return len(self.cells)

    def has(self, name: str) -> bool:
        return name in self.columns

    def text(self, name: str) -> list[str]:
        j = self.columns.index(name)
        return [r[j] for r in self.cells]

    def numbers(
        self, name: str, *, positive=False, nonnegative=False, lo=None, hi=None, what="a finite number"
    ) -> np.ndarray:
        """Column ``name`` as floats, refusing text, blanks, NaN, infinities and out-of-range values."""
        j = self.columns.index(name)
        out = np.empty(len(self.cells))
        for i, (cells, row) in enumerate(zip(self.cells, self.rows)):
            raw = cells[j].strip() if j < len(cells) else ""
            if raw == "":
                raise InputError(f"empty cell; expected {what}", self.path, row=row, column=name)
            try:
                v = float(raw)
            except ValueError:
                raise InputError(
                    f"'{_short(raw)}' is not a number; expected {what}", self.path, row=row, column=name
                ) from None
            if not math.isfinite(v):
                raise InputError(f"'{_short(raw)}' is not finite; expected {what}", self.path, row=row, column=name)
            if positive and not v > 0:
                raise InputError(f"{raw} must be greater than 0", self.path, row=row, column=name)
            if nonnegative and v < 0:
                raise InputError(f"{raw} must not be negative", self.path, row=row, column=name)
            if lo is not None and v < lo or hi is not None and v > hi:
                raise InputError(f"{raw} is outside [{lo}, {hi}]", self.path, row=row, column=name)
            out[i] = v
        return out

    def stage_column(self, *, what="table", stage_unit=None) -> str:
        """The ``stage[_unit]`` column, its unit checked against the scenario's; refuses a table without one."""
        found = None
        for c in self.columns:
            s = split_unit(c, ("stage",))
            if s is None:
                continue
            if s[1] is not None and stage_unit is not None and s[1] != stage_unit:
                raise InputError(
                    f"unit '{s[1]}' does not match the scenario's stage unit '{stage_unit}'",
                    self.path,
                    row=self.header_row,
                    column=c,
                )
            found = c
        if found is None:
            raise InputError(f"missing column 'stage' in the {what}", self.path, row=self.header_row)
        return found

    def require_increasing(self, column: str, values, *, label="stage", what="table") -> None:
        """Refuse the first row whose value is not above the previous row's."""
        for i in range(1, len(values)):
            if not values[i] > values[i - 1]:
                raise InputError(
                    f"{label} {values[i]:g} is not above the previous row's {values[i - 1]:g}; the {what} must "
                    "increase",
                    self.path,
                    row=self.rows[i],
                    column=column,
                )

    def require(self, required, optional=(), *, what="table", allow_extra=False):
        """Refuse missing or unknown columns, and duplicated ones."""
        seen = set()
        for c in self.columns:
            if c in seen:
                raise InputError(f"column '{c}' appears twice", self.path, row=self.header_row)
            seen.add(c)
        missing = [c for c in required if c not in self.columns]
        if missing:
            raise InputError(
                f"missing column '{missing[0]}' in the {what}; expected columns "
                f"{', '.join(required)}" + (f" (optional: {', '.join(optional)})" if optional else ""),
                self.path,
                row=self.header_row,
            )
        if not allow_extra:
            known = set(required) | set(optional)
            for c in self.columns:
                if c not in known:
                    raise InputError(
                        f"unknown column '{c}' in the {what}; expected "
                        f"{', '.join(required)}" + (f" (optional: {', '.join(optional)})" if optional else ""),
                        self.path,
                        row=self.header_row,
                        column=c,
                    )


def _short(s: str, n: int = 30) -> str:
    s = s.replace("\n", " ")
    return s if len(s) <= n else s[: n - 1] + "…"


def _read_csv_rows(path: Path):
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise InputError("file not found", path) from None
    except IsADirectoryError:
        raise InputError("is a directory; expected a CSV or XLSX file", path) from None
    except OSError as exc:
        raise InputError(f"cannot be read ({exc.strerror})", path) from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise InputError(
            f"byte 0x{raw[exc.start]:02x} is not UTF-8 text; save the file as UTF-8", path, row=line
        ) from None
    lines = text.splitlines()
    out = []
    reader = csv.reader(lines)
    for lineno, cells in enumerate(reader, start=1):
        if not cells or all(c.strip() == "" for c in cells):
            continue
        if cells[0].lstrip().startswith("#"):
            continue
        out.append((lineno, cells))
    return out


def _read_xlsx_rows(path: Path, sheet=None):
    try:
        import openpyxl
    except ImportError:  # pragma: no cover - a declared dependency
        raise InputError("reading .xlsx needs openpyxl (pip install openpyxl)", path) from None
    if not path.exists():
        raise InputError("file not found", path)
    try:
        wb = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many types for a damaged file
        raise InputError(f"is not a readable .xlsx workbook ({type(exc).__name__})", path) from None
    try:
        if sheet is not None:
            if sheet not in wb.sheetnames:
                raise InputError(f"has no sheet '{sheet}'; sheets are {', '.join(wb.sheetnames)}", path)
            ws = wb[sheet]
        else:
            ws = wb.worksheets[0]
        out = []
        for lineno, values in enumerate(ws.iter_rows(values_only=True), start=1):
            cells = ["" if v is None else (repr(v) if isinstance(v, float) else str(v)) for v in values]
            while cells and cells[-1].strip() == "":
                cells.pop()
            if not cells or all(c.strip() == "" for c in cells):
                continue
            if cells[0].lstrip().startswith("#"):
                continue
            out.append((lineno, cells))
        return out
    finally:
        wb.close()


def read_table(path, *, what="table", sheet=None) -> Table:
    """Read a CSV or XLSX table into a :class:`Table`.

    Raises
    ------
    InputError
        Missing or unreadable file, non-UTF-8 bytes, an empty file, a header
        with no data rows, a data row longer than the header.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix in (".xlsx", ".xlsm"):
        rows = _read_xlsx_rows(path, sheet)
    elif suffix in (".csv", ".txt", ""):
        rows = _read_csv_rows(path)
    else:
        raise InputError(f"unsupported file type '{path.suffix}'; expected .csv or .xlsx", path)
    if not rows:
        raise InputError(f"the {what} is empty; expected a header row and at least one data row", path)
    header_row, header = rows[0]
    original = tuple(h.strip() for h in header)
    columns = tuple(h.strip().lower() for h in header)
    for j, c in enumerate(columns):
        if c == "":
            raise InputError(f"header cell {j + 1} is blank; every column needs a name", path, row=header_row)
    data = rows[1:]
    if not data:
        raise InputError(f"the {what} has a header but no data rows", path, row=header_row)
    cells, numbers = [], []
    for lineno, r in data:
        if len(r) > len(columns) and any(c.strip() for c in r[len(columns) :]):
            raise InputError(f"row has {len(r)} cells but the header has {len(columns)}", path, row=lineno)
        r = list(r[: len(columns)]) + [""] * max(0, len(columns) - len(r))
        cells.append(r)
        numbers.append(lineno)
    return Table(path, columns, cells, numbers, header_row, original)


# ----------------------------------------------------------------------
# Results out
# ----------------------------------------------------------------------


def unit_suffix(unit: str | None) -> str:
    """``'_m3s'`` for a unit code, ``''`` for none."""
    return f"_{unit}" if unit else ""


@contextlib.contextmanager
def atomic_output_dir(out, *, overwrite: bool = False):
    """Write a result directory atomically.

    Yields a temporary directory beside ``out``; on success it replaces
    ``out`` in one rename, and on any error (or Ctrl-C) it is removed and
    ``out`` is left as it was. A non-empty existing ``out`` needs
    ``overwrite=True``.
    """
    out = Path(out)
    if out.exists() and not out.is_dir():
        raise InputError("exists and is not a directory", out)
    if out.exists() and any(out.iterdir()) and not overwrite:
        raise InputError("output directory is not empty; pass --overwrite to replace it", out)
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
    try:
        yield tmp
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    old = None
    if out.exists():
        old = out.parent / f".{out.name}.old-{os.getpid()}"
        os.replace(out, old)
    os.replace(tmp, out)
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)


def to_plain(o):
    """Numbers, arrays and containers as plain JSON values; non-finite floats become None."""
    if isinstance(o, dict):
        return {str(k): to_plain(v) for k, v in o.items()}
    if isinstance(o, (list, tuple)):
        return [to_plain(v) for v in o]
    if isinstance(o, (float, np.floating)):
        return float(o) if math.isfinite(float(o)) else None
    if isinstance(o, np.integer):
        return int(o)
    if isinstance(o, np.ndarray):
        return to_plain(o.tolist())
    return o


def write_json(path, obj) -> None:
    """Write JSON with sorted keys and a trailing newline (byte-stable for the same input)."""
    Path(path).write_text(json.dumps(obj, indent=2, sort_keys=True, allow_nan=False) + "\n", encoding="utf-8")


def write_csv(path, df) -> None:
    """Write a tidy table with a fixed float format, so repeated runs are byte-identical."""
    df.to_csv(path, index=False, float_format="%.10g", lineterminator="\n")
