"""Threads for chunked array work.

scipy's special functions and numpy's array loops release the GIL, so chunks of
(R, Q) work run in parallel threads without copying data between processes.
Results come back in the order of the items, so sums over chunks (and so every
result) are the same for any number of workers.
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor

__all__ = ["default_workers", "map_in_threads"]


def default_workers() -> int:
    """Worker threads for chunked work: the machine's cores, at most 4."""
    return max(1, min(4, os.cpu_count() or 1))


def map_in_threads(fn, items, workers=None, progress=None) -> list:
    """``[fn(item) for item in items]``, in ``workers`` threads (default :func:`default_workers`).

    ``progress(done, total)`` is called as items finish, in order.
    """
    items = list(items)
    n = default_workers() if workers is None else max(1, int(workers))
    out = []
    if n == 1 or len(items) < 2:
        for i, it in enumerate(items, start=1):
            out.append(fn(it))
            if progress:
                progress(i, len(items))
        return out
    with ThreadPoolExecutor(n) as ex:
        for i, res in enumerate(ex.map(fn, items), start=1):
            out.append(res)
            if progress:
                progress(i, len(items))
    return out
