"""Independent per-event work on several processes, results in order.

Evaluating a season's events (a track, its features, their signal to noise) is the same
function applied to each event, independently.  :func:`map_indexed` runs ``func(i)`` for every
index on ``jobs`` worker processes started by ``fork`` (Linux): the workers inherit the
parent's inputs and caches (open kernels, tables) without pickling them, and only the results
travel back.  Where ``fork`` is not the platform's safe choice (macOS, Windows) or ``jobs`` is
1, the same calls run in this process, so results never depend on ``jobs``
(``tests/test_ranking.py`` compares them).
"""

from __future__ import annotations

import os
import sys

from .errors import InputError

# Below this many items the start-up of the workers costs more than it saves.
MIN_ITEMS_PER_JOB = 4

_FUNC = None  # the function the forked workers call (set only while a pool runs)


def available_cores() -> int:
    """Cores this process may run on (its CPU affinity where the system reports it)."""
    try:
        return max(len(os.sched_getaffinity(0)), 1)
    except (AttributeError, OSError):  # pragma: no cover - not Linux
        return max(os.cpu_count() or 1, 1)


def effective_jobs(jobs: int, n_items: int) -> int:
    """The number of processes :func:`map_indexed` will use: ``jobs`` (0: one per core),
    at most one per :data:`MIN_ITEMS_PER_JOB` items, and 1 where ``fork`` is not used.

    Raises
    ------
    InputError
        ``jobs`` negative.
    """
    jobs = int(jobs)
    if jobs < 0:
        raise InputError(f"--jobs {jobs}: give 0 (one per core) or a positive number")
    if jobs == 0:
        jobs = available_cores()
    if not sys.platform.startswith("linux"):
        return 1
    return max(1, min(jobs, n_items // MIN_ITEMS_PER_JOB))


def _call(i: int):
    return i, _FUNC(i)


def map_indexed(func, n_items: int, jobs: int = 1, advance=None) -> list:
    """``[func(0), ..., func(n_items - 1)]``, on :func:`effective_jobs` processes.

    ``advance()`` is called once per finished item (a progress bar).  An exception in
    ``func`` is raised here, as in a plain loop.
    """
    global _FUNC
    n_jobs = effective_jobs(jobs, n_items)
    if n_jobs <= 1:
        out = []
        for i in range(n_items):
            out.append(func(i))
            if advance is not None:
                advance()
        return out
    import multiprocessing

    out = [None] * n_items
    _FUNC = func
    try:
        with multiprocessing.get_context("fork").Pool(n_jobs) as pool:
            chunk = max(1, n_items // (8 * n_jobs))
            for i, result in pool.imap_unordered(_call, range(n_items), chunksize=chunk):
                out[i] = result
                if advance is not None:
                    advance()
    finally:
        _FUNC = None
    return out
