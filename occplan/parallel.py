"""Independent per-event work on several processes, results in order.

Evaluating a season's events (a track, its features, their signal to noise) is the same
function applied to each event, independently.  :func:`map_indexed` runs ``func(i)`` for every
index on ``jobs`` worker processes started by ``fork`` (Linux): the workers inherit the
parent's inputs and caches (open kernels, tables) without pickling them, and only the results
travel back.  Where ``fork`` is not the platform's safe choice (macOS, Windows) or ``jobs`` is
1, the same calls run in this process, so results never depend on ``jobs``
(``tests/test_search.py`` and ``tests/test_cli_find_rank.py`` compare them).
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


def effective_jobs(jobs: int, n_items: int, min_items_per_job: int | None = None) -> int:
    """The number of processes :func:`map_indexed` will use: ``jobs`` (0: one per core),
    at most one per ``min_items_per_job`` items (default :data:`MIN_ITEMS_PER_JOB`), and 1
    where ``fork`` is not used.

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
    import multiprocessing

    if multiprocessing.current_process().daemon:  # a pool's worker may not start a pool
        return 1
    per_job = MIN_ITEMS_PER_JOB if min_items_per_job is None else int(min_items_per_job)
    return max(1, min(jobs, n_items // max(per_job, 1)))


def _call(i: int):
    return i, _FUNC(i)


def map_indexed(func, n_items: int, jobs: int = 1, progress=None, label: str = "",
                min_items_per_job: int | None = None, first_here: bool = True) -> list:
    """``[func(0), ..., func(n_items - 1)]``, on :func:`effective_jobs` processes.

    ``progress`` and ``label``: a progress bar on stderr advanced once per finished item
    (None: when stderr is a terminal; :func:`occplan.search._progress`).  An exception in
    ``func`` is raised here, as in a plain loop.  ``min_items_per_job`` 1 suits items that
    take seconds each (a figure); so does ``first_here=False``: the first item then goes to
    a worker too (by default it runs here first, so the caches it fills are inherited).
    """
    from .search import _progress

    bar = _progress(n_items, label, progress) if label else None
    try:
        return _map(func, n_items, jobs, None if bar is None else lambda: bar.advance(bar.task),
                    min_items_per_job, first_here)
    finally:
        if bar is not None:
            bar.stop()


def _map(func, n_items, jobs, advance, min_items_per_job, first_here) -> list:
    global _FUNC
    n_jobs = effective_jobs(jobs, n_items, min_items_per_job)
    if n_jobs <= 1:
        out = []
        for i in range(n_items):
            out.append(func(i))
            if advance is not None:
                advance()
        return out
    import multiprocessing

    out = [None] * n_items
    start = 0
    if first_here:
        # the first item runs here: the caches it fills (catalogues, tables) are then
        # inherited by every worker instead of being rebuilt in each
        out[0] = func(0)
        start = 1
        if advance is not None:
            advance()
    _FUNC = func
    pool = multiprocessing.get_context("fork").Pool(n_jobs, initializer=_worker_start)
    try:
        chunk = max(1, (n_items - start) // (8 * n_jobs))
        for i, result in pool.imap_unordered(_call, range(start, n_items), chunksize=chunk):
            out[i] = result
            if advance is not None:
                advance()
        pool.close()  # all results are in: the workers leave on their own
    except BaseException:
        pool.terminate()
        raise
    finally:
        pool.join()
        _FUNC = None
    return out


def _worker_start() -> None:
    """A forked worker takes the default action on SIGTERM (the parent's handlers, such as
    the one that cleans up a file being written, are not the worker's business) and leaves
    SIGINT to the parent, which stops the pool.  Its notes go to stderr through a plain
    handler: a terminal handler's console lock may have been held by the parent's progress
    bar thread at the fork, and no thread of the worker would ever release it."""
    import logging
    import signal

    from .log import LOGGER, _CurrentStderr

    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    if LOGGER.handlers:
        level = LOGGER.level
        for h in list(LOGGER.handlers):
            LOGGER.removeHandler(h)
        handler = _CurrentStderr()
        handler.setFormatter(logging.Formatter("%(message)s"))
        LOGGER.addHandler(handler)
        LOGGER.setLevel(level)
