"""How many threads the kriging may use in this process (``--jobs``), kept apart from numba.

The count lives here, not in :mod:`geo_corrosion.surfaces._kernel`, so that the pipeline can
set it without loading numba (``geo-corrosion check`` never needs the compiled kernel).
"""

from __future__ import annotations

import os

__all__ = ["set_threads", "threads"]

#: Threads of the kriging (``None``: every core this process may use); ``--jobs`` sets it.
_THREADS: int | None = None


def threads() -> int:
    """Return how many threads the kriging uses: :func:`set_threads`'s, else every core."""
    if _THREADS is not None:
        return _THREADS
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - platforms without sched_getaffinity
        return max(1, os.cpu_count() or 1)


def set_threads(n: int | None) -> None:
    """Set how many threads the kriging uses in this process (None: every core)."""
    global _THREADS
    _THREADS = None if n is None else max(1, int(n))
