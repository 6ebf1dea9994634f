"""Trim alternatives: re-screen each valve that has findings against the trims that fit its body.

The trims file (CSV) lists available trims per body size: valve_size, rated_cv,
characteristic, fl, xt, fd and optionally xfz (units as in the line list, valve_size in mm by
default).  For each valve with a finding of severity WATCH or worse, every trim of the same
body size is audited in its place, all (valve, trim) pairs at once; the smallest rated Cv that
leaves no such finding is proposed, or the valve is said to have none.  A trim change needs
the manufacturer's data and an engineer's check: the report says so.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from rules.base import Severity

from audit.iec.characteristic import CHARACTERISTICS, normalise_characteristic
from audit.io.pipes import nominal_dn
from audit.io.reader import InputError, Limits, normalise_header, read_source
from audit.io.units import parse_column

TRIM_COLUMNS = ("valve_size", "rated_cv", "characteristic", "fl", "xt", "fd", "xfz")
CLEARS_BELOW = Severity.WATCH  # a trim clears a valve when no finding of WATCH or worse remains


def read_trims(path: Path) -> pd.DataFrame:
    """The trims file as SI columns; a bad row makes the whole file an input error (it is short)."""
    raw = read_source(Path(path), None, Limits())
    names = {normalise_header(h)[0]: (pos, normalise_header(h)[1]) for pos, h in enumerate(raw.header)}
    missing = [c for c in TRIM_COLUMNS[:-1] if c not in names]
    if missing:
        raise InputError(f"trims file '{Path(path).name}': missing column(s) {', '.join(missing)}")
    cells = pd.DataFrame(raw.rows, columns=range(len(raw.header)), dtype=object)
    p_atm = np.full(len(cells), 101325.0)
    out = pd.DataFrame()
    kinds = {"valve_size": ("length", "mm"), "rated_cv": ("dimensionless", ""), "fl": ("dimensionless", ""),
             "xt": ("dimensionless", ""), "fd": ("dimensionless", ""), "xfz": ("dimensionless", "")}
    for col, (kind, default) in kinds.items():
        if col not in names:
            out[col] = np.nan
            continue
        pos, unit = names[col]
        parsed = parse_column(cells[pos].astype(str), kind, unit, default, col, p_atm)
        bad = np.flatnonzero(parsed.errors != "")
        if bad.size:
            raise InputError(f"trims file row {raw.row_numbers[bad[0]]}: {parsed.errors[bad[0]]}")
        out[col] = parsed.values
    written = cells[names["characteristic"][0]].astype(str).str.strip()
    out["characteristic"] = [normalise_characteristic(c) for c in written]
    wrong = np.flatnonzero(~np.isin(out["characteristic"], CHARACTERISTICS))
    if wrong.size:
        raise InputError(f"trims file row {raw.row_numbers[wrong[0]]}: column 'characteristic': "
                         f"'{written[wrong[0]][:40]}' is not one of {', '.join(CHARACTERISTICS)}")
    out["nominal_dn"] = nominal_dn(out["valve_size"].to_numpy(float))
    return out.dropna(subset=["valve_size", "rated_cv"]).sort_values("rated_cv", kind="stable").reset_index(drop=True)


def trim_label(t) -> str:
    return (f"Cv {t['rated_cv']:.4g} {t['characteristic'].replace('_', ' ')}, FL {t['fl']:.3g}, xT {t['xt']:.3g}, "
            f"Fd {t['fd']:.3g}")


def candidate_linelist(ll, trims: pd.DataFrame, valve_ids: np.ndarray):
    """A line list of (valve, trim) pairs: each valve of ``valve_ids`` once per trim of its body size."""
    from audit.io.loader import LineList

    sizes = ll.valves["valve_size"].to_numpy(float)
    # Bodies and trims meet by nominal size: a trim listed as '1 in' (25.4 mm) fits a DN25 body (25 mm).
    body_dn, trim_dn = nominal_dn(sizes), trims["nominal_dn"].to_numpy(float)
    pairs = [(v, t) for v in valve_ids for t in np.flatnonzero(trim_dn == body_dn[v])]
    if not pairs:
        return None, []
    vi = np.array([p[0] for p in pairs])
    ti = np.array([p[1] for p in pairs])
    valves = ll.valves.iloc[vi].reset_index(drop=True).copy()
    for col in ("rated_cv", "characteristic", "fl", "xt", "fd"):
        valves[col] = trims[col].to_numpy()[ti]
    valves["xfz_given"] = trims["xfz"].to_numpy()[ti]
    valves["typical_factors"] = ""
    cases = []
    by_valve = {k: g for k, g in ll.cases.groupby("valve")}
    for new, v in enumerate(vi):
        g = by_valve[v].copy()
        g["valve"] = new
        cases.append(g)
    cases = pd.concat(cases, ignore_index=True) if cases else ll.cases.iloc[:0]
    return LineList(valves, cases, ll.rejected.iloc[:0], ll.ignored_columns, len(valves)), list(zip(vi, ti))


def add_trim_alternatives(audit, trims_file: Path) -> None:
    """Add trim_alternative (text) and trim_alternative_cv to ``audit.valves``."""
    from audit.engine import compute

    trims = read_trims(trims_file)
    v = audit.valves
    needs = v["severity_level"].to_numpy(int) >= int(CLEARS_BELOW)
    ids = v["valve"].to_numpy(int)[needs]
    text = np.where(needs, "no listed trim fits this body size", "").astype(object)
    cv = np.full(len(v), np.nan)
    ll, pairs = candidate_linelist(audit.linelist, trims, ids)
    if ll is not None:
        trial = compute(ll, audit.options)
        sev = trial.valves.set_index("valve")["severity_level"].reindex(range(len(pairs))).to_numpy()
        best: dict[int, int] = {}
        tried: dict[int, int] = {}
        for k, (valve, t) in enumerate(pairs):
            tried[valve] = tried.get(valve, 0) + 1
            if sev[k] < int(CLEARS_BELOW) and valve not in best:
                best[valve] = t  # trims are sorted by rated Cv: the first that clears is the smallest
        row_of = {int(x): i for i, x in enumerate(v["valve"].to_numpy(int))}
        for valve, n in tried.items():
            i = row_of[valve]
            if valve in best:
                t = trims.iloc[best[valve]]
                text[i] = trim_label(t)
                cv[i] = t["rated_cv"]
            else:
                text[i] = f"none of the {n} listed trims for this body clears its findings"
    v["trim_alternative"] = text
    v["trim_alternative_cv"] = cv
    audit.valve_extra_columns = tuple(audit.valve_extra_columns) + ("trim_alternative", "trim_alternative_cv")
