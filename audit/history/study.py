"""Every clean operating sample audited by the engine, summarised per valve; representative cases picked.

The samples go through ``engine.compute`` as cases of a line list of their own
(the same properties, IEC sizing and rules as the line list's cases, not a
second implementation), a chunk of valves at a time so memory stays bounded.
Per valve: the shares of operating time at each limit, predicted-travel
percentiles, the observed-minus-predicted travel gap and its trend, and the
samples at the 5th, 50th and 95th flow percentile, which join the audit as the
cases ``hist_p05``, ``hist_p50``, ``hist_p95``.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from audit.fluid.outlet import standard_density
from audit.fluid.properties import ideal_gas_density
from audit.history.read import History, read_history, signal_key, split_signal
from audit.history.samples import (NOT_OPERATING_FLOW_SHARE, REASONS, Samples, clean, series_of,
                                   stuck_records)
from audit.io.columns import CASE_FIELDS, CASE_PLAUSIBLE, HISTORY_SIGNALS
from audit.io.loader import LineList
from audit.io.reader import InputError
from audit.io.units import unit_rule
from audit.workers import map_on_workers

NS_PER_HOUR = 3_600 * 10**9
NS_PER_MONTH = int(30.44 * 24 * NS_PER_HOUR)  # docs/history.md: a month of 30.44 days
PERCENTILES = {"hist_p05": 5, "hist_p50": 50, "hist_p95": 95}
# The rules whose case columns and finding codes history.csv reads (flashing, cavitation level, velocity
# and Mach codes, noise level and limit, observed travel); the others grade what the representative
# cases show, so at every sample they would be work nobody reads.
HISTORY_RULES = ("flashing", "cavitation", "velocity", "noise", "observed_travel")
VELOCITY_CODES = ("VELOCITY", "MACH")  # share_velocity_over: outlet velocity over its limit, or gas Mach
SAMPLE_COLUMNS = ("valve", "tag", "time_ns", "flow", "flow_basis", "std_t", "std_p", "p_in", "p_out", "t_in", "travel",
                  "choke_ratio", "travel_pct", "travel_observed_pct", "cavitation", "flashing", "noise_dba",
                  "noise_limit_dba")
HISTORY_COLUMNS = (["tag", "samples_read", "samples_used"] + [f"excluded_{r}" for r in REASONS]
                   + ["duplicates_dropped", "share_choked", "share_near_choke", "share_cavitating", "share_flashing",
                      "share_travel_high", "share_travel_low", "share_velocity_over", "share_noise_over",
                      "travel_p05_pct", "travel_p50_pct", "travel_p95_pct", "travel_gap_median_pct",
                      "travel_gap_trend_pct_per_month", "assumed",
                      # beyond the contract: what a reader needs to trust the row
                      "share_cavitating_developed", "samples_unsized", "period_start", "period_end", "times_unread",
                      "times_ambiguous", "note"])


@dataclass
class HistorySettings:
    files: tuple = ()
    tz: str = "UTC"
    hold_hours: float = 2.0
    stuck_hours: float = 24.0
    chunk_samples: int = 50_000   # flow records audited at once; bounds memory, not results
    workers: int = 0               # processes auditing chunks (0: one per core); results do not depend on it
    property_tables: bool = True   # interpolate properties in checked tables where a valve has many samples


@dataclass
class HistoryResult:
    table: pd.DataFrame                  # history.csv
    cases: pd.DataFrame                  # representative cases, in the loader's case layout (SI)
    traces: dict = field(default_factory=dict)   # tag -> used samples over time (every n-th), for the plots


def _unit_for(quantity: str, file_unit: str, cell_unit: str, ll: LineList, phase: str) -> str:
    """The file's unit, else the line-list cell's, else the line list's header unit for that quantity, else
    the contract's default (flow: m3/h for a liquid, kg/h for a gas)."""
    if file_unit or cell_unit:
        return file_unit or cell_unit
    headed = sorted({u for c, u in ll.units.items() if u and c.startswith(quantity + "_")})
    if len(headed) == 1:
        return headed[0]
    if quantity == "flow":
        return "kg/h" if phase == "gas" else "m3/h"
    return CASE_FIELDS[quantity][1]


def _named_signals(ll: LineList, hist: History) -> dict[int, dict[str, tuple[str, str]]]:
    """valve -> {quantity: (signal key, unit in the cell)}; every named signal must be in the history."""
    named, missing = {}, []
    valves = ll.valves
    for col in HISTORY_SIGNALS:
        if col not in valves:
            continue
        for i, cell in enumerate(valves[col].to_numpy(dtype=object)):
            if not isinstance(cell, str) or not cell.strip():
                continue
            name, unit = split_signal(cell)
            key = signal_key(name)
            if key not in hist.names:
                missing.append(f"'{name}' (column {col}, valve {valves['tag'].iat[i]})")
                continue
            named.setdefault(i, {})[col.removeprefix("hist_")] = (key, unit)
    if missing:
        raise InputError(f"the history files hold no signal {', '.join(missing[:5])}"
                         + (f" and {len(missing) - 5} more" if len(missing) > 5 else "")
                         + "; check the hist_* columns against the history's signal names")
    if not named:
        raise InputError("the history matches no valve: no line-list row names one of its signals in "
                         "hist_flow, hist_p_in, hist_p_out, hist_t_in or hist_travel")
    return named


def _case_flow_in(basis: str, std_ref, cases: pd.DataFrame, fluid) -> np.ndarray:
    """The line list's case flows (unscaled by any what-if) in the SI of the history flow's basis.

    A standard volume uses the same standard density as the engine (``fluid.outlet.standard_density``:
    real gas where CoolProp has the fluid as a gas there, else the ideal gas)."""
    scale = cases["flow_scale"].to_numpy(float) if "flow_scale" in cases else 1.0
    w = cases["w"].to_numpy(float) / scale
    if basis == "mass":
        return w
    if basis == "volume":
        return w / cases["rho"].to_numpy(float)
    t_std, p_std = std_ref
    n = len(cases)
    real = standard_density([fluid] * n, np.full(n, t_std), np.full(n, p_std))
    ideal = ideal_gas_density(p_std, t_std, cases["molar_mass"].to_numpy(float), 1.0)
    return w / np.where(np.isfinite(real), real, ideal)


def _valve_samples(v: int, signals: dict, ll: LineList, base_cases: pd.DataFrame,
                   hist: History, settings: HistorySettings):
    """(Samples, flow rule, assumed quantities, note) for one valve; Samples is None where none can be built."""
    mine = base_cases[(base_cases["valve"].to_numpy(int) == v) & (base_cases["case_error"] == "")]
    phase = mine["phase"].iat[0] if len(mine) else ""
    p_atm = float(ll.valves["p_atm"].iat[v])
    series, rules = {}, {}
    for q, (key, cell_unit) in signals.items():
        unit = _unit_for(q, hist.unit.get(key, ""), cell_unit, ll, phase)
        kind = CASE_FIELDS[q][0]
        rule = unit_rule(unit, kind)
        if rule is None:
            return None, None, (), f"signal '{hist.names[key]}': unit '{unit}' is not a {kind} unit"
        t, raw = hist.raw(key)
        si = raw * rule.scale + rule.offset + (p_atm if rule.gauge else 0.0)
        series[q], rules[q] = series_of(t, si), rule
    if "flow" not in series:
        return None, None, (), "no hist_flow signal: a valve's samples are its flow signal's time stamps"
    if not len(mine):
        return None, None, (), "no auditable line-list case to take missing quantities and the operating floor from"
    flow_rule = rules["flow"]
    case_flow = _case_flow_in(flow_rule.flow_basis, flow_rule.std_ref, mine, ll.valves["fluid_obj"].iat[v])
    order = np.argsort(case_flow, kind="stable")
    xs = case_flow[order]
    assumed = {}
    for q in ("p_in", "p_out", "t_in"):
        if q not in series:
            ys = mine[q].to_numpy(float)[order]
            assumed[q] = (lambda f, xs=xs, ys=ys: np.interp(f, xs, ys))  # clamps outside: no extrapolation
    stuck_ns = int(settings.stuck_hours * NS_PER_HOUR)
    stuck = {q: stuck_records(s, series["flow"], stuck_ns) for q, s in series.items() if q != "flow"}
    plausible = {q: CASE_PLAUSIBLE[q][:2] for q in ("p_in", "p_out", "t_in", "travel")}
    samples = clean(series, stuck, assumed, NOT_OPERATING_FLOW_SHARE * np.nanmax(case_flow),
                    int(settings.hold_hours * NS_PER_HOUR), plausible)
    return samples, flow_rule, tuple(sorted(assumed)), ""


def sample_cases(valve: np.ndarray, samples: list[Samples], rules: list) -> pd.DataFrame:
    """The used samples as cases in the loader's layout (SI), one block per valve."""
    parts = []
    for v, s, rule in zip(valve, samples, rules):
        use = s.used
        k = int(use.sum())
        parts.append(pd.DataFrame({
            "valve": v, "case": "", "case_order": 0, "t_sat": False, "quality_in": np.nan,
            "flow": s.values["flow"][use], "flow_basis": rule.flow_basis,
            "std_t": rule.std_ref[0] if rule.std_ref else np.nan, "std_p": rule.std_ref[1] if rule.std_ref else np.nan,
            "p_in": s.values["p_in"][use], "p_out": s.values["p_out"][use], "t_in": s.values["t_in"][use],
            "travel": s.values["travel"][use], "time_ns": s.time[use], "case_error": ""}, index=range(k)))
    frame = pd.concat(parts, ignore_index=True) if parts else pd.DataFrame()
    if len(frame):
        frame["case"] = "s" + pd.Series(np.arange(len(frame))).astype(str)
    return frame


def _audit_chunk(ll: LineList, valve_ids: list[int], samples: list[Samples], rules: list, options,
                 property_tables: bool = True):
    """Audit one chunk of valves' used samples; returns the engine's sample-case table."""
    from audit.engine import Options, compute

    sub = ll.valves.iloc[valve_ids].reset_index(drop=True)
    cases = sample_cases(np.arange(len(valve_ids)), samples, rules)
    if not len(cases):
        return pd.DataFrame()
    chunk = LineList(sub, cases, pd.DataFrame(columns=["row", "tag", "reason"]), units=ll.units)
    # No what-if scaling on observed data; every sample is its own state, so properties come from tables
    # checked against the full equation (fluid.tables; within 0.1 % on density and vapour pressure).
    observed = Options(p_atm=options.p_atm, backend=options.backend, thresholds=options.thresholds,
                       property_tables=property_tables, summarise=False,  # counts only: no sentences, no ranking
                       rules=HISTORY_RULES)
    audit = compute(chunk, observed)
    cases = audit.cases
    over = np.zeros(len(cases), dtype=bool)
    rows = audit.findings["case_row"].to_numpy(int)[np.isin(audit.findings["code"].to_numpy(dtype=object),
                                                            VELOCITY_CODES)]
    over[rows] = True
    keep = [c for c in SAMPLE_COLUMNS if c in cases]
    narrow = cases[keep].copy()   # what the shares, the trend and the representative cases read
    narrow["velocity_over"] = over
    return narrow


def _shares(g: pd.DataFrame, used: int, th: dict) -> dict:
    """The per-valve shares and percentiles of docs/history.md from one valve's audited samples."""
    def share(mask) -> float:
        return float(np.sum(mask)) / used if used else np.nan
    ratio = g["choke_ratio"].to_numpy(float)
    travel = g["travel_pct"].to_numpy(float)
    cav = g["cavitation"].astype(str).to_numpy() if "cavitation" in g else np.full(len(g), "")
    with np.errstate(invalid="ignore"):
        out = {
            "share_choked": share(ratio >= 1.0),
            "share_near_choke": share(ratio >= th["choking"]["watch"]),
            "share_cavitating": share(np.isin(cav, ["incipient", "developed", "choked"])),
            "share_cavitating_developed": share(np.isin(cav, ["developed", "choked"])),
            "share_flashing": share(g["flashing"].to_numpy(bool)),
            "share_travel_high": share(travel > th["travel"]["high_pct"]),
            "share_travel_low": share(travel < th["travel"]["low_pct"]),
            "share_velocity_over": share(g["velocity_over"].to_numpy(bool)),
            "share_noise_over": share(g["noise_dba"].to_numpy(float) > g["noise_limit_dba"].to_numpy(float)),
            "samples_unsized": int(np.sum(~np.isfinite(travel))),
        }
    good = travel[np.isfinite(travel)]
    for p in (5, 50, 95):
        out[f"travel_p{p:02d}_pct"] = float(np.percentile(good, p)) if good.size else np.nan
    return out


def travel_trend(time_ns: np.ndarray, gap: np.ndarray) -> tuple[float, float, float]:
    """(median gap [% travel], least-squares slope [% travel per month of 30.44 days], period [days])."""
    ok = np.isfinite(gap)
    if ok.sum() < 2:
        return (float(np.median(gap[ok])) if ok.any() else np.nan), np.nan, 0.0
    t = (time_ns[ok] - time_ns[ok].min()) / NS_PER_MONTH
    period_days = float(t.max()) * 30.44
    slope = float(np.polyfit(t, gap[ok], 1)[0]) if t.max() > 0 else np.nan
    return float(np.median(gap[ok])), slope, period_days


def iso_utc(time_ns) -> list[str]:
    """ISO 8601 in UTC with a Z, to the second (docs/history.md, "Time in outputs")."""
    stamps = pd.to_datetime(np.asarray(time_ns, dtype=np.int64).astype("datetime64[ns]"), utc=True)
    return list(stamps.strftime("%Y-%m-%dT%H:%M:%SZ"))


def representative(g: pd.DataFrame, v: int, trend: float, period_days: float) -> pd.DataFrame:
    """The used samples at the 5th, 50th and 95th flow percentile (nearest rank), as line-list cases."""
    sized = g[np.isfinite(g["travel_pct"].to_numpy(float))] if len(g) else g
    if not len(sized):
        return pd.DataFrame()
    order = np.argsort(sized["flow"].to_numpy(float), kind="stable")
    n = len(order)
    rows = [order[int(round(p / 100.0 * (n - 1)))] for p in PERCENTILES.values()]
    pick = sized.iloc[rows]
    return pd.DataFrame({
        "valve": v, "case": list(PERCENTILES), "case_order": [1000 + k for k in range(len(PERCENTILES))],
        "t_sat": False, "quality_in": np.nan, "flow": pick["flow"].to_numpy(float),
        "flow_basis": pick["flow_basis"].to_numpy(dtype=object), "std_t": pick["std_t"].to_numpy(float),
        "std_p": pick["std_p"].to_numpy(float), "p_in": pick["p_in"].to_numpy(float),
        "p_out": pick["p_out"].to_numpy(float), "t_in": pick["t_in"].to_numpy(float),
        "travel": pick["travel"].to_numpy(float), "case_error": "",
        "time": iso_utc(pick["time_ns"].to_numpy(np.int64)),
        "hist_gap_trend": trend, "hist_period_days": period_days})


TRACE_POINTS = 2_000  # samples kept per valve for the report's plot over time (every n-th sample)
_JOB: dict = {}   # what a chunk reads (base audit, history, settings, options, thresholds); set before workers fork


def _study_chunk(items: list) -> list:
    """Samples built, cleaned and audited for one chunk of valves: per valve [row, representative cases,
    trace] (None where it has no audited sample).  Reads its inputs from ``_JOB`` so that forked workers
    share them instead of receiving copies."""
    base, hist, settings, options, th = _JOB["args"]
    ll = base.linelist
    out, built = [], []
    for v, signals in items:
        keys = [k for k, _ in signals.values()]
        row = {"tag": ll.valves["tag"].iat[v], "duplicates_dropped": 0,
               "times_unread": sum(hist.bad_times.get(k, 0) for k in keys),
               "times_ambiguous": sum(hist.dst_repeats.get(k, 0) for k in keys)}
        samples, rule, assumed, note = _valve_samples(v, signals, ll, base.cases, hist, settings)
        row.update(assumed=";".join(assumed), note=note)
        out.append([row, None, None])
        if samples is None:
            continue
        row.update(samples_read=len(samples.time), samples_used=int(samples.used.sum()),
                   duplicates_dropped=samples.duplicates, **{f"excluded_{r}": samples.counts[r] for r in REASONS})
        if len(samples.time):
            row.update(period_start=iso_utc(samples.time[:1])[0], period_end=iso_utc(samples.time[-1:])[0])
        built.append((v, samples, rule, len(out) - 1))
    if not built:
        return out
    audited = _audit_chunk(ll, [b[0] for b in built], [b[1] for b in built], [b[2] for b in built], options,
                           settings.property_tables)
    by_tag = {g["tag"].iat[0]: g for _, g in audited.groupby("valve", sort=False)} if len(audited) else {}
    for v, _, _, k in built:
        row = out[k][0]
        g = by_tag.get(row["tag"])
        if g is None or not len(g):
            continue
        row.update(_shares(g, row["samples_used"], th))
        gap = g["travel_observed_pct"].to_numpy(float) - g["travel_pct"].to_numpy(float)
        median, trend, days = travel_trend(g["time_ns"].to_numpy(np.int64), gap)
        row.update(travel_gap_median_pct=median, travel_gap_trend_pct_per_month=trend)
        out[k][1] = representative(g, v, trend, days)
        trace = g[["time_ns", "travel_pct", "travel_observed_pct", "choke_ratio"]]
        # Thinned here for the report's plot (every n-th sample), so a year of samples is not kept for it.
        out[k][2] = trace.iloc[::max(1, len(trace) // TRACE_POINTS)].reset_index(drop=True)
    return out


def _chunks(items: list, hist: History, chunk_samples: int) -> list[list]:
    """Valves in order, cut where a chunk's flow records reach ``chunk_samples``."""
    chunks, current, size = [], [], 0
    for v, signals in items:
        current.append((v, signals))
        size += hist.count(signals["flow"][0]) if "flow" in signals else 0
        if size >= chunk_samples:
            chunks.append(current)
            current, size = [], 0
    return chunks + ([current] if current else [])


def study_history(base, settings: HistorySettings, options) -> HistoryResult:
    """Read, clean and audit the history of every valve that names signals; see the module docstring.

    base: the audit of the line list's own cases (its case flows, densities and pressures set the
    operating floor and the quantities a valve has no signal for).
    Raises InputError for an unreadable file, a named signal no file holds, or a history matching no valve.
    """
    from rules import effective_thresholds

    hist = read_history(list(settings.files), settings.tz)
    named = _named_signals(base.linelist, hist)
    th = effective_thresholds(options.thresholds)
    # A chunk of valves at a time: its samples are built, cleaned, audited and let go, so memory is bounded
    # by the chunk and the files' columns, not by the whole history's samples; chunks run on all cores.
    chunks = _chunks(sorted(named.items()), hist, settings.chunk_samples)
    _JOB["args"] = (base, hist, settings, options, th)
    try:
        # chunk order kept, so the output does not depend on the number of workers
        results = map_on_workers(_study_chunk, chunks, settings.workers or None)
    finally:
        _JOB.clear()
    rows, reps, traces = [], [], {}
    for row, rep, trace in (item for result in results for item in result):
        rows.append(row)
        if rep is not None:
            reps.append(rep)
            traces[row["tag"]] = trace
    table = pd.DataFrame(rows).reindex(columns=HISTORY_COLUMNS)
    for c in ["samples_read", "samples_used", "duplicates_dropped", "times_unread", "times_ambiguous"] + \
            [f"excluded_{r}" for r in REASONS]:
        table[c] = table[c].fillna(0).astype(int)
    for c in ("assumed", "note", "period_start", "period_end"):
        table[c] = table[c].fillna("")
    cases = pd.concat([r for r in reps if len(r)], ignore_index=True) if any(len(r) for r in reps) else pd.DataFrame()
    return HistoryResult(table, cases, traces)


def with_history_cases(ll: LineList, result: HistoryResult) -> LineList:
    """The line list with the representative samples added as ordinary cases."""
    if not len(result.cases):
        return ll
    cases = pd.concat([ll.cases, result.cases], ignore_index=True)
    cases["time"] = cases["time"].fillna("") if "time" in cases else ""
    cases = cases.sort_values(["valve", "case_order"], kind="stable").reset_index(drop=True)
    return LineList(ll.valves, cases, ll.rejected, ll.ignored_columns, ll.rows_total, source=ll.source,
                    units=ll.units)
