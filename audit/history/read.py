"""Historian exports in, one long table of signal, time and value out.

A file is CSV or Parquet, wide (a ``time`` column and one column per signal,
a unit in brackets after the name) or long (``time``, ``signal``, ``value``
and optionally ``unit``).  Values stay as they came until ``parse_values``:
anything that is not a finite number is a bad-quality sample, counted later,
never an error.  Times become int64 nanoseconds since 1970 in UTC.
"""
from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from audit.io.reader import InputError

BRACKET_UNIT = re.compile(r"^(.*?)\s*\[([^\[\]]*)\]\s*$")
OFFSET = re.compile(r"(?:[zZ]|[+-]\d{2}(?::?\d{2})?)$")  # an ISO 8601 time that names its offset


def split_signal(text: str) -> tuple[str, str]:
    """'FI-101.PV [t/h]' -> ('FI-101.PV', 't/h'); a name without brackets has unit ''."""
    text = str(text).strip()
    m = BRACKET_UNIT.match(text)
    return (m.group(1).strip(), m.group(2).strip()) if m else (text, "")


def signal_key(name: str) -> str:
    """Signals match without regard to case or surrounding spaces (historians differ in both)."""
    return name.strip().casefold()


@dataclass
class _Part:
    """One file's readable records of some signals: a wide file's columns over its shared times, or a long
    file's rows grouped by signal."""
    time: np.ndarray            # int64 ns UTC, one per readable row (wide) or record (long)
    columns: dict               # signal key -> wide: [column names]; long: row indices into ``time``
    frame: object               # wide: the file's table (pyarrow Table or pandas DataFrame); long: its
                                # values parsed to numbers

    def raw(self, key: str) -> tuple[np.ndarray, np.ndarray]:
        if isinstance(self.columns[key], np.ndarray):   # long: this signal's records
            rows = self.columns[key]
            return self.time[rows], self.frame[rows]
        times, values = [], []
        for name in self.columns[key]:   # wide: a signal written twice in one file keeps both
            times.append(self.time)
            values.append(_numbers(self.frame, name, self.ok))
        return np.concatenate(times), np.concatenate(values)

    ok: np.ndarray = None       # wide: rows of the table whose time could be read


@dataclass
class History:
    """Every history file, read once and held as its columns; a signal's records are parsed to numbers
    only when asked for (``raw``), so a chunk of valves costs only its own signals."""
    parts: list = field(default_factory=list)   # _Part, in file order
    unit: dict = field(default_factory=dict)    # signal key -> unit the file gives ('' if none)
    names: dict = field(default_factory=dict)   # signal key -> the name as first written
    bad_times: dict = field(default_factory=dict)  # signal key -> records with no readable time
    dst_repeats: dict = field(default_factory=dict)  # signal key -> records at a repeated local hour (no offset)

    def count(self, key: str) -> int:
        """How many readable records one signal has (before any cleaning)."""
        return sum(len(p.columns[key]) if isinstance(p.columns[key], np.ndarray) else len(p.time) * len(p.columns[key])
                   for p in self.parts if key in p.columns)

    def raw(self, key: str) -> tuple[np.ndarray, np.ndarray]:
        """(time [ns UTC], value [as written, NaN where not a finite number]) of every readable record of
        one signal, in file order."""
        got = [part.raw(key) for part in self.parts if key in part.columns]
        if not got:
            return np.zeros(0, dtype=np.int64), np.zeros(0)
        return np.concatenate([t for t, _ in got]), np.concatenate([v for _, v in got])


def parse_times(values, tz: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """ISO 8601 text or timestamps -> (int64 ns UTC, readable, ambiguous local time).

    A time with an offset is placed by it; one without is local time in ``tz``.  A local time that
    occurs twice (the hour repeated when daylight saving ends) cannot be placed and is reported as
    ambiguous; so is one that does not exist (the hour skipped when it starts).
    """
    series = pd.Series(values)
    n = len(series)
    out = np.zeros(n, dtype=np.int64)
    ok = np.zeros(n, dtype=bool)
    ambiguous = np.zeros(n, dtype=bool)
    if n == 0:
        return out, ok, ambiguous
    if pd.api.types.is_datetime64_any_dtype(series.dtype):
        stamps = series if getattr(series.dt, "tz", None) is not None else _localise(series, tz, ambiguous)
        ok = stamps.notna().to_numpy() & ~ambiguous
        if ok.any():
            out[ok] = _ns(stamps[ok])
        return out, ok, ambiguous
    # Text: parse each distinct string once (a wide file repeats none, a long file repeats every one).
    uniq, inverse = np.unique(series.astype(str).str.strip().to_numpy(dtype=object), return_inverse=True)
    has_offset = np.array([bool(OFFSET.search(u)) for u in uniq], dtype=bool)
    u_out = np.zeros(len(uniq), dtype=np.int64)
    u_ok = np.zeros(len(uniq), dtype=bool)
    u_amb = np.zeros(len(uniq), dtype=bool)
    if has_offset.any():
        parsed = pd.to_datetime(pd.Series(uniq[has_offset]), format="ISO8601", utc=True, errors="coerce")
        good = parsed.notna().to_numpy()
        idx = np.flatnonzero(has_offset)
        u_ok[idx[good]] = True
        if good.any():
            u_out[idx[good]] = _ns(parsed[good])
    naive = ~has_offset
    if naive.any():
        parsed = pd.to_datetime(pd.Series(uniq[naive]), format="ISO8601", errors="coerce")
        amb = np.zeros(len(parsed), dtype=bool)
        local = _localise(parsed, tz, amb)
        good = local.notna().to_numpy() & ~amb
        idx = np.flatnonzero(naive)
        u_amb[idx[amb]] = True
        u_ok[idx[good]] = True
        if good.any():
            u_out[idx[good]] = _ns(local[good])
    return u_out[inverse], u_ok[inverse], u_amb[inverse]


def _ns(stamps: pd.Series) -> np.ndarray:
    """Zone-aware times as int64 nanoseconds since 1970 UTC, whatever resolution pandas chose."""
    return stamps.dt.tz_convert("UTC").dt.tz_localize(None).to_numpy().astype("datetime64[ns]").astype(np.int64)


def _localise(naive: pd.Series, tz: str, ambiguous: np.ndarray) -> pd.Series:
    """Naive times as local time in ``tz``; sets ``ambiguous`` where a local time is repeated or skipped."""
    if tz.upper() == "UTC":
        return naive.dt.tz_localize("UTC")
    local = naive.dt.tz_localize(tz, ambiguous="NaT", nonexistent="NaT")
    ambiguous |= (local.isna() & naive.notna()).to_numpy()
    return local


def _header(path: Path) -> list[str]:
    import csv

    with open(path, newline="", encoding="utf-8-sig") as fh:
        return [str(c).strip() for c in next(csv.reader(fh), [])]


def _frame(path: Path):
    """The file as a pyarrow Table (pandas' reader where pyarrow cannot read a CSV): numeric columns as
    numbers, any column holding a quality string as text, the time column always as text or timestamps."""
    suffix = path.suffix.lower()
    try:
        if suffix == ".parquet":
            import pyarrow.parquet as pq
            return pq.read_table(path)
        names = _header(path)
        try:
            import pyarrow as pa
            from pyarrow import csv as pacsv
            # pyarrow's reader keeps a wide export as compact columns (a number takes 8 bytes, not a
            # Python string's 50 or more); a column with any quality string stays text, parsed later.
            times = {n: pa.string() for n in names if n.casefold() in ("time", "signal", "unit")}
            return pacsv.read_csv(path, read_options=pacsv.ReadOptions(column_names=names, skip_rows=1),
                                  convert_options=pacsv.ConvertOptions(column_types=times))
        except (ImportError, ValueError, OSError):
            frame = pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True, encoding="utf-8-sig")
            frame.columns = [str(c).strip().lstrip("\ufeff") for c in frame.columns]
            return frame
    except FileNotFoundError:
        raise InputError(f"history file '{path}': no such file") from None
    except StopIteration:
        raise InputError(f"history file '{path}' is empty") from None
    except (OSError, ValueError, UnicodeDecodeError) as exc:
        raise InputError(f"history file '{path}' cannot be read as {'Parquet' if suffix == '.parquet' else 'CSV'}: "
                         f"{str(exc)[:160]}") from None
    except Exception as exc:  # pyarrow raises its own error types for damaged files
        if type(exc).__module__.startswith("pyarrow"):
            raise InputError(f"history file '{path}' cannot be read as Parquet: {str(exc)[:160]}") from None
        raise


def _column_names(frame) -> list[str]:
    return [str(c) for c in (frame.column_names if hasattr(frame, "column_names") else frame.columns)]


def _column(frame, name: str) -> np.ndarray:
    """One column as numpy (objects for text, datetime64 for timestamps, floats for numbers)."""
    if hasattr(frame, "column_names"):
        return frame.column(name).to_pandas().to_numpy()
    return frame[name].to_numpy()


def _codes(frame, name: str) -> tuple[np.ndarray, list]:
    """A column repeating few values (a long file's time, signal or unit) as (code per row, distinct values);
    code -1 for a missing cell.  Through the file's dictionary, so no Python object is made per row."""
    if hasattr(frame, "column_names"):
        import pyarrow.compute as pc

        encoded = frame.column(name).combine_chunks().dictionary_encode()
        codes = pc.fill_null(encoded.indices, -1).to_numpy(zero_copy_only=False).astype(np.int64)
        return codes, list(encoded.dictionary.to_pandas())
    codes, uniques = pd.factorize(frame[name].to_numpy(dtype=object))
    return codes.astype(np.int64), list(uniques)


def _times(frame, name: str, tz: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """parse_times over a column, each distinct time parsed once."""
    codes, uniques = _codes(frame, name)
    if not len(codes):
        return parse_times(np.zeros(0, dtype=object), tz)
    t, ok, amb = parse_times(pd.Series(uniques), tz)   # text stays text, timestamps stay timestamps
    # code -1 (a missing time) reads as unreadable
    return np.r_[t, 0][codes], np.r_[ok, False][codes], np.r_[amb, False][codes]


def _numbers(frame, name: str, rows: np.ndarray | None = None) -> np.ndarray:
    """A value column as floats: a number where the cell holds a finite number, else NaN."""
    if hasattr(frame, "column_names"):
        import pyarrow as pa
        import pyarrow.compute as pc

        col = frame.column(name)
        if pa.types.is_integer(col.type) or pa.types.is_floating(col.type) or pa.types.is_decimal(col.type):
            values = pc.fill_null(col.cast(pa.float64()), np.nan).to_numpy()
            values = values.copy() if not values.flags.writeable else values
            values[~np.isfinite(values)] = np.nan
        else:
            values = parse_values(col.cast(pa.string()).to_pandas().to_numpy(dtype=object))
    else:
        values = parse_values(frame[name].to_numpy(dtype=object))
    return values if rows is None else values[rows]


def _part(frame, path: Path, tz: str, hist: History) -> None:
    """Add one file's records to ``hist``: names, units, time counts and its ``_Part``."""
    columns = _column_names(frame)
    lower = {c.strip().casefold(): c for c in columns}
    if "time" not in lower:
        raise InputError(f"history file '{path}': no 'time' column; its columns are "
                         f"{', '.join(repr(c) for c in columns[:8])}")
    stamps, ok, amb = _times(frame, lower["time"], tz)
    if "signal" in lower and "value" in lower:
        codes, uniques = _codes(frame, lower["signal"])
        key_of_code = np.array([_register(hist, str(raw)) for raw in uniques] + [""], dtype=object)
        keys = key_of_code[codes]   # code -1 (no signal name) is the key ''
        if "unit" in lower:   # the first unit written for a signal, unless its name brackets one
            u_codes, u_names = _codes(frame, lower["unit"])
            u_names = np.array([str(u).strip() for u in u_names] + [""], dtype=object)
            pairs = pd.DataFrame({"k": codes, "u": u_codes}).drop_duplicates()
            for k, u in zip(pairs["k"].to_numpy(), pairs["u"].to_numpy()):
                if k >= 0 and u_names[u]:
                    hist.unit.setdefault(key_of_code[k], u_names[u])
        _count_times(hist, keys, ok, amb)
        good = np.flatnonzero(ok)
        key_codes, key_names = pd.factorize(keys[good])   # names that differ only in case are one signal
        order = np.argsort(key_codes, kind="stable")       # stable: file order kept within a signal
        bounds = np.searchsorted(key_codes[order], np.arange(len(key_names) + 1))
        rows = {key: order[bounds[j]:bounds[j + 1]] for j, key in enumerate(key_names)}
        hist.parts.append(_Part(stamps[good], rows, _numbers(frame, lower["value"])[good]))
        return
    signals = [c for c in columns if c != lower["time"]]
    if not signals:
        raise InputError(f"history file '{path}': a 'time' column but no signal columns")
    wide = {}
    for name in signals:
        key = _register(hist, name)
        wide.setdefault(key, []).append(name)
        for mask, counts in ((~ok & ~amb, hist.bad_times), (amb, hist.dst_repeats)):
            if mask.any():
                counts[key] = counts.get(key, 0) + int(mask.sum())
    hist.parts.append(_Part(stamps[ok], wide, frame, ok=ok))


def _register(hist: History, raw: str) -> str:
    """The signal's key; its name and bracketed unit remembered where first seen."""
    name, bracket = split_signal(raw)
    key = signal_key(name)
    hist.names.setdefault(key, name)
    if bracket:
        hist.unit.setdefault(key, bracket)
    return key


def _count_times(hist: History, keys: np.ndarray, ok: np.ndarray, amb: np.ndarray) -> None:
    for counts, mask in ((hist.bad_times, ~ok & ~amb), (hist.dst_repeats, amb)):
        if mask.any():
            for key, count in pd.Series(keys[mask]).value_counts().items():
                counts[key] = counts.get(key, 0) + int(count)


def read_history(paths: list[Path], tz: str = "UTC") -> History:
    """Read every history file into one ``History``; an unreadable file is an ``InputError``."""
    hist = History()
    for path in map(Path, paths):
        _part(_frame(path), path, tz, hist)
    if not paths:
        raise InputError("no history file given")
    for key in hist.names:
        hist.unit.setdefault(key, "")
    return hist


def parse_values(text: np.ndarray) -> np.ndarray:
    """Numbers where the text is a finite number, NaN for every quality string, blank or non-finite."""
    values = pd.to_numeric(pd.Series(text, dtype=object), errors="coerce").to_numpy(dtype=float, copy=True)
    values[~np.isfinite(values)] = np.nan
    return values
