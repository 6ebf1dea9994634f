"""The case table's sizing inputs as arrays: the one adapter between the table and ``sizing``.

The engine sizes every case through it, and the headroom study re-sizes through it at other
flows, so both read the same columns the same way (and neither imports the other).
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from audit.iec import sizing

# The case columns sizing.size_valves takes, in its argument order (after is_gas).
SIZING_INPUTS = ("w", "p_in", "p_out", "t_in", "rho", "pv", "pc", "mu", "molar_mass", "k", "valve_size",
                 "pipe_in_id", "pipe_out_id", "fl", "xt", "fd")


def sizing_arrays(cases: pd.DataFrame, rows=slice(None)) -> dict[str, np.ndarray]:
    """The sizing inputs of ``cases`` (optionally some rows) as SI arrays, plus ``gas``.

    A pipe bore slightly under the valve size (heavy schedule, same nominal size) is no
    reducer: the bores are floored at the valve size here, once, for every caller.
    """
    a = {k: cases[k].to_numpy(float)[rows] for k in SIZING_INPUTS}
    for side in ("pipe_in_id", "pipe_out_id"):
        a[side] = np.maximum(a[side], a["valve_size"])
    a["gas"] = cases["phase"].to_numpy(dtype=object)[rows] == "gas"
    return a


def sizing_args(a: dict[str, np.ndarray], w: np.ndarray | None = None) -> list:
    """``size_valves``' arguments from ``sizing_arrays`` output, in order (the mass flow replaced by ``w`` if given)."""
    return [a["gas"], a["w"] if w is None else w] + [a[k] for k in SIZING_INPUTS[1:]]


def size_arrays(a: dict[str, np.ndarray], w: np.ndarray | None = None) -> dict[str, np.ndarray]:
    """sizing.size_valves on ``sizing_arrays`` output, with the mass flow replaced by ``w`` if given."""
    return sizing.size_valves(*sizing_args(a, w))
