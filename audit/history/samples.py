"""Each valve's samples: its flow signal's time stamps, the other signals held onto them, cleaned.

docs/history.md ("Samples and cleaning") is the rule; in short: a sample is a
distinct time stamp of the flow signal; every other signal is its last value
at or before that time if at most ``hold`` old; a sample is excluded for the
first of bad_quality, gap, stuck, not_operating, impossible that applies, and
every exclusion is counted.  All values here are SI (Pa, K, % travel, flow in
SI of its own basis).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

REASONS = ("bad_quality", "gap", "stuck", "not_operating", "impossible")
QUANTITIES = ("flow", "p_in", "p_out", "t_in", "travel")
NEEDED = ("p_in", "p_out", "t_in")   # with flow, what a sample cannot be audited without
NOT_OPERATING_FLOW_SHARE = 0.02      # of the largest line-list case flow (docs/history.md)
NOT_OPERATING_TRAVEL_PCT = 1.0


@dataclass
class Series:
    """One signal's records, sorted by time, one per time stamp, in SI (NaN: bad quality)."""
    time: np.ndarray      # int64 ns UTC
    value: np.ndarray     # float
    duplicates: int = 0   # later copies of a (signal, time stamp) pair, dropped


def series_of(time: np.ndarray, value: np.ndarray) -> Series:
    """Sort by time keeping file order among equal stamps, then keep the first of each stamp."""
    order = np.argsort(time, kind="stable")
    t, v = time[order], value[order]
    first = np.r_[True, t[1:] != t[:-1]] if len(t) else np.zeros(0, dtype=bool)
    return Series(t[first], v[first], int(len(t) - first.sum()))


def stuck_records(s: Series, flow: Series, longer_than_ns: int) -> np.ndarray:
    """Records in a run of one repeated value lasting longer than ``longer_than_ns`` while flow changes.

    A run is consecutive records of equal (numeric) value; its length is from its first to its last
    time stamp.  "Flow changes" means the flow signal's good values within the run are not all equal:
    a flat line while the process moves is a dead transmitter, not a steady plant.
    """
    n = len(s.value)
    out = np.zeros(n, dtype=bool)
    if n < 2:
        return out
    v = s.value
    same = np.r_[False, (v[1:] == v[:-1]) & np.isfinite(v[1:])]
    run = np.cumsum(~same)
    starts = np.flatnonzero(~same)
    ends = np.r_[starts[1:], n] - 1
    long = (s.time[ends] - s.time[starts]) > longer_than_ns
    for a, b in zip(starts[long], ends[long]):
        lo = np.searchsorted(flow.time, s.time[a], side="left")
        hi = np.searchsorted(flow.time, s.time[b], side="right")
        fv = flow.value[lo:hi]
        fv = fv[np.isfinite(fv)]
        if fv.size > 1 and fv.max() > fv.min():
            out[run == run[a]] = True
    return out


@dataclass
class Held:
    """A signal held onto the flow's time stamps."""
    value: np.ndarray   # NaN where bad or not found
    found: np.ndarray   # a record within the hold
    bad: np.ndarray     # found, but not a number
    stuck: np.ndarray   # found, and in a stuck run


def hold(s: Series, stuck: np.ndarray, at: np.ndarray, hold_ns: int) -> Held:
    """The last record at or before each time in ``at``, if at most ``hold_ns`` old (inclusive)."""
    idx = np.searchsorted(s.time, at, side="right") - 1
    safe = np.clip(idx, 0, max(len(s.time) - 1, 0))
    found = (idx >= 0) & (len(s.time) > 0)
    if len(s.time):
        found &= (at - s.time[safe]) <= hold_ns
        value = np.where(found, s.value[safe], np.nan)
        st = found & stuck[safe]
    else:
        value, st = np.full(len(at), np.nan), np.zeros(len(at), dtype=bool)
    return Held(value, found, found & ~np.isfinite(value), st)


@dataclass
class Samples:
    """One valve's samples after cleaning."""
    time: np.ndarray                 # every sample's time stamp (ns UTC)
    values: dict                     # quantity -> SI array over all samples (assumed ones interpolated)
    reason: np.ndarray               # '' for a used sample, else the first reason that excluded it
    counts: dict                     # reason -> samples excluded for it
    duplicates: int                  # (signal, time) copies dropped across the valve's signals

    @property
    def used(self) -> np.ndarray:
        return self.reason == ""


def clean(signals: dict, stuck: dict, assumed: dict, flow_floor: float, hold_ns: int,
          plausible: dict) -> Samples:
    """Build and clean one valve's samples.

    signals: quantity -> Series in SI, for the quantities with a signal (flow always);
    stuck: quantity -> per-record stuck flags of that Series;
    assumed: quantity -> function of flow (SI) giving the value from the line list's cases;
    flow_floor: flow below which the valve is not operating (SI of the flow's basis);
    plausible: quantity -> (low, high) in SI.
    """
    flow = signals["flow"]
    at = flow.time
    n = len(at)
    values = {"flow": flow.value.copy()}
    bad = ~np.isfinite(flow.value)
    gap = np.zeros(n, dtype=bool)
    is_stuck = np.zeros(n, dtype=bool)
    for q in QUANTITIES[1:]:
        if q in signals:
            h = hold(signals[q], stuck[q], at, hold_ns)
            values[q] = h.value
            if q in NEEDED:
                bad |= h.bad
                gap |= ~h.found
                is_stuck |= h.stuck
            else:  # travel: optional, but a stuck travel transmitter spoils the comparison
                is_stuck |= h.stuck
        elif q in assumed:
            values[q] = assumed[q](flow.value)
        else:
            values[q] = np.full(n, np.nan)
    with np.errstate(invalid="ignore"):
        idle = (flow.value < flow_floor) | (values["travel"] < NOT_OPERATING_TRAVEL_PCT)
        impossible = values["p_out"] >= values["p_in"]
        for q, (low, high) in plausible.items():
            v = values[q]
            impossible |= np.isfinite(v) & ((v < low) | (v > high))
    reason = np.full(n, "", dtype=object)
    for name, mask in zip(REASONS, (bad, gap, is_stuck, idle, impossible)):
        reason[(reason == "") & mask] = name
    counts = {r: int(np.sum(reason == r)) for r in REASONS}
    dups = sum(s.duplicates for s in signals.values())
    return Samples(at, values, reason, counts, dups)
