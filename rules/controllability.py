"""Controllability: can each valve control over the whole range its cases span?

Per valve, over its sized cases:
- capacity margin: the flow multiplier that brings each case to full travel (computed by the
  engine's headroom step through the sizing itself, so choking, reducers and Reynolds effects
  count); close above 1 the valve has little room for more flow;
- the smallest case against the controllable minimum: a required C below rated C / R (R the
  inherent rangeability, IEC 60534-2-4) is under the trim's controllable range;
- the travel range: a valve that never reaches the oversized level in any case is oversized;
- the installed gain between adjacent cases ordered by mass flow,
  (delta w / w_full) / (delta travel / 100), with w_full the flow at full travel at the
  largest-flow case's conditions.  Common practice asks for about 0.5 to 2 (a loop tuned at one
  case then behaves at the others); the finding is a watch unless a site file grades it higher.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from .base import Rule, RuleResult, Threshold, col, combine, findings, text, valid

MIN_TRAVEL_STEP_PCT = 0.5  # adjacent cases closer in travel than this give no meaningful gain


def installed_gain(valve: np.ndarray, w: np.ndarray, travel: np.ndarray, w_full: np.ndarray):
    """Installed gain between each case and the next smaller-flow case of the same valve.

    valve: valve index per case; w: mass flow [kg/s]; travel: predicted travel [%];
    w_full: the valve's flow at full travel [kg/s], per case.  Returns (gain, previous case
    row); NaN and -1 for each valve's smallest case and where travel does not rise by at least
    MIN_TRAVEL_STEP_PCT.  Definition as in the module docstring (IEC 60534-2-4 characteristic
    terms; the band is common practice).
    """
    n = len(w)
    order = np.lexsort((w, valve))
    prev = np.full(n, -1)
    same = np.zeros(n, bool)
    same[1:] = valve[order][1:] == valve[order][:-1]
    prev[order[same]] = order[np.flatnonzero(same) - 1]
    has = prev >= 0
    p = np.where(has, prev, 0)
    step = travel - travel[p]
    with np.errstate(divide="ignore", invalid="ignore"):
        gain = ((w - w[p]) / w_full) / (step / 100.0)
    # Only where travel rises with flow: cases on one system curve.  Where a larger flow needs less
    # travel (a case at other pressures, such as start-up), the two do not describe one loop.
    keep = has & (step >= MIN_TRAVEL_STEP_PCT) & np.isfinite(gain)
    return np.where(keep, gain, np.nan), np.where(keep, prev, -1)


def evaluate(cases, th) -> RuleResult:
    ok = valid(cases) & np.isfinite(col(cases, "travel_pct"))
    n = len(cases)
    valve = cases["valve"].to_numpy(int)
    w, travel, ratio = col(cases, "w"), col(cases, "travel_pct"), col(cases, "cv_ratio")
    margin = col(cases, "flow_mult_full_travel") if "flow_mult_full_travel" in cases else np.full(n, np.nan)
    rangeability = col(cases, "rangeability")
    name = text(cases, "case")
    frame = pd.DataFrame({"valve": valve, "w": np.where(ok, w, np.nan), "travel": np.where(ok, travel, np.nan),
                          "row": np.arange(n)})
    sized = frame[ok]
    # Per valve: the largest-flow case (its w_full), the smallest-flow case, the most-open case.
    biggest = sized.sort_values(["valve", "w"], kind="stable").drop_duplicates("valve", keep="last")
    smallest = sized.sort_values(["valve", "w"], kind="stable").drop_duplicates("valve", keep="first")
    widest = sized.sort_values(["valve", "travel"], kind="stable").drop_duplicates("valve", keep="last")
    w_full_v = pd.Series(w[biggest["row"]] * margin[biggest["row"]], index=biggest["valve"].to_numpy())
    w_full = w_full_v.reindex(valve).to_numpy(float)
    gain, prev = installed_gain(np.where(ok, valve, -1 - np.arange(n)), w, travel, w_full)
    gain = np.where(ok, gain, np.nan)
    is_smallest = np.zeros(n, bool)
    is_smallest[smallest["row"].to_numpy(int)] = True
    is_widest = np.zeros(n, bool)
    is_widest[widest["row"].to_numpy(int)] = True

    near_full = ok & (margin >= 1.0) & (margin < th["margin_watch"])
    below_range = ok & is_smallest & (ratio < 1.0 / rangeability)
    oversized = ok & is_widest & (travel < th["oversized_pct"])
    off_band = ok & ((gain < th["gain_low"]) | (gain > th["gain_high"]))
    with np.errstate(divide="ignore", invalid="ignore"):
        how_far = np.where(gain > th["gain_high"], gain / th["gain_high"], th["gain_low"] / gain)
    return RuleResult(
        columns={"gain_below": gain},
        findings=combine(
            findings(near_full, "CAPACITY_MARGIN", lambda i: (
                f"Capacity margin {margin[i]:.2f} at case {name[i]}: {(margin[i] - 1) * 100:.0f} % more flow takes "
                f"the valve to full travel (watch below {th['margin_watch']:.2f})."), value=-margin),
            findings(below_range, "BELOW_RANGE", lambda i: (
                f"Smallest case {name[i]} needs {ratio[i] * 100:.2g} % of rated Cv, below the controllable minimum "
                f"1/R = {100 / rangeability[i]:.2g} % (R {rangeability[i]:.0f}): the valve cannot control there."),
                value=-ratio * rangeability),
            findings(oversized, "OVERSIZED", lambda i: (
                f"Oversized: the valve opens at most {travel[i]:.1f} % (case {name[i]}) over all its cases, below "
                f"{th['oversized_pct']:.0f} %: it controls near its seat everywhere."), value=-travel),
            findings(off_band, "GAIN", lambda i: (
                f"Installed gain {gain[i]:.2f} between cases {name[prev[i]]} and {name[i]} is outside "
                f"{th['gain_low']:.2g}-{th['gain_high']:.2g} (common practice): loop tuning that suits one case "
                "will be too slow or too lively at the other."), value=how_far),
        ))


RULE = Rule(
    code="controllability", title="Controllability", order=65, evaluate=evaluate,
    thresholds=(
        Threshold("margin_watch", 1.1, "flow multiplier", "common practice",
                  "capacity margin below which a valve is watched (1.1: 10 % more flow reaches full travel)",
                  low=1.0, high=3.0),
        Threshold("oversized_pct", 20.0, "% travel", "common practice",
                  "a valve whose travel stays below this in every case is oversized", high=100.0),
        Threshold("gain_low", 0.5, "", "common practice", "lowest installed gain accepted between adjacent cases"),
        Threshold("gain_high", 2.0, "", "common practice", "highest installed gain accepted between adjacent cases"),
        Threshold("gain_severity", 2.0, "level", "common practice",
                  "level of an installed-gain finding: 1 note, 2 watch, 3 plan, 4 urgent", low=1.0, high=4.0),
    ),
    ordered=(("gain_low", "gain_high"),),
    description="capacity margin, controllable minimum (1/R), oversized valves, installed gain between cases",
)
