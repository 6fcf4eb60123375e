"""Project error types.

Every problem with user input is raised as :class:`InputError` with a one-line
message that names the file, and where it applies the key, row and column, and
says what was expected. The CLI prints the message and exits with status 2.
"""

from __future__ import annotations

__all__ = ["InputError", "locate"]


def locate(file=None, *, key=None, row=None, column=None) -> str:
    """Format a location prefix such as ``ens.csv, row 4, column 'sd'``.

    ``row`` is the 1-based line number in the file as a user sees it in an
    editor or a spreadsheet (the header is row 1).
    """
    parts = []
    if file is not None:
        parts.append(str(file))
    if key is not None:
        parts.append(f"key '{key}'")
    if row is not None:
        parts.append(f"row {row}")
    if column is not None:
        parts.append(f"column '{column}'")
    return ", ".join(parts)


class InputError(ValueError):
    """Bad user input, reported on one line with its location.

    Parameters
    ----------
    message : str
        What is wrong and what was expected.
    file, key, row, column : optional
        Where the problem is.
    """

    def __init__(self, message: str, file=None, *, key=None, row=None, column=None):
        self.file = None if file is None else str(file)
        self.key = key
        self.row = row
        self.column = column
        self.detail = " ".join(str(message).split())
        where = locate(file, key=key, row=row, column=column)
        super().__init__(f"{where}: {self.detail}" if where else self.detail)
