"""Progress bars on stderr for long work, hidden with --quiet and when stderr is not a terminal."""

from __future__ import annotations

import contextlib
import sys

__all__ = ["progress_bar"]


@contextlib.contextmanager
def progress_bar(description: str, *, enabled: bool = True, total: int | None = None):
    """Yield a callback ``update(done, total)``; draws a rich progress bar when enabled and stderr is a TTY."""
    if not enabled or not sys.stderr.isatty():
        yield lambda done, total=None: None
        return
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

    with Progress(
        TextColumn("{task.description}"),
        BarColumn(),
        MofNCompleteColumn(),
        TimeElapsedColumn(),
        console=Console(stderr=True),
        transient=True,
    ) as bar:
        task = bar.add_task(description, total=total)

        def update(done, total=None):
            bar.update(task, completed=done, total=total)

        yield update
