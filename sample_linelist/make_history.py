"""Write an invented process history for the demo unit (October, hourly), or a longer and larger one.

Fictional like the line list: the numbers follow each valve's own cases (flow
swings between its min and max over the day; pressures, temperature and
travel follow the flow as the cases describe), with what a real export holds:
quality strings, a gap, a shutdown, a stuck transmitter, a repeated record and
one valve whose observed travel drifts (see make_sample.HISTORY_BUILT_FOR).

Two files, to show both layouts the tool reads:
- fenmoor_history.csv: wide, one column per signal with its unit in brackets,
  time stamps in UTC ('Z');
- fenmoor_history_area300.csv: long (time, signal, value, unit), area 300's
  pressure signals, time stamps in plant local time with their offset.

Run:  python sample_linelist/make_history.py [--days 31] [--out DIR]
"""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np
import pandas as pd

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
SEED = 20261202
START = pd.Timestamp("2026-10-01T00:00:00Z")

from make_sample import HISTORY, HISTORY_BUILT_FOR  # noqa: E402


def case_table() -> pd.DataFrame:
    """The sample's own audit of its cases (SI), to shape each valve's history after them."""
    from audit.engine import compute
    from audit.io.loader import load_linelist

    audit = compute(load_linelist(HERE / "fenmoor_unit.csv"))
    cases = audit.cases[audit.cases["case_error"] == ""]
    return cases[["tag", "case", "w", "p_in", "p_out", "t_in", "travel_pct", "area"]]


def follow(flow, mine: pd.DataFrame, column: str) -> np.ndarray:
    order = np.argsort(mine["w"].to_numpy())
    return np.interp(flow, mine["w"].to_numpy()[order], mine[column].to_numpy()[order])


def valve_history(tag: str, mine: pd.DataFrame, hours: np.ndarray, rng) -> dict[str, np.ndarray]:
    """SI series per quantity for one valve (kg/s, Pa, K, % travel)."""
    w = mine["w"].to_numpy()
    lo, hi = w.min(), w.max()
    mid = 0.5 * (lo + hi)
    day = np.sin(2 * np.pi * hours / 24.0 + rng.uniform(0, 2 * np.pi))
    flow = mid + 0.45 * (hi - lo) * day + 0.03 * mid * rng.standard_normal(hours.size)
    flow = np.clip(flow, 0.6 * lo, 1.05 * hi)
    out = {"flow": flow}
    for q, col in (("p_in", "p_in"), ("p_out", "p_out"), ("t_in", "t_in"), ("travel", "travel_pct")):
        out[q] = follow(flow, mine, col)
    out["p_in"] = out["p_in"] * (1 + 0.002 * rng.standard_normal(hours.size))
    out["p_out"] = out["p_out"] * (1 + 0.002 * rng.standard_normal(hours.size))
    out["t_in"] = out["t_in"] + 0.2 * rng.standard_normal(hours.size)  # a live transmitter is never flat
    out["travel"] = out["travel"] + 0.5 * rng.standard_normal(hours.size)
    if tag == HISTORY_BUILT_FOR["drift"]:
        out["travel"] = out["travel"] + 0.15 * hours / 24.0   # 0.15 points a day: about 4.5 a month
    return out


UNITS = {"flow": ("kg/h", lambda v: v * 3600.0), "p_in": ("bar", lambda v: v / 1e5),
         "p_out": ("bar", lambda v: v / 1e5), "t_in": ("degC", lambda v: v - 273.15), "travel": ("%", lambda v: v)}


def build(days: int, rng) -> tuple[pd.DataFrame, pd.DataFrame]:
    hours = np.arange(days * 24, dtype=float)
    times = START + pd.to_timedelta(hours, unit="h")
    cases = case_table()
    wide = {"time": times.strftime("%Y-%m-%dT%H:%M:%SZ")}
    long_rows = []
    for tag, signals in HISTORY.items():
        mine = cases[cases["tag"] == tag]
        series = valve_history(tag, mine, hours, rng)
        area = str(mine["area"].iat[0])
        if area.startswith("200"):  # a day's shutdown of area 200: no flow, valves shut
            down = (hours >= 300) & (hours < 324)
            series["flow"] = np.where(down, 0.002 * series["flow"], series["flow"])
            series["travel"] = np.where(down, 0.0, series["travel"])
        if tag == HISTORY_BUILT_FOR["stuck"]:  # the inlet transmitter freezes for three days
            frozen = (hours >= 400) & (hours < 472)
            series["p_in"] = np.where(frozen, series["p_in"][400], series["p_in"])
        for q, signal in signals.items():
            unit, to_unit = UNITS[q]
            text = np.array([f"{x:.6g}" for x in to_unit(series[q])], dtype=object)
            if area.startswith("300") and q in ("p_in", "p_out"):
                keep = np.ones(hours.size, dtype=bool)
                if tag == HISTORY_BUILT_FOR["gap"] and q == "p_out":
                    keep &= ~((hours >= 200) & (hours < 210))  # ten hours missing
                local = (times + pd.Timedelta(hours=1)).strftime("%Y-%m-%dT%H:%M:%S+01:00")
                for i in np.flatnonzero(keep):
                    long_rows.append((local[i], signal, text[i], unit))
                if q == "p_in" and tag == HISTORY_BUILT_FOR["stuck"]:
                    long_rows.append((local[100], signal, "0", unit))  # a repeated record: the first one counts
                continue
            bad = rng.random(hours.size) < 0.01
            text[bad] = rng.choice(["Bad", "I/O Timeout", "Calc Failed", ""], size=int(bad.sum()))
            if tag == HISTORY_BUILT_FOR["bad_quality"] and q == "flow":
                text[(hours >= 500) & (hours < 506)] = "Shutdown"
            wide[f"{signal} [{unit}]"] = text
    long = pd.DataFrame(long_rows, columns=["time", "signal", "value", "unit"])
    return pd.DataFrame(wide), long


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--days", type=int, default=31)
    ap.add_argument("--out", type=Path, default=HERE)
    args = ap.parse_args(argv)
    wide, long = build(args.days, np.random.default_rng(SEED))
    args.out.mkdir(parents=True, exist_ok=True)
    wide.to_csv(args.out / "fenmoor_history.csv", index=False, lineterminator="\n")
    long.to_csv(args.out / "fenmoor_history_area300.csv", index=False, lineterminator="\n")
    print(f"wrote {len(wide)} hours x {len(wide.columns) - 1} signals (wide) and {len(long)} records (long)")


if __name__ == "__main__":
    main()
