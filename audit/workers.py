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


_PART: dict = {}   # the function in_parts runs; set before the workers fork, so they share it and its data


def _run_part(bounds: tuple[int, int]):
    return _PART["function"](*bounds)


def in_parts(function, n: int, parts: int, min_part: int) -> dict:
    """``function(start, stop)`` over [0, n) cut in up to ``parts`` contiguous parts on forked worker processes.

    ``function`` returns a dict of 1-D arrays (one element per index of its part, or any number: a
    part's text); the parts' arrays are joined in order, so the result is the same as
    ``function(0, n)`` wherever each element is computed on its own.  One process (``function(0, n)``) where a part would hold fewer than
    ``min_part`` elements, where the system cannot fork, or inside a worker process already.
    """
    import concurrent.futures
    import multiprocessing

    import numpy as np

    parts = min(parts, n // max(min_part, 1))
    if (parts < 2 or "fork" not in multiprocessing.get_all_start_methods()
            or multiprocessing.parent_process() is not None):
        return function(0, n)
    edges = np.linspace(0, n, parts + 1).astype(int)
    _PART["function"] = function
    try:
        with concurrent.futures.ProcessPoolExecutor(parts, mp_context=multiprocessing.get_context("fork"),
                                                    initializer=die_with_parent) as pool:
            results = list(pool.map(_run_part, zip(edges[:-1].tolist(), edges[1:].tolist())))
    finally:
        _PART.clear()
    return {name: np.concatenate([r[name] for r in results]) for name in results[0]}
