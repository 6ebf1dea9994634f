"""Headroom per valve: how far each valve can go before it runs out of travel or chokes.

Per case, at that case's pressures and temperature:
- the flow multiplier that brings the predicted travel to the travel rule's high limit, and to
  full travel (the inverse of the sizing: the forward flow at the target C, checked with the
  sizing itself and bisected where Reynolds effects move it);
- the choked capacity ceiling: the most flow the valve passes fully open (rated Cv) however far
  the outlet pressure falls, at the case's inlet conditions, as a multiplier of the case's flow
  (the sizing solved for the flow at an outlet pressure of 1 % of the inlet, past any choke);
- the pressure-drop headroom before the flow chokes, dp_choked - dp.
Per valve the most constraining case counts.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from audit.iec import sizing
from audit.iec.characteristic import cv_ratio_at_travel
from audit.iec.crossing import is_sizing_answer
from audit.casetable import size_arrays, sizing_args, sizing_arrays

_BISECTIONS = 40
CEILING_OUTLET_SHARE = 0.01  # outlet at 1 % of the inlet pressure: past any choke point


def _cv_at(a: dict, multiplier: np.ndarray) -> np.ndarray:
    r = size_arrays(a, a["w"] * multiplier)
    return np.where(r["converged"], r["cv"], np.inf)


def _misses(a: dict, m: np.ndarray, cv_target: np.ndarray) -> np.ndarray:
    """Cases whose sizing at flow multiplier ``m`` misses ``cv_target`` by more than 0.1 %.

    Where the target is provably the sizing's own answer (``crossing.is_sizing_answer``: turbulent,
    no choke switch below it) it does not miss, and no search is run; the others are sized."""
    off = ~is_sizing_answer(cv_target / sizing.KV_TO_CV, *sizing_args(a, a["w"] * m))
    if off.any():
        sub = {k: v[off] for k, v in a.items()}
        off[off] = np.abs(_cv_at(sub, m[off]) / cv_target[off] - 1.0) > 1e-3
    return off


def flow_multiplier_to_cv(a: dict, cv_target: np.ndarray, p_out: np.ndarray | None = None) -> np.ndarray:
    """Multiplier m on each case's flow at which the required Cv equals ``cv_target``.

    With C known, the flow it takes at the case's pressures follows directly from the forward
    form of the sizing (FP, FLP, xTP are evaluated at that C), so turbulent cases need no
    iteration.  The multipliers found are checked: provably (turbulent, no choke switch) without a
    search, else by one sizing run; cases that miss by more than 0.1 % (non-turbulent flow, where
    FR moves with the flow) are bisected on log m with the sizing itself, in a bracket from 1e-3
    to 1e3.
    """
    if p_out is not None:
        a = dict(a, p_out=p_out)
    with np.errstate(invalid="ignore", divide="ignore"):
        m = flow_at(a, cv_target, a["p_out"]) / a["w"]
    m = np.where(np.isfinite(m) & (m > 0), m, 1.0)
    off = _misses(a, m, cv_target)
    if off.any():
        sub = {k: v[off] for k, v in a.items()}
        m[off] = _bisect_multiplier(sub, cv_target[off])
    return m


def _bisect_multiplier(a: dict, cv_target: np.ndarray) -> np.ndarray:
    lo = np.full(cv_target.shape, 1e-3)
    hi = np.full(cv_target.shape, 1e3)
    for _ in range(_BISECTIONS):
        mid = np.sqrt(lo * hi)
        over = _cv_at(a, mid) > cv_target
        hi = np.where(over, mid, hi)
        lo = np.where(over, lo, mid)
    return np.sqrt(lo * hi)


def flow_at(a: dict, cv: np.ndarray, p_out: np.ndarray) -> np.ndarray:
    """Turbulent mass flow [kg/s] through Cv ``cv`` at the case's inlet state and outlet pressure ``p_out``."""
    kv = cv / sizing.KV_TO_CV
    return sizing.flow_through(kv, a["gas"], a["p_in"], p_out, a["t_in"], a["rho"], a["pv"], a["pc"],
                               a["molar_mass"], a["k"], a["valve_size"], a["pipe_in_id"], a["pipe_out_id"], a["fl"],
                               a["xt"])


def capacity_ceiling(a: dict, cv: np.ndarray) -> np.ndarray:
    """Flow multiplier at which Cv ``cv`` fully open is needed with the outlet pressure far below
    the choke point (1 % of the inlet): the most flow the valve can pass at the inlet state.
    Through the sizing itself, so non-turbulent cases get their Reynolds factor."""
    return flow_multiplier_to_cv(a, cv, p_out=a["p_in"] * CEILING_OUTLET_SHARE)


HEADROOM_CASE_COLUMNS = ("flow_mult_high_travel", "flow_mult_full_travel", "capacity_ceiling_mult",
                         "dp_headroom_kpa")
HEADROOM_VALVE_COLUMNS = HEADROOM_CASE_COLUMNS + ("headroom_case",)


def add_case_headroom(cases: pd.DataFrame, high_travel_pct: float) -> None:
    """Per-case headroom columns on ``cases`` (before the rules, which read the capacity margin)."""
    sized = np.flatnonzero(cases["converged"].to_numpy(bool))
    n = len(cases)
    cols = {name: np.full(n, np.nan) for name in HEADROOM_CASE_COLUMNS}
    if sized.size:
        a = sizing_arrays(cases, sized)
        rated = cases["rated_cv"].to_numpy(float)[sized]
        phi = cv_ratio_at_travel(np.full(sized.size, high_travel_pct), cases["characteristic"].to_numpy()[sized],
                                 cases["rangeability"].to_numpy(float)[sized])
        cols["flow_mult_high_travel"][sized] = flow_multiplier_to_cv(a, rated * phi)
        cols["flow_mult_full_travel"][sized] = flow_multiplier_to_cv(a, rated)
        cols["capacity_ceiling_mult"][sized] = capacity_ceiling(a, rated)
        cols["dp_headroom_kpa"][sized] = (cases["dp_choked"].to_numpy(float)[sized]
                                          - cases["dp"].to_numpy(float)[sized]) / 1000.0
    for name, values in cols.items():
        cases[name] = values
    # Choked at full travel: fully open, this case's outlet pressure already gives the most flow the
    # valve can pass (the ceiling); throughput is then limited by choking, not by the trim.
    cases["choked_at_full_travel"] = cols["flow_mult_full_travel"] >= cols["capacity_ceiling_mult"] * (1 - 2e-3)


def add_valve_headroom(cases: pd.DataFrame, valves: pd.DataFrame) -> list[str]:
    """Per-valve minima of the case headroom on ``valves`` (indexed by its ``valve`` column)."""
    per_valve = cases.groupby("valve").agg(**{name: (name, "min") for name in HEADROOM_CASE_COLUMNS})
    finite = np.isfinite(cases["flow_mult_full_travel"].to_numpy(float))
    limiting = cases.loc[finite, ["valve", "flow_mult_full_travel", "case"]] \
        .sort_values(["valve", "flow_mult_full_travel"], kind="stable").drop_duplicates("valve")
    per_valve["headroom_case"] = pd.Series(limiting["case"].to_numpy(), index=limiting["valve"].to_numpy())
    joined = valves[["valve"]].join(per_valve, on="valve")
    for name in HEADROOM_VALVE_COLUMNS:
        valves[name] = joined[name].to_numpy()
    valves["headroom_case"] = valves["headroom_case"].fillna("")
    return list(HEADROOM_VALVE_COLUMNS)
