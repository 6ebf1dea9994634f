"""Worker processes (the report's plots and PDF pages, the history's chunks): imports nothing of the tool."""
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
