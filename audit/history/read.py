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
class History:
    """Every record of every history file, long form, in file order."""
    signal: np.ndarray          # signal key per record (object)
    time: np.ndarray            # int64 ns since 1970, UTC; records whose time could not be read are dropped
    text: np.ndarray            # the value as written (object: str or number)
    unit: dict = field(default_factory=dict)    # signal key -> unit the file gives ('' if none)
    names: dict = field(default_factory=dict)   # signal key -> the name as first written
    bad_times: dict = field(default_factory=dict)  # signal key -> records with no readable time
    dst_repeats: dict = field(default_factory=dict)  # signal key -> records at a repeated local hour (no offset)


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


def _frame(path: Path) -> pd.DataFrame:
    suffix = path.suffix.lower()
    try:
        if suffix == ".parquet":
            import pyarrow.parquet as pq
            return pq.read_table(path).to_pandas()
        # Every cell as text: a quality string must survive to be counted, not become NaN here. pyarrow's
        # reader is some three times faster than pandas' own on wide exports (benchmarks/bench_history.py).
        try:
            frame = pd.read_csv(path, dtype=str, keep_default_na=False, engine="pyarrow")
        except (ImportError, ValueError, OSError):
            frame = pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True, encoding="utf-8-sig")
        frame.columns = [str(c).strip().lstrip("\ufeff") for c in frame.columns]
        return frame
    except FileNotFoundError:
        raise InputError(f"history file '{path}': no such file") from None
    except (OSError, ValueError, UnicodeDecodeError) as exc:
        raise InputError(f"history file '{path}' cannot be read as {'Parquet' if suffix == '.parquet' else 'CSV'}: "
                         f"{str(exc)[:160]}") from None
    except Exception as exc:  # pyarrow raises its own error types for damaged files
        if type(exc).__module__.startswith("pyarrow"):
            raise InputError(f"history file '{path}' cannot be read as Parquet: {str(exc)[:160]}") from None
        raise


def _long(frame: pd.DataFrame, path: Path) -> tuple[pd.Series, pd.Series, pd.Series, pd.Series, int]:
    """(time, signal with any bracketed unit, value, unit, repeats) of a wide or long file; a wide file's
    time column is given once and ``repeats`` says how many signals share it (its times are parsed once)."""
    lower = {str(c).strip().casefold(): c for c in frame.columns}
    if "time" not in lower:
        raise InputError(f"history file '{path}': no 'time' column; its columns are "
                         f"{', '.join(repr(str(c)) for c in list(frame.columns)[:8])}")
    if "signal" in lower and "value" in lower:
        unit = frame[lower["unit"]].astype(str) if "unit" in lower else pd.Series("", index=frame.index)
        return frame[lower["time"]], frame[lower["signal"]].astype(str), frame[lower["value"]], unit, 1
    signals = [c for c in frame.columns if c != lower["time"]]
    if not signals:
        raise InputError(f"history file '{path}': a 'time' column but no signal columns")
    n = len(frame)
    signal = pd.Series(np.repeat(np.array([str(s) for s in signals], dtype=object), n))
    value = pd.Series(np.concatenate([frame[s].to_numpy(dtype=object) for s in signals]) if n else [], dtype=object)
    return frame[lower["time"]], signal, value, pd.Series("", index=range(len(signal))), len(signals)


def read_history(paths: list[Path], tz: str = "UTC") -> History:
    """Read every history file into one ``History``; an unreadable file is an ``InputError``."""
    sig_parts, time_parts, text_parts = [], [], []
    units, names, bad_times, dst = {}, {}, {}, {}
    for path in map(Path, paths):
        time, signal, value, unit, repeats = _long(_frame(path), path)
        split = [split_signal(s) for s in pd.unique(signal)]
        key_of = {raw: signal_key(name) for raw, (name, _) in zip(pd.unique(signal), split)}
        for raw, (name, bracket) in zip(pd.unique(signal), split):
            key = key_of[raw]
            names.setdefault(key, name)
            if bracket:
                units.setdefault(key, bracket)
        keys = signal.map(key_of).to_numpy(dtype=object)
        for key, u in zip(keys, unit.to_numpy(dtype=object)):
            if u and str(u).strip() and key not in units:
                units[key] = str(u).strip()
        stamps, ok, amb = (np.tile(a, repeats) for a in parse_times(time.to_numpy(), tz))
        for counts, mask in ((bad_times, ~ok & ~amb), (dst, amb)):
            for key, count in pd.Series(keys[mask]).value_counts().items():
                counts[key] = counts.get(key, 0) + int(count)
        sig_parts.append(keys[ok])
        time_parts.append(stamps[ok])
        text_parts.append(value.to_numpy(dtype=object)[ok])
    if not sig_parts:
        raise InputError("no history file given")
    for key in names:
        units.setdefault(key, "")
    return History(np.concatenate(sig_parts), np.concatenate(time_parts), np.concatenate(text_parts),
                   units, names, bad_times, dst)


def parse_values(text: np.ndarray) -> np.ndarray:
    """Numbers where the text is a finite number, NaN for every quality string, blank or non-finite."""
    values = pd.to_numeric(pd.Series(text, dtype=object), errors="coerce").to_numpy(dtype=float, copy=True)
    values[~np.isfinite(values)] = np.nan
    return values
