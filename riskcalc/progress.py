"""Progress bars on stderr for long work, hidden with --quiet and when stderr is not a terminal."""

from __future__ import annotations

import contextlib
import sys

__all__ = ["progress_bar", "progress_group"]


def _columns():
    from rich.progress import BarColumn, MofNCompleteColumn, TextColumn, TimeElapsedColumn

    return (TextColumn("{task.description:<20}"), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn())


def _shown(enabled: bool) -> bool:
    return bool(enabled) and sys.stderr.isatty()


@contextlib.contextmanager
def progress_bar(description: str, *, enabled: bool = True, total: int | None = None):
    """Yield a callback ``update(done, total)``; draws a rich progress bar when enabled and stderr is a TTY."""
    if not _shown(enabled):
        yield lambda done, total=None: None
        return
    from rich.console import Console
    from rich.progress import Progress

    with Progress(*_columns(), console=Console(stderr=True), transient=True) as bar:
        task = bar.add_task(description, total=total)

        def update(done, total=None):
            bar.update(task, completed=done, total=total)

        yield update


@contextlib.contextmanager
def progress_group(*, enabled: bool = True):
    """Yield ``bar(description) -> update(done, total)``: one display with a bar per stage of a run.

    A stage's bar appears when its callback is first called (a run without sensitivity shows no Sobol
    bar) and stays until the display closes. Nothing is drawn with ``enabled=False`` or when stderr is
    not a terminal; ``bar`` then gives None (no callback at all).
    """
    if not _shown(enabled):
        yield lambda description: None
        return
    from rich.console import Console
    from rich.progress import Progress

    with Progress(*_columns(), console=Console(stderr=True), transient=True) as display:
        tasks: dict = {}

        def bar(description):
            def update(done, total=None):
                if description not in tasks:
                    tasks[description] = display.add_task(description, total=total)
                display.update(tasks[description], completed=done, total=total)

            return update

        yield bar
