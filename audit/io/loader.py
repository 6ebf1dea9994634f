"""Line-list loader: CSV or XLSX in, SI tables of valves and valve-cases out.

Follows docs/input.md.  The loader never raises for anything
inside a line list: every problem becomes a message naming the column, the
value and what was expected, attached to its row (the row is rejected) or
to one operating case (the valve keeps its other cases).

Output of ``load_linelist``:
- ``valves``: one row per accepted valve, SI units, indexed 0..n-1;
- ``cases``: one row per (valve, case) the row fills in, long form, with
  ``valve`` pointing into ``valves`` and ``case_error`` holding a reason
  when that case cannot be audited;
- ``rejected``: row number (header = 1), tag and reason.
"""
from __future__ import annotations

import os
import re
from dataclasses import dataclass, field, replace

import numpy as np
import pandas as pd

from audit.io.reader import InputError, Limits, RawTable, clean_text, normalise_header, read_source
from audit.io.shapes import fold_long
from audit.io.units import P_STD, is_unit_text, parse_column

from audit.io.cases import read_cases
from audit.io.columns import (CASE_COLUMN, CASE_FIELDS, HISTORY_SIGNALS, NUMERIC, OVERRIDES, REQUIRED, TEXT,
                              is_known_column, suggestion)
from audit.io.rows import (Reasons, check_bare_sizes, check_cell_length, check_fluids, check_identity, check_piping,
                           check_plausible, check_range, check_service, check_valve, resolve_fluids, text_column)


@dataclass
class LineList:
    valves: pd.DataFrame
    cases: pd.DataFrame
    rejected: pd.DataFrame
    ignored_columns: list[str] = field(default_factory=list)
    rows_total: int = 0
    source: RawTable | None = None      # where it came from: name, sheet, digest, reader notes (no cells)
    units: dict = field(default_factory=dict)  # the unit each column's header gave, by column name


@dataclass
class ReadLineList:
    """A line list read and checked but for its fluid names (CoolProp's part): what ``read_linelist`` gives
    ``finish_linelist``.  Holds no CoolProp object, so it can be read in another process (io.early)."""
    valves: pd.DataFrame       # every data row, before the rejected ones leave
    cases: pd.DataFrame
    reasons: Reasons
    fluid_names: list          # per row: the fluid name to resolve, or None
    row_numbers: np.ndarray
    tags: np.ndarray
    unread: list               # row numbers with text only in unread columns
    ignored: list
    units: dict
    source: RawTable           # without its cells


def load_linelist(path: str | os.PathLike, sheet: str | None = None, p_atm: float = P_STD,
                  limits: Limits | None = None) -> LineList:
    """Read and validate a line list; see the module docstring for what comes back.

    path: CSV or XLSX; sheet: XLSX sheet name (default the first);
    p_atm: site atmospheric pressure [Pa] for gauge units where the row has
    no `p_atm`; limits: size limits of the input.
    Raises InputError only when the file as a whole cannot be read.
    """
    return finish_linelist(read_linelist(path, sheet, p_atm, limits))


def read_linelist(path: str | os.PathLike, sheet: str | None = None, p_atm: float = P_STD,
                  limits: Limits | None = None) -> ReadLineList:
    """The part of ``load_linelist`` that needs no CoolProp: every cell read, parsed and checked, the
    fluid names kept to resolve (same arguments)."""
    limits = limits or Limits()
    raw = read_source(path, sheet, limits, is_known=is_known_column, is_unit=is_unit_text)
    table, units, ignored, row_numbers, early = _columns(raw)
    blank = _blank_rows(table)
    table = table.loc[~blank].reset_index(drop=True)
    row_numbers = row_numbers[~blank]
    early = [e for e, b in zip(early, blank) if not b]
    n = len(table)
    reasons = Reasons(n)
    for i, why in enumerate(early):
        for message in why:
            reasons.note(i, message)
    for col in table.columns if raw.uncached else ():  # only a workbook's formulas without stored values
        unknown = (table[col] == UNCACHED).to_numpy()
        if unknown.any():
            reasons.add(unknown, f"column '{col}': the cell holds a formula with no stored value (the workbook was "
                                 "not recalculated before saving); recalculate and save it, or type the value")
            table.loc[unknown, col] = ""
    text = {c: text_column(table, c) for c in TEXT}
    check_cell_length(table, limits, reasons)

    site = np.full(n, float(p_atm))
    num = {}
    if "p_atm" in table:
        parsed = parse_column(table["p_atm"], "pressure", units.get("p_atm", ""), "kPa", "p_atm", site,
                              raw.decimal_comma)
        reasons.add_array(parsed.errors)
        site = np.where(np.isfinite(parsed.values), parsed.values, site)
        num["p_atm"] = parsed.values.copy()
    for col, (kind, default) in NUMERIC.items():
        if col in table:
            parsed = parse_column(table[col], kind, units.get(col, ""), default, col, site, raw.decimal_comma)
            reasons.add_array(parsed.errors)
            num[col] = parsed.values
        else:
            num[col] = np.full(n, np.nan)

    check_bare_sizes(table, units, num, reasons)
    check_plausible(num, reasons)
    valves = pd.DataFrame({"row": row_numbers, "p_atm": site})
    for c in ("tag", "area", "service"):
        valves[c] = text[c]
    check_identity(text["tag"], reasons)
    fluid_names = check_fluids(text, num, reasons, valves)
    check_valve(text, num, reasons, valves)
    check_piping(text, num, reasons, valves)
    check_service(text, reasons, valves)
    for col in HISTORY_SIGNALS:
        valves[col] = text[col]
    valves["noise_limit"] = num["noise_limit"]
    valves["velocity_limit"] = num["velocity_limit"]
    # The valve maker's acoustic data for the noise methods (IEC 60534-8-3/8-4), where known.
    check_range(num, "noise_an", reasons, low=-7.0, high=-1.0,
           what="an acoustic efficiency correction An between -7 and -1")
    check_range(num, "noise_stp", reasons, low=0.0, high=2.0, what="a peak Strouhal number between 0 and 2")
    valves["noise_an"] = num["noise_an"]
    valves["noise_stp"] = num["noise_stp"]
    for col in OVERRIDES + ("sound_speed",):
        valves[col] = num[col]
    valves["overridden"] = _overridden(num, valves["custom"].to_numpy(bool))

    cases = read_cases(table, units, site, n, raw.decimal_comma, limits)
    has_case = np.zeros(n, dtype=bool)
    if len(cases):
        has_case[cases["valve"].to_numpy()] = True
    reasons.add(~has_case, "no operating case: fill flow_<case>, p_in_<case>, p_out_<case> and "
                           "t_in_<case> for at least one case (for example flow_max)")
    if len(cases):
        valve_of = cases["valve"].to_numpy(int)
        good = cases["case_error"].to_numpy(dtype=object) == ""
        all_bad = np.bincount(valve_of, weights=good, minlength=n) == 0
        all_bad &= has_case
        errors = cases["case_error"].to_numpy(dtype=object)
        names = cases["case"].to_numpy(dtype=object)
        for i in np.flatnonzero(all_bad):
            rows = np.flatnonzero(valve_of == i)
            reasons.note(i, "; ".join(f"case {names[r]}: {errors[r]}" for r in rows if errors[r]))
    # The cells are in the tables now; keeping them beside would hold every cell's text for the whole run.
    source = replace(raw, rows=[], row_numbers=[])
    return ReadLineList(valves, cases, reasons, fluid_names, row_numbers, text["tag"],
                        list(getattr(raw, "unread_rows", [])), ignored, units, source)


def finish_linelist(read: ReadLineList) -> LineList:
    """Resolve the fluid names with CoolProp and set the rejected rows apart: ``load_linelist``'s end."""
    reasons, row_numbers, cases, unread = read.reasons, read.row_numbers, read.cases, read.unread
    fluids = resolve_fluids(read.fluid_names, reasons)
    n = len(read.valves)
    bad = reasons.bad()
    rejected = pd.DataFrame({"row": row_numbers[bad], "tag": read.tags[bad],
                             "reason": [reasons.joined(i) for i in np.flatnonzero(bad)]})
    if unread:
        rejected = pd.concat([rejected, pd.DataFrame({
            "row": unread, "tag": "", "reason": "text only in columns the audit does not read; no tag and no data: "
                                                 "if this row is a valve, fill its columns (docs/input.md)"})],
            ignore_index=True).sort_values("row", kind="stable").reset_index(drop=True)
    keep = np.flatnonzero(~bad)
    remap = -np.ones(n, dtype=int)
    remap[keep] = np.arange(len(keep))
    valves = read.valves.iloc[keep].reset_index(drop=True)
    valves["fluid_obj"] = [fluids[i] for i in keep]
    if len(cases):
        cases = cases[~bad[cases["valve"].to_numpy()]].copy()
        cases["valve"] = remap[cases["valve"].to_numpy()]
        cases = cases.reset_index(drop=True)
    return LineList(valves, cases, rejected, read.ignored, rows_total=n + len(unread), source=read.source,
                    units=read.units)


def _overridden(num: dict, custom: np.ndarray) -> np.ndarray:
    """Per valve, the property columns given in place of CoolProp's ('' for none, and for a custom fluid)."""
    given = np.column_stack([np.isfinite(num[c]) for c in OVERRIDES]) & ~custom[:, None]
    out = np.full(len(custom), "", dtype=object)
    for i in np.flatnonzero(given.any(axis=1)):  # few rows give any
        out[i] = ", ".join(c for c, g in zip(OVERRIDES, given[i]) if g)
    return out


def _columns(raw: RawTable):
    """Map the header to known columns; fold a long layout; refuse a file that lacks a required column.

    Returns (table of known columns as cells, units per column, ignored headers with
    suggestions, row numbers, early reasons per row).
    """
    names, units, ignored, seen = [], [], [], {}
    for pos, header in enumerate(raw.header):
        name, unit = normalise_header(header)
        if not unit and raw.units_row and pos < len(raw.units_row):
            unit = raw.units_row[pos]
        if not name:
            if any(str(r[pos]).strip() for r in raw.rows if r[pos] is not None):
                ignored.append(f"column {_letter(pos)} has values but no header name (ignored)")
            names.append("")
            units.append("")
            continue
        if name in seen:
            raise InputError(f"column '{name}' appears twice in the header (columns {_letter(seen[name])} "
                             f"and {_letter(pos)}); keep one")
        seen[name] = pos
        if not is_known_column(name):
            ignored.append(f"'{str(header)[:60]}'{suggestion(name)}")
            name = ""
        names.append(name)
        units.append(unit)
    rows, cleaned = _clean_cells(raw.rows)
    _mark_uncached(raw, rows)
    if cleaned:
        raw.notes.append(f"{cleaned} cell(s) held control characters or invisible marks; they were removed")
    numbers = list(raw.row_numbers)
    # A row with text only under columns the audit does not read is no valve, but it is not blank either:
    # it is reported (rejected.csv), never dropped.
    read = [i for i, n in enumerate(names) if n]
    unread_only = [any(_filled(c) for c in r) and not any(_filled(r[i]) for i in read if i < len(r)) for r in rows]
    raw.unread_rows = [numbers[i] for i, u in enumerate(unread_only) if u]
    rows = [r for r, u in zip(rows, unread_only) if not u]
    numbers = [n for n, u in zip(numbers, unread_only) if not u]
    early: list[list[str]] = [[] for _ in rows]
    if "case" in seen:
        long_rows = len(rows)
        names, units, rows, numbers, early = fold_long(names, units, rows, numbers)
        raw.notes.append(f"long layout (a 'case' column): {long_rows} rows read as {len(rows)} valves")
    elif any(n in CASE_FIELDS for n in names):
        plain = [n for n in names if n in CASE_FIELDS]
        raise InputError(f"column(s) {', '.join(plain)} have no case suffix and there is no 'case' column: "
                         "give one row per valve with flow_max, p_in_max, ... or one row per valve and case "
                         "with a 'case' column (docs/input.md)")
    _require(names, ignored)
    keep = [i for i, n in enumerate(names) if n]
    width = len(names)
    padded = rows if all(len(r) == width for r in rows) else [list(r[:width]) + [""] * (width - len(r)) for r in rows]
    columns = list(zip(*padded)) if padded else [()] * width  # one transposition in C, not a loop per column
    table = pd.DataFrame({names[i]: list(columns[i]) for i in keep}, dtype=object)
    if not keep:
        table = pd.DataFrame(index=range(len(rows)))
    unit_of = {names[i]: units[i] for i in keep}
    return table, unit_of, ignored, np.asarray(numbers, dtype=int), early


_PLAIN_ROW = re.compile(r"[\x20-\x7e]*")  # printable ASCII only: clean_text would change nothing
UNCACHED = "\u0000uncached formula"  # a marker no cleaned cell can hold (clean_text drops NUL)


def _mark_uncached(raw: RawTable, rows: list[list]) -> None:
    """Cells holding a formula with no stored value get a marker that fails every parse with a plain reason."""
    if not raw.uncached:
        return
    at = {n: i for i, n in enumerate(raw.row_numbers)}
    for number, col in raw.uncached:
        if number in at and col < len(rows[at[number]]):
            rows[at[number]][col] = UNCACHED


def _blank_rows(table: pd.DataFrame) -> np.ndarray:
    """Rows whose every known cell is empty or white space (a row's first filled cell ends its test)."""
    columns = [table[c].to_numpy(dtype=object) for c in table.columns]
    if not columns:
        return np.ones(len(table), dtype=bool)
    return np.fromiter((not any(_filled(v) for v in row) for row in zip(*columns)), dtype=bool, count=len(table))


def _filled(cell) -> bool:
    return cell is not None and str(cell).strip() != ""


def _clean_cells(rows: list[list]) -> tuple[list[list], int]:
    """Cells as the loader reads them: booleans as words (TRUE is no number), text without control
    characters or invisible marks (NFKC).  Returns the rows and how many cells were cleaned."""
    out, cleaned = [], 0
    for r in rows:
        # Most rows of a CSV are plain printable text: one check for the whole row instead of one per cell.
        if all(type(v) is str for v in r) and _PLAIN_ROW.fullmatch("".join(r)):
            out.append(list(r))
            continue
        new = []
        for v in r:
            if isinstance(v, bool):
                v = "TRUE" if v else "FALSE"
            elif v is None:
                v = ""
            elif isinstance(v, str):
                c = clean_text(v)
                cleaned += c != v
                v = c
            new.append(v)
        out.append(new)
    return out, cleaned


def _require(names: list[str], ignored: list[str]) -> None:
    """Refuse a file that lacks a column every row needs, naming it (and a near miss)."""
    present = set(names)
    missing = [" or ".join(group) for group in REQUIRED if not present & set(group)]
    if not any(CASE_COLUMN.match(n) and n.startswith("flow_") for n in present):
        missing.append("flow_<case> (for example flow_max)")
    if not missing:
        return
    near = [s for s in ignored if "did you mean" in s]
    hint = f"; the header has {', '.join(near[:5])}" if near else ""
    raise InputError(f"the line list has no column {', '.join(missing)}{hint}. The header row must name the "
                     "columns as docs/input.md lists them")


def _letter(pos: int) -> str:
    """A spreadsheet column letter for position 0, 1, ... (A, B, ..., AA)."""
    out = ""
    pos += 1
    while pos:
        pos, r = divmod(pos - 1, 26)
        out = chr(65 + r) + out
    return out
