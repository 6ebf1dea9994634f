"""Array models evaluated a block of cases at a time.

The models here compute each case on its own, with many temporaries per case (the sizing's search
evaluates its equations a dozen times or more; the gas noise method keeps a spectrum of bands per case).
Over a whole list at once those temporaries leave the processor's cache and grow the heap with the
list (at 600,000 cases, hundreds of MB); a block of ``BLOCK`` cases keeps both bounded.  Each case
is computed on its own, so the blocks give the numbers of one pass (tests/test_engine_parts.py).
"""
from __future__ import annotations

import numpy as np

BLOCK = 8192  # cases at once: a few MB of temporaries per array model


def in_blocks(function, *args, **kwargs) -> dict:
    """``function(*args, **kwargs)`` a block of ``BLOCK`` cases at a time, its dict of arrays joined in order.

    The arguments that are 1-D arrays as long as the longest are cut into blocks; scalars and the
    rest are passed whole.  ``function`` returns a dict of arrays with one row per case.
    """
    values = list(args) + list(kwargs.values())
    n = max((np.size(v) for v in values if np.ndim(v) == 1), default=0)
    if n <= BLOCK:
        return function(*args, **kwargs)
    args = [np.asarray(a) if np.ndim(a) == 1 else a for a in args]   # lists and Series cut like arrays
    kwargs = {k: np.asarray(v) if np.ndim(v) == 1 else v for k, v in kwargs.items()}

    def cut(v, start):
        return v[start:start + BLOCK] if isinstance(v, np.ndarray) and v.ndim == 1 and v.size == n else v

    parts = [function(*(cut(a, start) for a in args), **{k: cut(v, start) for k, v in kwargs.items()})
             for start in range(0, n, BLOCK)]
    return {name: np.concatenate([part[name] for part in parts]) for name in parts[0]}
