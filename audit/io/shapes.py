"""The long layout of a line list (one row per valve and case) folded into the wide one.

docs/input.md, "Long layout": a `case` column names the case; the case fields
(`flow`, `p_in`, `p_out`, `t_in`, `travel`) have no suffix; the valve's own
columns repeat on each of its rows and must agree.  The fold gives one wide
row per tag, numbered with the file row of the valve's first row, and a
reason for every valve whose rows disagree (the valve is then rejected, naming
the column), or that repeats a case.
"""
from __future__ import annotations

import re

CASE_PREFIXES = ("flow", "p_in", "p_out", "t_in", "travel", "quality_in")


def case_name(text) -> str:
    """A case name as a column suffix: 'Max' -> 'max', 'start up' -> 'start_up'."""
    return re.sub(r"[^a-z0-9_]+", "_", str(text).strip().lower()).strip("_")


def _cell(value) -> str:
    return "" if value is None else str(value).strip()


def fold_long(names: list[str], units: list[str], rows: list[list], numbers: list[int]):
    """Fold a long table into the wide layout.

    names/units: normalised header names and their units; rows: cells;
    numbers: each row's file row number.  Returns (names, units, rows,
    numbers, reasons) of the wide table, reasons a list of messages per row.
    """
    at = {n: i for i, n in enumerate(names)}
    case_pos = at["case"]
    tag_pos = at.get("tag")
    case_cols = [n for n in names if n in CASE_PREFIXES]
    valve_cols = [n for n in names if n not in CASE_PREFIXES and n != "case" and n]
    groups: dict[str, list[int]] = {}
    order: list[tuple[str, int]] = []
    for r, row in enumerate(rows):
        tag = _cell(row[tag_pos]) if tag_pos is not None else ""
        key = tag.casefold() if tag else f"\0row{r}"   # a row without a tag stands alone (and is rejected)
        if key not in groups:
            groups[key] = []
            order.append((key, r))
        groups[key].append(r)
    cases: list[str] = []
    for row in rows:
        c = case_name(row[case_pos])
        if c and c not in cases:
            cases.append(c)
    wide_names = valve_cols + [f"{p}_{c}" for c in cases for p in case_cols]
    wide_units = [units[at[n]] for n in valve_cols] + [units[at[p]] for c in cases for p in case_cols]
    wide_rows, wide_numbers, reasons = [], [], []
    for key, first in order:
        members = groups[key]
        why: list[str] = []
        out = []
        for n in valve_cols:
            seen = [(numbers[r], _cell(rows[r][at[n]])) for r in members if _cell(rows[r][at[n]])]
            values = {v for _, v in seen}
            if len(values) > 1:
                (ra, va), (rb, vb) = seen[0], next(s for s in seen if s[1] != seen[0][1])
                why.append(f"column '{n}' differs between the rows of this valve ('{va[:40]}' on row {ra}, "
                           f"'{vb[:40]}' on row {rb}); the valve's own columns must agree on every case row")
            out.append(seen[0][1] if seen else "")
        filled: dict[str, int] = {}
        case_cells = {c: [""] * len(case_cols) for c in cases}
        for r in members:
            c = case_name(rows[r][case_pos])
            if not c:
                if any(_cell(rows[r][at[p]]) for p in case_cols):
                    why.append(f"row {numbers[r]}: column 'case' is blank; name the case (min, norm, max, ...)")
                continue
            if c in filled:
                why.append(f"case '{c}' appears on rows {filled[c]} and {numbers[r]}; each case once per valve")
                continue
            filled[c] = numbers[r]
            case_cells[c] = [_cell(rows[r][at[p]]) for p in case_cols]
        for c in cases:
            out.extend(case_cells[c])
        wide_rows.append(out)
        wide_numbers.append(numbers[first])
        reasons.append(why)
    return wide_names, wide_units, wide_rows, wide_numbers, reasons
