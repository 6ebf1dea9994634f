"""Worker processes (the report's plots and PDF pages, the history's chunks, the line list's property
calls, long CSV files): imports nothing of the tool."""
from __future__ import annotations


def die_with_parent() -> None:
    """In a worker process: ask Linux to end it when the audit process dies (a killed run leaves no workers).

    prctl(PR_SET_PDEATHSIG, SIGKILL); elsewhere a no-op.
    """
    import ctypes
    import signal
    import sys

    if sys.platform.startswith("linux"):
        try:
            ctypes.CDLL("libc.so.6", use_errno=True).prctl(1, int(signal.SIGKILL))  # 1 = PR_SET_PDEATHSIG
        except OSError:
            pass


_TASK: dict = {}   # the function the workers run; set before they fork, so they share it and its data


def _run_task(item):
    return _TASK["function"](item)


def map_on_workers(function, items: list, workers: int | None = None) -> list:
    """``[function(item) for item in items]``, on up to ``workers`` forked processes (None: one per core).

    The results come back in the order of ``items``, so they do not depend on the workers.  One
    process where there is one item or one worker, where the system cannot fork, or inside a worker
    process already.  ``function`` and what it reads are shared by the fork, not sent.
    """
    import concurrent.futures
    import gc
    import multiprocessing
    import os

    workers = min(workers or os.cpu_count() or 1, len(items))
    if (workers < 2 or "fork" not in multiprocessing.get_all_start_methods()
            or multiprocessing.parent_process() is not None):
        return [function(item) for item in items]
    _TASK["function"] = function
    gc.freeze()  # the workers' collector then leaves the shared objects alone, so their pages stay shared
    try:
        with concurrent.futures.ProcessPoolExecutor(workers, mp_context=multiprocessing.get_context("fork"),
                                                    initializer=die_with_parent) as pool:
            return list(pool.map(_run_task, items))
    finally:
        _TASK.clear()
        gc.unfreeze()


def in_parts(function, n: int, min_part: int, parts: int | None = None) -> dict:
    """``function(start, stop)`` over [0, n), cut in contiguous parts of at least ``min_part`` (``map_on_workers``).

    ``function`` returns a dict of 1-D arrays (one element per index of its part, or any number:
    a part's text); the parts' arrays are joined in order, so the result is the same as
    ``function(0, n)`` wherever each element is computed on its own.  parts: at most this many
    (None: one per core).
    """
    import os

    import numpy as np

    parts = min(parts or os.cpu_count() or 1, n // max(min_part, 1))
    if parts < 2:
        return function(0, n)
    edges = np.linspace(0, n, parts + 1).astype(int).tolist()
    results = map_on_workers(lambda bounds: function(*bounds), list(zip(edges[:-1], edges[1:])), parts)
    return {name: np.concatenate([r[name] for r in results]) for name in results[0]}
