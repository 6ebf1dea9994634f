"""Process-history audit: time and memory per stage, on a synthetic unit with an hourly history.

    python benchmarks/bench_history.py [--valves 100] [--days 30] [--repeat 3] [--format csv|parquet]
                                       [--skip-full]
    python benchmarks/bench_history.py --valves 2000 --days 365 --repeat 3 --serial-repeat 1 \
                                       --format parquet --skip-full
                                       # the issue's scale: a year of hourly history for 2,000 valves

Builds a synthetic line list (benchmarks/synthetic.py) whose valves all name five signals, writes
a wide hourly history that follows each valve's cases (sample_linelist/make_history.py's model),
then runs the history study ``--repeat`` times and prints the median of each stage: read, clean
(samples built and cleaned), and inside the per-sample audit: properties, flows, sizing, outlet
state, headroom, rules, ranking; then writing history.csv. It also prints the cost per sample and
what a year of hourly history for 2,000 valves (17.5 million samples) would take at that cost:
an extrapolation, labelled as one, not a run. Each run is a fresh process (cold property caches, its
own peak memory: the proportional set size of that process and the workers it forks, sampled, with
shared pages counted once, and the maximum resident set of the process alone).
"""
from __future__ import annotations

import argparse
import resource
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "benchmarks"))
sys.path.insert(0, str(ROOT / "sample_linelist"))

from memory import TreeMemory  # noqa: E402
from stages import TIMES, instrument_engine, timed  # noqa: E402

def build(folder: Path, valves: int, days: int, fmt: str = "csv") -> tuple[Path, Path]:
    from synthetic import make_linelist

    from audit.engine import compute
    from audit.io.loader import load_linelist
    from make_history import valve_history

    ll_path = make_linelist(valves, folder / "ll_plain.csv")
    table = pd.read_csv(ll_path, dtype=str, keep_default_na=False)
    n = len(table)
    for q, prefix in (("flow", "F"), ("p_in", "PA"), ("p_out", "PB"), ("t_in", "T"), ("travel", "Z")):
        table[f"hist_{q}"] = [f"{prefix}{i}" for i in range(n)]
    ll = folder / "ll.csv"
    table.to_csv(ll, index=False)
    audit = compute(load_linelist(ll))
    cases = audit.cases[audit.cases["case_error"] == ""]
    hours = np.arange(days * 24, dtype=float)
    stamps = (pd.Timestamp("2026-01-01T00:00:00Z") + pd.to_timedelta(hours, unit="h")).strftime("%Y-%m-%dT%H:%M:%SZ")
    rng = np.random.default_rng(5)
    wide = {"time": stamps}
    # signals are named by line-list row (some rows are refused, so rows and audited valves differ)
    row_of = {tag: k for k, tag in enumerate(table["tag"])}
    for tag in audit.valves["tag"]:
        i = row_of[tag]
        mine = cases[cases["tag"] == tag]
        if len(mine) < 2:
            continue
        s = valve_history(tag, mine, hours, rng)
        wide[f"F{i} [kg/h]"] = np.round(s["flow"] * 3600.0, 4)
        wide[f"PA{i} [bar]"] = np.round(s["p_in"] / 1e5, 5)
        wide[f"PB{i} [bar]"] = np.round(s["p_out"] / 1e5, 5)
        wide[f"T{i} [degC]"] = np.round(s["t_in"] - 273.15, 3)
        wide[f"Z{i} [%]"] = np.round(s["travel"], 2)
    hist = folder / f"history.{fmt}"
    if fmt == "parquet":
        pd.DataFrame(wide).to_parquet(hist, index=False)
    else:
        pd.DataFrame(wide).to_csv(hist, index=False)
    # valves whose cases could not give a history name no signal: keep the line list consistent
    named = {int(c[1:].split(" ")[0]) for c in wide if c.startswith("F")}
    for q in ("flow", "p_in", "p_out", "t_in", "travel"):
        table[f"hist_{q}"] = [v if i in named else "" for i, v in enumerate(table[f"hist_{q}"])]
    table.to_csv(ll, index=False)
    del wide
    return ll, hist


def instrument() -> None:
    import audit.history.study as study

    timed(study, "read_history", "read")
    timed(study, "_valve_samples", "clean")
    instrument_engine()


def one_run(ll: Path, hist: Path, out: Path, tables: bool = True, workers: int = 0) -> dict:
    """In a fresh process: the base audit, then the history study timed by stage, and history.csv written."""
    import json
    import subprocess

    code = (f"import sys, json; sys.path.insert(0, {str(ROOT / 'benchmarks')!r}); sys.path.insert(0, {str(ROOT)!r}); "
            f"import bench_history as b; print(json.dumps(b._child({str(ll)!r}, {str(hist)!r}, {str(out)!r}, {tables}, "
            f"{workers})))")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def _child(ll: str, hist: str, out: str, tables: bool, workers: int = 0) -> dict:
    from audit.engine import Options, compute
    from audit.history.study import HistorySettings, study_history
    from audit.io.loader import load_linelist
    from audit.io.outputs import write_csv

    instrument()
    base = compute(load_linelist(Path(ll)))
    TIMES.clear()
    t0 = time.perf_counter()
    with TreeMemory() as memory:   # this process and its workers, shared pages counted once
        result = study_history(base, HistorySettings(files=(Path(hist),), property_tables=tables, workers=workers),
                               Options())
    t1 = time.perf_counter()
    write_csv(Path(out) / "history_out.csv", result.table)
    TIMES["write"] += time.perf_counter() - t1
    return {"stages": dict(TIMES), "total": time.perf_counter() - t0,
            "samples": int(result.table["samples_used"].sum()),
            "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0, "tree_mb": memory.peak_mb}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--valves", type=int, default=100)
    ap.add_argument("--days", type=int, default=30)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--format", choices=("csv", "parquet"), default="csv", help="the history file's format (wide)")
    ap.add_argument("--serial-repeat", type=int, default=None,
                    help="runs in one process for the stage breakdown (default: --repeat)")
    ap.add_argument("--skip-full", action="store_true", help="skip the same runs on the full equation of state")
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory() as d:
        folder = Path(d)
        t0 = time.perf_counter()
        ll, hist = build(folder, args.valves, args.days, args.format)
        print(f"built the synthetic unit and its history in {time.perf_counter() - t0:.0f} s", flush=True)
        size_mb = hist.stat().st_size / 1e6
        runs = [one_run(ll, hist, folder) for _ in range(args.repeat)]
        # The stage clocks run in this benchmark's child only, not in the workers it forks: the breakdown
        # comes from the same audit in one process.
        serial = [one_run(ll, hist, folder, workers=1) for _ in range(args.serial_repeat or args.repeat)]
        full = [] if args.skip_full else [one_run(ll, hist, folder, tables=False, workers=1)
                                          for _ in range(args.repeat)]
    import os

    totals = [r["total"] for r in runs]
    samples = runs[0]["samples"]
    print(f"history: {args.valves} valves x {args.days} days hourly, {samples:,} samples audited, "
          f"wide {args.format} {size_mb:.1f} MB; median of {args.repeat} runs")
    print(f"  total {statistics.median(totals):.2f} s   ({1e6 * statistics.median(totals) / max(samples, 1):.1f} us "
          f"per sample), chunks on {os.cpu_count()} worker processes")
    one = statistics.median(r["total"] for r in serial)
    print(f"  same run in one process: {one:.2f} s ({1e6 * one / max(samples, 1):.1f} us per sample), median of "
          f"{len(serial)}, by stage:")
    runs_for_stages, runs = runs, serial
    stages = sorted({k for r in runs for k in r["stages"]})
    audit_stages = ("properties", "flows", "sizing", "outlet", "headroom", "rules", "ranking")
    for k in ("read", "clean") + audit_stages + ("write",):
        if k in stages:
            print(f"  {k:<11} {statistics.median(r['stages'].get(k, 0.0) for r in runs):7.2f} s")
    rest = statistics.median(r["total"] - sum(r["stages"].values()) for r in runs)
    print(f"  {'other':<11} {rest:7.2f} s   (building sample tables, grouping, shares)")
    if full:
        full_props = statistics.median(r["stages"].get("properties", 0.0) for r in full)
        print(f"  same run, properties on the full equation at every sample: properties {full_props:.2f} s, "
              f"total {statistics.median(r['total'] for r in full):.2f} s")
    runs = runs_for_stages
    per = statistics.median(totals) / max(samples, 1)
    own = statistics.median(r["peak_mb"] for r in runs)
    peak = statistics.median(r["tree_mb"] for r in runs)
    print(f"  peak memory {peak:.0f} MB, the auditing process and its workers (proportional set size sampled every "
          f"0.2 s, shared pages counted once); the auditing process alone {own:.0f} MB (maximum resident set)")
    if samples >= 17_000_000:
        total = statistics.median(totals)
        print(f"  target, a year of hourly history for 2,000 valves under 3 min and 4 GB: {total / 60:.1f} min, "
              f"{max(peak, own) / 1024:.1f} GB: {'met' if total < 180 and max(peak, own) < 4096 else 'NOT met'}")
    else:
        print(f"  extrapolation, not a run: 2,000 valves x 8,760 h = 17.5 million samples at this cost "
              f"= {per * 17.52e6 / 60:.1f} min (target: 3 min)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
