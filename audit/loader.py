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

import difflib
import os
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from . import pipes, styles
from .characteristic import CHARACTERISTICS, normalise_characteristic
from .properties import Fluid, resolve_fluid
from .reader import InputError, Limits, RawTable, clean_text, normalise_header, read_source
from .shapes import fold_long
from .units import P_STD, _clip, is_unit_text, parse_column

CASE_FIELDS = {  # prefix: (kind, default unit)
    "flow": ("flow", ""),          # default depends on the phase: m3/h liquid, kg/h gas
    "p_in": ("pressure", "bar"),
    "p_out": ("pressure", "bar"),
    "t_in": ("temperature", "degC"),
    "travel": ("percent", "%"),
    "quality_in": ("dimensionless", ""),
}
CASE_COLUMN = re.compile(r"^(quality_in|flow|p_in|p_out|t_in|travel)_([a-z0-9_]+)$")
SATURATED = re.compile(r"^\s*sat(urated|uration)?\s*$", re.I)  # t_in 'sat': the saturation temperature at p_in

NUMERIC = {  # column: (kind, default unit)
    "density": ("density", "kg/m3"),
    "vapour_pressure": ("pressure", "kPa"),
    "critical_pressure": ("pressure", "kPa"),
    "viscosity": ("viscosity", "cP"),
    "molar_mass": ("molar_mass", "kg/kmol"),
    "k": ("dimensionless", ""),
    "z": ("dimensionless", ""),
    "sound_speed": ("velocity", "m/s"),
    "valve_size": ("length", "mm"),
    "rated_cv": ("dimensionless", ""),
    "rated_kv": ("dimensionless", ""),
    "rangeability": ("dimensionless", ""),
    "fl": ("dimensionless", ""),
    "xt": ("dimensionless", ""),
    "fd": ("dimensionless", ""),
    "xfz": ("dimensionless", ""),
    "pipe_in_id": ("length", "mm"),
    "pipe_out_id": ("length", "mm"),
    "pipe_in_size": ("length", "in"),
    "pipe_out_size": ("length", "in"),
    "pipe_out_wall": ("length", "mm"),
    "noise_limit": ("dba", "dBA"),
    "velocity_limit": ("velocity", "m/s"),
    "noise_an": ("dimensionless", ""),
    "noise_stp": ("dimensionless", ""),
}
TEXT = ("tag", "area", "service", "fluid", "phase", "characteristic", "valve_style",
        "pipe_in_schedule", "pipe_out_schedule", "intent", "duty", "criticality", "dissolved_gas")
OVERRIDES = ("density", "vapour_pressure", "critical_pressure", "viscosity", "molar_mass", "k", "z")
CUSTOM_NEEDS = {"liquid": ("density", "vapour_pressure", "critical_pressure", "viscosity"),
                "gas": ("molar_mass", "k", "z", "viscosity")}
PIPE_NARROWER_LIMIT = 0.75  # pipe bore below this share of the valve size is refused

KNOWN = set(NUMERIC) | set(TEXT) | {"p_atm"}

# Plausible magnitudes, SI (docs/input.md, "Plausible ranges"): a value outside is a typing or units slip
# and rejects its row (or case) by name, before it can overflow the arithmetic or a plot axis.
PLAUSIBLE = {  # column: (low, high, how the message shows the bounds)
    "density": (0.01, 25000.0, "0.01 to 25,000 kg/m3"),
    "vapour_pressure": (0.0, 1e9, "0 to 1,000,000 kPa"),
    "critical_pressure": (1e4, 1e9, "10 to 1,000,000 kPa"),
    "viscosity": (1e-7, 100.0, "0.0001 to 100,000 cP"),
    "molar_mass": (1.0, 1000.0, "1 to 1,000 kg/kmol"),
    "sound_speed": (10.0, 10000.0, "10 to 10,000 m/s"),
    "valve_size": (0.003, 3.0, "3 to 3,000 mm"),
    "rated_cv": (1e-4, 1e5, "0.0001 to 100,000 (Cv)"),
    "rated_kv": (1e-4, 1e5, "0.0001 to 100,000 (Kv)"),
    "rangeability": (1.0, 1000.0, "1 to 1,000"),
    "pipe_in_id": (0.003, 5.0, "3 to 5,000 mm"),
    "pipe_out_id": (0.003, 5.0, "3 to 5,000 mm"),
    "pipe_in_size": (0.003, 5.0, "1/8 to 200 in"),
    "pipe_out_size": (0.003, 5.0, "1/8 to 200 in"),
    "pipe_out_wall": (1e-4, 0.2, "0.1 to 200 mm"),
    "noise_limit": (30.0, 140.0, "30 to 140 dBA"),
    "velocity_limit": (0.1, 1000.0, "0.1 to 1,000 m/s"),
    "p_atm": (30e3, 110e3, "30 to 110 kPa"),
}
CASE_PLAUSIBLE = {  # case field: (low, high, bounds in words); flows in SI of their basis
    "flow": (1e-9, 1e6, "a positive flow below 1,000,000 kg/s or m3/s"),
    "p_in": (1.0, 1e9, "1 Pa to 10,000 bar(a)"),
    "p_out": (1.0, 1e9, "1 Pa to 10,000 bar(a)"),
    "t_in": (1.0, 3000.0, "1 to 3,000 K"),
    "travel": (0.0, 110.0, "0 to 110 %"),
}
# A bare valve size (no unit in the cell or the header) below this is taken for inches written
# without a unit, and refused: the smallest common control-valve body is DN15.
BARE_SIZE_MIN_MM = 15.0

PHASE_WORDS = {"liquid": "liquid", "gas": "gas", "vapour": "gas", "vapor": "gas", "steam": "gas"}


@dataclass
class LineList:
    valves: pd.DataFrame
    cases: pd.DataFrame
    rejected: pd.DataFrame
    ignored_columns: list[str] = field(default_factory=list)
    rows_total: int = 0
    source: RawTable | None = None      # where it came from: name, sheet, digest, reader notes


def is_known_column(name: str) -> bool:
    """A normalised header this loader reads (wide or long layout)."""
    return name in KNOWN or bool(CASE_COLUMN.match(name)) or name in CASE_FIELDS or name == "case"


def suggestion(name: str) -> str:
    """' (did you mean 'x'?)' for a near miss among the known column names, else ''."""
    pool = sorted(KNOWN | {f"{p}_max" for p in CASE_FIELDS} | {f"{p}_<case>" for p in CASE_FIELDS})
    close = difflib.get_close_matches(name, pool, n=1, cutoff=0.75)
    if not close:
        m = re.match(r"^([a-z]+(?:_[a-z]+)?)_([a-z0-9_]+)$", name)
        if m:
            prefix = difflib.get_close_matches(m.group(1), list(CASE_FIELDS), n=1, cutoff=0.75)
            close = [f"{prefix[0]}_{m.group(2)}"] if prefix else []
    return f" (did you mean '{close[0]}'?)" if close else ""


class _Reasons:
    """Accumulates per-row problems; a row with any problem is rejected."""

    def __init__(self, n: int):
        self.text = [[] for _ in range(n)]

    def add(self, mask: np.ndarray, message) -> None:
        for i in np.flatnonzero(mask):
            self.text[i].append(message(i) if callable(message) else message)

    def add_array(self, messages: np.ndarray) -> None:
        for i in np.flatnonzero(messages != ""):
            self.text[i].append(messages[i])

    def mentions(self, column: str) -> np.ndarray:
        """Rows that already have a reason naming ``column`` (so a blank it caused is not reported twice)."""
        needle = f"'{column}'"
        return np.array([any(needle in t for t in texts) for texts in self.text], dtype=bool)

    def bad(self) -> np.ndarray:
        return np.array([bool(t) for t in self.text], dtype=bool)

    def joined(self, i: int) -> str:
        return "; ".join(self.text[i])


def load_linelist(path: str | os.PathLike, sheet: str | None = None, p_atm: float = P_STD,
                  limits: Limits | None = None) -> LineList:
    """Read and validate a line list; see the module docstring for what comes back.

    path: CSV or XLSX; sheet: XLSX sheet name (default the first);
    p_atm: site atmospheric pressure [Pa] for gauge units where the row has
    no `p_atm`; limits: size limits of the input.
    Raises InputError only when the file as a whole cannot be read.
    """
    limits = limits or Limits()
    raw = read_source(path, sheet, limits, is_known=is_known_column, is_unit=is_unit_text)
    table, units, ignored, row_numbers, early = _columns(raw)
    blank = table.apply(lambda col: col.astype(str).str.strip() == "").all(axis=1).to_numpy() \
        if len(table.columns) else np.ones(len(table), dtype=bool)
    table = table.loc[~blank].reset_index(drop=True)
    row_numbers = row_numbers[~blank]
    early = [e for e, b in zip(early, blank) if not b]
    n = len(table)
    reasons = _Reasons(n)
    for i, why in enumerate(early):
        reasons.text[i].extend(why)
    for col in table.columns:
        unknown = (table[col] == UNCACHED).to_numpy()
        if unknown.any():
            reasons.add(unknown, f"column '{col}': the cell holds a formula with no stored value (the workbook was "
                                 "not recalculated before saving); recalculate and save it, or type the value")
            table.loc[unknown, col] = ""
    text = {c: _text(table, c) for c in TEXT}
    _check_cell_length(table, limits, reasons)

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

    _bare_sizes(table, units, num, reasons)
    _plausible(num, reasons)
    valves = pd.DataFrame({"row": row_numbers, "p_atm": site})
    for c in ("tag", "area", "service"):
        valves[c] = text[c]
    _identity(text["tag"], reasons)
    fluids = _fluids(text, num, reasons, valves)
    _valve(text, num, reasons, valves)
    _piping(text, num, reasons, valves)
    _service(text, reasons, valves)
    valves["noise_limit"] = num["noise_limit"]
    valves["velocity_limit"] = num["velocity_limit"]
    # The valve maker's acoustic data for the noise methods (IEC 60534-8-3/8-4), where known.
    _range(num, "noise_an", reasons, low=-7.0, high=-1.0,
           what="an acoustic efficiency correction An between -7 and -1")
    _range(num, "noise_stp", reasons, low=0.0, high=2.0, what="a peak Strouhal number between 0 and 2")
    valves["noise_an"] = num["noise_an"]
    valves["noise_stp"] = num["noise_stp"]
    for col in OVERRIDES + ("sound_speed",):
        valves[col] = num[col]
    valves["overridden"] = [", ".join(c for c in OVERRIDES if np.isfinite(num[c][i])
                                      and not valves["custom"][i]) for i in range(n)]

    cases = _cases(table, units, site, n, raw.decimal_comma, limits)
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
            reasons.text[i].append("; ".join(f"case {names[r]}: {errors[r]}" for r in rows if errors[r]))

    bad = reasons.bad()
    rejected = pd.DataFrame({"row": row_numbers[bad], "tag": text["tag"][bad],
                             "reason": [reasons.joined(i) for i in np.flatnonzero(bad)]})
    unread = getattr(raw, "unread_rows", [])
    if unread:
        rejected = pd.concat([rejected, pd.DataFrame({
            "row": unread, "tag": "", "reason": "text only in columns the audit does not read; no tag and no data: "
                                                 "if this row is a valve, fill its columns (docs/input.md)"})],
            ignore_index=True).sort_values("row", kind="stable").reset_index(drop=True)
    keep = np.flatnonzero(~bad)
    remap = -np.ones(n, dtype=int)
    remap[keep] = np.arange(len(keep))
    valves = valves.iloc[keep].reset_index(drop=True)
    valves["fluid_obj"] = [fluids[i] for i in keep]
    if len(cases):
        cases = cases[~bad[cases["valve"].to_numpy()]].copy()
        cases["valve"] = remap[cases["valve"].to_numpy()]
        cases = cases.reset_index(drop=True)
    return LineList(valves, cases, rejected, ignored, rows_total=n + len(unread), source=raw)


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
    table = pd.DataFrame({names[i]: [r[i] if i < len(r) else "" for r in rows] for i in keep}, dtype=object)
    if not keep:
        table = pd.DataFrame(index=range(len(rows)))
    unit_of = {names[i]: units[i] for i in keep}
    return table, unit_of, ignored, np.asarray(numbers, dtype=int), early


UNCACHED = "\u0000uncached formula"  # a marker no cleaned cell can hold (clean_text drops NUL)


def _mark_uncached(raw: RawTable, rows: list[list]) -> None:
    """Cells holding a formula with no stored value get a marker that fails every parse with a plain reason."""
    if not raw.uncached:
        return
    at = {n: i for i, n in enumerate(raw.row_numbers)}
    for number, col in raw.uncached:
        if number in at and col < len(rows[at[number]]):
            rows[at[number]][col] = UNCACHED


def _filled(cell) -> bool:
    return cell is not None and str(cell).strip() != ""


def _clean_cells(rows: list[list]) -> tuple[list[list], int]:
    """Cells as the loader reads them: booleans as words (TRUE is no number), text without control
    characters or invisible marks (NFKC).  Returns the rows and how many cells were cleaned."""
    out, cleaned = [], 0
    for r in rows:
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


REQUIRED = (("tag",), ("fluid",), ("valve_size",), ("rated_cv", "rated_kv"))


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


def _text(table: pd.DataFrame, col: str) -> np.ndarray:
    if col not in table:
        return np.full(len(table), "", dtype=object)
    return np.array([clean_text(str(v)).strip() for v in table[col].to_numpy(dtype=object)], dtype=object)


def _check_cell_length(table: pd.DataFrame, limits: Limits, reasons: _Reasons) -> None:
    for col in table.columns:
        lengths = np.fromiter((len(str(v)) for v in table[col].to_numpy(dtype=object)), dtype=np.int64,
                              count=len(table))
        reasons.add(lengths > limits.max_cell_chars,
                    lambda i, col=col, lengths=lengths: f"column '{col}': a cell of {lengths[i]:,} characters, "
                    f"over the limit of {limits.max_cell_chars:,}")


def _identity(tags: np.ndarray, reasons: _Reasons) -> None:
    reasons.add(tags == "", "column 'tag' is blank; every valve needs a tag")
    series = pd.Series(tags)
    dup = series.duplicated(keep=False).to_numpy() & (tags != "")
    reasons.add(dup, lambda i: f"column 'tag': '{_clip(tags[i])}' appears more than once in the file; "
                               "every copy is rejected until the tag is unique")


def _fluids(text, num, reasons: _Reasons, valves: pd.DataFrame) -> list[Fluid | None]:
    n = len(valves)
    fluids: list[Fluid | None] = [None] * n
    custom = np.zeros(n, dtype=bool)
    phase = np.full(n, "", dtype=object)
    cache: dict[str, tuple[Fluid | None, str]] = {}
    for i in range(n):
        word = text["phase"][i].lower()
        if word:
            if word not in PHASE_WORDS:
                reasons.text[i].append(f"column 'phase': '{_clip(text['phase'][i])}' is not one of "
                                       "liquid, gas, vapour, steam")
            phase[i] = PHASE_WORDS.get(word, "")
        name = text["fluid"][i]
        if not name:
            reasons.text[i].append("column 'fluid' is blank; give a CoolProp fluid name, a mixture or 'custom'")
            continue
        if name.lower() == "custom":
            custom[i] = True
            if not phase[i]:
                phase[i] = "liquid" if np.isfinite(num["vapour_pressure"][i]) else (
                    "gas" if np.isfinite(num["molar_mass"][i]) else "")
            if not phase[i]:
                reasons.text[i].append("fluid 'custom' needs column 'phase' (liquid or gas) or the overrides "
                                       "of one phase")
                continue
            missing = [c for c in CUSTOM_NEEDS[phase[i]] if not np.isfinite(num[c][i])]
            if missing:
                reasons.text[i].append(f"fluid 'custom' ({phase[i]}) needs column(s) {', '.join(missing)}")
            continue
        if name not in cache:
            cache[name] = resolve_fluid(name)
        fluids[i], problem = cache[name]
        if problem:
            reasons.text[i].append(problem)
    _range(num, "density", reasons, low=0.0, what="a density above 0 kg/m3")
    _range(num, "viscosity", reasons, low=0.0, what="a viscosity above 0")
    _range(num, "molar_mass", reasons, low=0.0, what="a molar mass above 0 kg/kmol")
    _range(num, "k", reasons, low=1.0, what="a ratio of specific heats above 1", low_inclusive=False)
    _range(num, "z", reasons, low=0.0, what="a compressibility factor above 0")
    _range(num, "vapour_pressure", reasons, low=0.0, what="a vapour pressure above 0", low_inclusive=True)
    _range(num, "critical_pressure", reasons, low=0.0, what="a critical pressure above 0")
    valves["custom"] = custom
    valves["phase_given"] = phase
    valves["fluid"] = text["fluid"]
    return fluids


SERVICE_WORDS = {  # column: (accepted words, the default for a blank cell)
    "intent": (("flashing", "choked"), ""),
    "duty": (("continuous", "intermittent", "startup", "emergency"), "continuous"),
    "criticality": (("high", "medium", "low"), "medium"),
    "dissolved_gas": (("yes", "no"), "no"),
}
_SERVICE_SPELLINGS = {"start_up": "startup", "start-up": "startup", "y": "yes", "true": "yes", "n": "no",
                      "false": "no", "med": "medium"}


def _service(text, reasons: _Reasons, valves: pd.DataFrame) -> None:
    """The service columns (docs/input.md, "Service"): a word from a short list, or blank for the default."""
    for col, (words, default) in SERVICE_WORDS.items():
        given = np.array([_SERVICE_SPELLINGS.get(w.lower().replace(" ", "_"), w.lower().replace(" ", "_"))
                          for w in text[col]], dtype=object)
        wrong = (given != "") & ~np.isin(given, words)
        reasons.add(wrong, lambda i, col=col, words=words: (
            f"column '{col}': '{_clip(text[col][i])}' is not one of {', '.join(words)} (or blank)"))
        valves[col] = np.where(given == "", default, given)


def _range(num, col, reasons, low=None, high=None, what="", low_inclusive=False, high_inclusive=True):
    v = num[col]
    finite = np.isfinite(v)
    bad = np.zeros(len(v), dtype=bool)
    if low is not None:
        bad |= finite & ((v < low) if low_inclusive else (v <= low))
    if high is not None:
        bad |= finite & ((v > high) if high_inclusive else (v >= high))
    reasons.add(bad, lambda i: f"column '{col}': {v[i]:g} is out of range; expected {what}")


def _valve(text, num, reasons: _Reasons, valves: pd.DataFrame) -> None:
    n = len(valves)
    size = num["valve_size"]
    reasons.add(~np.isfinite(size) & ~reasons.mentions("valve_size"), "column 'valve_size' is blank; the valve size is needed")
    _range(num, "valve_size", reasons, low=0.0, what="a size above 0")
    cv = np.where(np.isfinite(num["rated_cv"]), num["rated_cv"], num["rated_kv"] * 1.156)
    both_blank = ~np.isfinite(cv)
    reasons.add(both_blank & ~reasons.mentions("rated_cv") & ~reasons.mentions("rated_kv"),
                "columns 'rated_cv' and 'rated_kv' are both blank; one is needed")
    reasons.add(np.isfinite(cv) & (cv <= 0), lambda i: f"rated flow coefficient {cv[i]:g} (Cv) must be above 0")
    _range(num, "rangeability", reasons, low=1.0, what="an inherent rangeability above 1")
    characteristic = np.array([normalise_characteristic(c) for c in text["characteristic"]], dtype=object)
    reasons.add(~np.isin(characteristic, CHARACTERISTICS),
                lambda i: f"column 'characteristic': '{_clip(text['characteristic'][i])}' is not one of "
                          f"{', '.join(CHARACTERISTICS)}")
    fl, xt, fd = num["fl"].copy(), num["xt"].copy(), num["fd"].copy()
    _range(num, "fl", reasons, low=0.0, high=1.0, what="0 < FL <= 1")
    _range(num, "xt", reasons, low=0.0, high=1.0, what="0 < xT < 1", high_inclusive=False)
    _range(num, "fd", reasons, low=0.0, high=1.0, what="0 < Fd <= 1")
    _range(num, "xfz", reasons, low=0.0, high=1.0, what="0 < xFz <= 1")
    style = np.array([styles.normalise_style(s) for s in text["valve_style"]], dtype=object)
    typical = np.full(n, "", dtype=object)
    gasish = np.array([p == "gas" for p in valves.get("phase_given", [""] * n)])
    for i in range(n):
        needed = [("fl", fl), ("fd", fd), ("xt", xt)]
        missing = [name for name, arr in needed if not np.isfinite(arr[i])]
        if not missing:
            continue
        if style[i]:
            if style[i] not in styles.TYPICAL_FACTORS:
                reasons.text[i].append(f"column 'valve_style': '{_clip(text['valve_style'][i])}' is not one of "
                                       f"{', '.join(styles.style_names())}")
                continue
            f_l, x_t, f_d, _ = styles.TYPICAL_FACTORS[style[i]]
            fill = {"fl": f_l, "xt": x_t, "fd": f_d}
            for name, arr in needed:
                if not np.isfinite(arr[i]):
                    arr[i] = fill[name]
            typical[i] = ", ".join(missing)
        else:
            need_now = [m for m in missing if m != "xt" or gasish[i]]
            if need_now:
                reasons.text[i].append(f"trim factor(s) {', '.join(need_now)} blank and no 'valve_style' "
                                       "to take typical values from")
    valves["valve_size"] = size
    valves["rated_cv"] = cv
    valves["characteristic"] = characteristic
    valves["rangeability"] = np.where(np.isfinite(num["rangeability"]), num["rangeability"], 50.0)
    valves["fl"], valves["xt"], valves["fd"] = fl, xt, fd
    valves["xfz_given"] = num["xfz"]
    valves["valve_style"] = style
    valves["typical_factors"] = typical


def _piping(text, num, reasons: _Reasons, valves: pd.DataFrame) -> None:
    size = valves["valve_size"].to_numpy()
    for side in ("in", "out"):
        given = num[f"pipe_{side}_id"]
        nps = num[f"pipe_{side}_size"] / 0.0254
        sched = text[f"pipe_{side}_schedule"]
        from_table, wall, msg = pipes.pipe_dimensions(np.round(nps, 3), sched)
        has_nps = np.isfinite(nps)
        reasons.add(has_nps & (sched == "") & ~np.isfinite(given),
                    f"column 'pipe_{side}_schedule' is blank; a nominal pipe size needs its schedule")
        reasons.add(has_nps & (sched != "") & (msg != ""),
                    lambda i, msg=msg, side=side: f"columns 'pipe_{side}_size'/'pipe_{side}_schedule': {msg[i]}")
        inside = np.where(np.isfinite(given), given, np.where(np.isfinite(from_table), from_table, size))
        _range({f"pipe_{side}_id": given}, f"pipe_{side}_id", reasons, low=0.0, what="a diameter above 0")
        # Heavy schedules make the pipe bore a little under the nominal valve size (a 2 in
        # valve in 2 in schedule 80 pipe): that is no reducer.  Far smaller is a units slip or a
        # narrowing the reducer equations do not describe.
        much_smaller = np.isfinite(inside) & np.isfinite(size) & (inside < PIPE_NARROWER_LIMIT * size) & (inside > 0)
        reasons.add(much_smaller, lambda i, inside=inside, side=side: (
            f"pipe_{side} inside diameter {inside[i] * 1000:.1f} mm is much smaller than the valve size "
            f"{size[i] * 1000:.1f} mm; check the units (the methods assume reducers, not a pipe narrower "
            "than the valve)"))
        valves[f"pipe_{side}_id"] = inside
        if side == "out":
            wall_given = num["pipe_out_wall"]
            valves["pipe_out_wall"] = np.where(np.isfinite(wall_given), wall_given, wall)
            _range(num, "pipe_out_wall", reasons, low=0.0, what="a wall thickness above 0")


def _plausible(num: dict, reasons: _Reasons) -> None:
    """Reject rows whose numbers are outside PLAUSIBLE (and blank them, so nothing downstream uses them)."""
    for col, (low, high, words) in PLAUSIBLE.items():
        values = num.get(col)
        if values is None:
            continue
        # Zero and negative values are left to the columns' own checks, which say "above 0" more plainly.
        out = np.isfinite(values) & (values > 0) & ((values < low) | (values > high)) | np.isinf(values)
        shown = values.copy()
        reasons.add(out & ~reasons.mentions(col), lambda i, col=col, words=words, shown=shown: (
            f"column '{col}': {shown[i]:.4g} (in SI) is outside the plausible range {words}; check the value and its unit"))
        values[out] = np.nan


def _bare_sizes(table: pd.DataFrame, units: dict, num: dict, reasons: _Reasons) -> None:
    """A valve size with no unit anywhere and below BARE_SIZE_MIN_MM is almost surely inches: refuse it."""
    if "valve_size" not in table or units.get("valve_size"):
        return
    bare = pd.to_numeric(table["valve_size"], errors="coerce").to_numpy(float)
    small = np.isfinite(bare) & (bare > 0) & (bare < BARE_SIZE_MIN_MM)
    num["valve_size"][small] = np.nan
    reasons.add(small, lambda i: (
        f"column 'valve_size': {bare[i]:g} has no unit and would be {bare[i]:g} mm, below the smallest "
        f"body ({BARE_SIZE_MIN_MM:g} mm): probably inches; write '{bare[i]:g} in' (or 'NPS {bare[i]:g}', "
        "or the header 'valve_size [in]')"))


def _cases(table: pd.DataFrame, units: dict, site: np.ndarray, n: int, decimal_comma: bool = False,
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
    cases["case_error"] = _case_checks(cases)
    return cases.sort_values(["valve", "case_order"], kind="stable").reset_index(drop=True)


def _case_checks(cases: pd.DataFrame) -> np.ndarray:
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
