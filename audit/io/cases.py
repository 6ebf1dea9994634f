"""The operating cases of a line list: one row per (valve, case), in SI, each checked on its own.

A bad case keeps its valve: the case carries ``case_error`` and the valve is
audited on its other cases.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from audit.io.columns import CASE_COLUMN, CASE_FIELDS, CASE_PLAUSIBLE, SATURATED
from audit.io.reader import InputError, Limits
from audit.io.units import parse_column


def read_cases(table: pd.DataFrame, units: dict, site: np.ndarray, n: int, decimal_comma: bool = False,
           limits: Limits | None = None) -> pd.DataFrame:
    limits = limits or Limits()
    names: dict[str, dict[str, str]] = {}
    for col in table.columns:
        m = CASE_COLUMN.match(col)
        if m:
            names.setdefault(m.group(2), {})[m.group(1)] = col
    if len(names) > limits.max_cases_per_valve:
        raise InputError(f"the line list has {len(names):,} operating cases per valve, over the limit of "
                         f"{limits.max_cases_per_valve:,}; a valve's cases are its design points (min, norm, max, ...)")
    if len(names) * n > limits.max_cases:
        raise InputError(f"{n:,} valves with {len(names):,} cases each is over the limit of {limits.max_cases:,} "
                         "valve-cases; split the line list")
    frames = []
    for order, (case, cols) in enumerate(names.items()):
        data = {"valve": np.arange(n), "case": case, "case_order": order}
        errors = np.full(n, "", dtype=object)
        filled = np.zeros(n, dtype=bool)
        data["t_sat"] = np.zeros(n, dtype=bool)
        for prefix, (kind, default) in CASE_FIELDS.items():
            col = cols.get(prefix)
            if col is None:
                data[prefix] = np.full(n, np.nan)
                if prefix == "flow":
                    data["flow_basis"] = np.full(n, "", dtype=object)
                    data["std_t"] = data["std_p"] = np.full(n, np.nan)
                continue
            filled |= table[col].astype(str).str.strip().to_numpy() != ""
            cells = table[col]
            if prefix == "t_in":
                data["t_sat"] = cells.astype(str).str.match(SATURATED).to_numpy(bool)
                cells = cells.where(~data["t_sat"], "")
            parsed = parse_column(cells, kind, units.get(col, ""), default, col, site, decimal_comma)
            errors = np.where((errors == "") & (parsed.errors != ""), parsed.errors, errors)
            data[prefix] = parsed.values
            if prefix == "flow":
                data["flow_basis"] = parsed.flow_basis
                data["std_t"], data["std_p"] = parsed.std_t, parsed.std_p
        frame = pd.DataFrame(data)
        frame["case_error"] = errors
        frames.append(frame[filled])
    if not frames:
        return pd.DataFrame(columns=["valve", "case", "case_order", "case_error"])
    cases = pd.concat(frames, ignore_index=True)
    cases["case_error"] = case_checks(cases)
    return cases.sort_values(["valve", "case_order"], kind="stable").reset_index(drop=True)


def case_checks(cases: pd.DataFrame) -> np.ndarray:
    """Physical sense of one operating case; the first problem is its reason."""
    err = cases["case_error"].to_numpy(dtype=object).copy()
    flow, p1, p2, t = (cases[c].to_numpy(float) for c in ("flow", "p_in", "p_out", "t_in"))
    quality = cases["quality_in"].to_numpy(float)
    saturated = cases["t_sat"].to_numpy(bool) | np.isfinite(quality)  # the temperature follows from p_in
    name = cases["case"].to_numpy(dtype=object)
    checks = [
        (~np.isfinite(flow), lambda i: f"column 'flow_{name[i]}' is blank"),
        (~np.isfinite(p1), lambda i: f"column 'p_in_{name[i]}' is blank"),
        (~np.isfinite(p2), lambda i: f"column 'p_out_{name[i]}' is blank"),
        (~np.isfinite(t) & ~saturated, lambda i: f"column 't_in_{name[i]}' is blank (a temperature, or 'sat')"),
        ((quality < 0) | (quality > 1), lambda i: f"column 'quality_in_{name[i]}': {quality[i]:g} is not a vapour "
                                                  "mass fraction between 0 and 1"),
        (flow <= 0, lambda i: f"column 'flow_{name[i]}': {flow[i]:g} is not a positive flow"),
        (p1 <= 0, lambda i: f"column 'p_in_{name[i]}': {p1[i] / 1e5:.4g} bar(a) is not above absolute zero"),
        (p2 <= 0, lambda i: f"column 'p_out_{name[i]}': {p2[i] / 1e5:.4g} bar(a) is not above absolute zero"),
        (t <= 0, lambda i: f"column 't_in_{name[i]}': {t[i] - 273.15:.4g} degC is below absolute zero"),
        (p2 > p1, lambda i: f"p_out {p2[i] / 1e5:.4g} bar(a) is above p_in {p1[i] / 1e5:.4g} bar(a); "
                            "the outlet pressure must be below the inlet pressure"),
        (p2 == p1, lambda i: f"p_out equals p_in ({p1[i] / 1e5:.4g} bar(a)) with a flow: with no pressure "
                             "drop a valve passes no flow, so this case cannot be met"),
    ]
    for mask, message in checks:
        for i in np.flatnonzero(mask & (err == "")):
            err[i] = message(i)
    for field, (low, high, words) in CASE_PLAUSIBLE.items():
        v = cases[field].to_numpy(float)
        out = (np.isfinite(v) & ((v < low) | (v > high))) | np.isinf(v)
        for i in np.flatnonzero(out & (err == "")):
            err[i] = f"column '{field}_{name[i]}': {v[i]:.4g} (in SI) is outside the plausible range {words}"
    return err
