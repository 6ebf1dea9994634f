"""The audit process's heap: freed memory handed back to the system between stages; imports nothing of the tool.

Measured on a 20,000-valve line list (benchmarks/bench_audit.py): the stages free far more than
they keep, but two allocators hold on to what was freed.  Arrow's own pool (pandas' text columns)
kept some 70 MB it no longer used, and glibc's heap some 50 MB in free pages between live blocks.
Handing both back after each large stage lowers the peak without changing a result.  The other
setting tried, a fixed mmap threshold (every array over 128 kB mapped afresh), lowered the peak
less and made the headroom stage several times slower from the page faults; it is not used.
"""
from __future__ import annotations

import ctypes
import sys

_LIBC = None


def use_system_allocator_for_text() -> None:
    """Let Arrow (pandas' text columns) allocate through malloc, so ``release_free_memory`` reaches it too.

    Buffers made before the switch stay with the pool that made them and are freed there.
    """
    try:
        import pyarrow
    except ImportError:  # pandas without pyarrow: nothing to switch
        return
    pyarrow.set_memory_pool(pyarrow.system_memory_pool())


def release_free_memory() -> None:
    """Return freed heap pages to the system: Arrow's unused pool memory and glibc's free pages (malloc_trim).

    Costs a few milliseconds; a no-op where there is no glibc.
    """
    global _LIBC
    try:
        import pyarrow

        pyarrow.default_memory_pool().release_unused()
    except ImportError:
        pass
    if not sys.platform.startswith("linux"):
        return
    if _LIBC is None:
        try:
            _LIBC = ctypes.CDLL("libc.so.6")
        except OSError:
            _LIBC = False
    if _LIBC and hasattr(_LIBC, "malloc_trim"):
        _LIBC.malloc_trim(0)
