"""Machine-readable outputs, as docs/outputs.md documents them, and safe writing.

Numbers are plain floats in the unit the column name ends with; booleans
are true/false.  Text cells that a spreadsheet would take for a formula
(starting with =, +, - or @ followed by a letter or quote) get a leading
apostrophe.  Files are written into a temporary folder beside the target
and moved into place only when all are complete.
"""
from __future__ import annotations

import csv
import io

import os
import shutil
import tempfile
from contextlib import contextmanager
from pathlib import Path

import numpy as np
import pandas as pd

from audit.workers import in_parts

RESULTS_COLUMNS = ["tag", "case", "phase", "cv_required", "cv_ratio", "travel_pct", "travel_observed_pct",
                   "dp_kpa", "dp_choked_kpa", "x", "x_choked", "choke_ratio", "choked", "sigma", "xf", "xfz",
                   "cavitation", "flashing", "vapour_fraction_out", "velocity_out_m_s", "mach_out", "k_used",
                   "noise_dba", "findings"]
EXTRA_RESULTS = ["area", "flow_kg_h", "p_in_kpa", "p_out_kpa", "t_in_c", "kv_required", "fp", "flp", "xtp",
                 "fr", "rev", "ff", "y", "xfz_source", "noise_note", "velocity_in_m_s", "velocity_line_in_m_s",
                 "aiv_pwl_db", "gain_below", "flow_mult_full_travel", "choked_at_full_travel", "case_note", "time"]
VALVES_COLUMNS = ["rank", "tag", "area", "service", "worst_case", "choke_ratio_max", "capacity_margin",
                  "travel_min_pct", "travel_max_pct", "gain_min", "gain_max", "severity", "findings"]
REJECTED_COLUMNS = ["row", "tag", "reason"]

# The OWASP rule for CSV injection: a text cell starting with =, +, -, @, tab or carriage return is
# prefixed with an apostrophe, whatever follows ('-1+1' and '+1+cmd|...' too).  Numbers are written as
# numbers and never touched.  Line breaks inside text become spaces, so no reader sees an extra row.
FORMULA_STARTS = "=+-@\t\r"
_LINE_BREAKS = str.maketrans({"\r": " ", "\n": " "})


def neutralise(value):
    """A text cell made safe to open in a spreadsheet (see FORMULA_STARTS); anything else unchanged."""
    if not isinstance(value, str) or not value:
        return value
    if value[0] in FORMULA_STARTS:
        value = "'" + value
    return value.translate(_LINE_BREAKS) if ("\r" in value or "\n" in value) else value


def results_table(cases: pd.DataFrame) -> pd.DataFrame:
    """results.csv: one row per valve and case, in the contract's units."""
    def num(name, scale=1.0, offset=0.0):
        return cases[name].to_numpy(float) * scale + offset if name in cases else np.full(len(cases), np.nan)
    note = np.where(cases["case_error"] != "", cases["case_error"],
                    _join_notes(*(cases[c] if c in cases else [""] * len(cases)
                                  for c in ("outlet_note", "velocity_note", "inlet_note"))))
    out = pd.DataFrame({
        "tag": cases["tag"], "case": cases["case"], "phase": cases["phase"],
        "cv_required": num("cv"), "cv_ratio": num("cv_ratio"), "travel_pct": num("travel_pct"),
        "travel_observed_pct": num("travel_observed_pct"), "dp_kpa": num("dp", 1e-3),
        "dp_choked_kpa": num("dp_choked", 1e-3), "x": num("x"), "x_choked": num("x_choked"),
        "choke_ratio": num("choke_ratio"), "choked": cases["choked"].astype(bool),
        "sigma": num("sigma"), "xf": num("xf"), "xfz": num("xfz"), "cavitation": cases.get("cavitation", ""),
        "flashing": cases.get("flashing", False), "vapour_fraction_out": num("vapour_fraction_out"),
        "velocity_out_m_s": num("velocity_out_m_s"), "mach_out": num("mach_out"),
        "k_used": np.where(cases["phase"].to_numpy(dtype=object) == "gas", num("k"), np.nan),
        "noise_dba": num("noise_dba"),
        "findings": cases["findings"],
        "area": cases["area"], "flow_kg_h": num("w", 3600.0), "p_in_kpa": num("p_in", 1e-3),
        "p_out_kpa": num("p_out", 1e-3), "t_in_c": num("t_in", 1.0, -273.15), "kv_required": num("kv"),
        "fp": num("fp"), "flp": num("flp"), "xtp": num("xtp"), "fr": num("fr"), "rev": num("rev"),
        "ff": num("ff"), "y": num("y"), "xfz_source": cases.get("xfz_source", ""),
        "noise_note": cases.get("noise_note", ""), "velocity_in_m_s": num("velocity_in_m_s"),
        "velocity_line_in_m_s": num("velocity_line_in_m_s"), "aiv_pwl_db": num("aiv_pwl_db"),
        "gain_below": num("gain_below"),
        "flow_mult_full_travel": num("flow_mult_full_travel"),
        "choked_at_full_travel": cases.get("choked_at_full_travel", pd.Series(False, index=cases.index)).astype(bool),
        "case_note": note,
        "time": cases["time"].fillna("") if "time" in cases else "",  # a history case's time stamp (UTC)
    })
    return out[RESULTS_COLUMNS + EXTRA_RESULTS]


def _join_notes(*columns) -> list[str]:
    """Per case, the non-blank notes of the given columns joined by '; '."""
    lists = [column.to_numpy(dtype=object).tolist() if isinstance(column, pd.Series) else column
             for column in columns]  # plain lists: iterating pandas' text arrays costs a call per cell
    return ["; ".join(x for x in row if isinstance(x, str) and x) for row in zip(*lists)]


def write_csv(path: Path, frame: pd.DataFrame) -> None:
    """Write ``frame`` as CSV text to ``path`` (UTF-8, '\\n' line ends; cells as ``to_csv_text``).

    Streamed a block of rows at a time, so no copy of the table as Python strings is ever whole.  A
    long table is formatted in contiguous parts of rows on every core (``workers.in_parts``), each
    into a file of its own beside ``path``; the parts are then joined in order.  Rows are written on
    their own, so the bytes are the same as in one process.
    """
    path = Path(path)

    def part(start: int, stop: int) -> dict:
        target = path if (start, stop) == (0, len(frame)) else path.with_name(f"{path.name}.part{start}")
        with open(target, "w", encoding="utf-8", newline="") as fh:
            if start == 0:
                _write_header(fh, frame)
            _write_rows(fh, frame, start, stop)
        return {"file": np.array([str(target)], dtype=object)}

    files = in_parts(part, len(frame), PART_MIN_ROWS)["file"].tolist()
    if files == [str(path)]:
        return
    with open(path, "wb") as out:
        for name in files:
            with open(name, "rb") as fh:
                shutil.copyfileobj(fh, out, 1 << 20)
            os.unlink(name)


def to_csv_text(frame: pd.DataFrame) -> str:
    """CSV text: formula-like cells neutralised, booleans true/false, floats to 6 significant digits.

    In one process, for short tables (the comparison); the audit's files go through ``write_csv``.
    """
    buf = io.StringIO()
    _write_header(buf, frame)
    _write_rows(buf, frame, 0, len(frame))
    return buf.getvalue()


def _write_header(fh, frame: pd.DataFrame) -> None:
    csv.writer(fh, lineterminator="\n").writerow([str(c) for c in frame.columns])


def _write_rows(fh, frame: pd.DataFrame, start: int, stop: int) -> None:
    for first in range(start, stop, CSV_BLOCK_ROWS):  # a block at a time: few cell strings alive at once
        fh.write(_block_text(frame.iloc[first:min(first + CSV_BLOCK_ROWS, stop)]))


PART_MIN_ROWS = 20_000  # rows a worker formats at least: a fork costs some 20 ms, a row of results.csv 12 us
CSV_BLOCK_ROWS = 2000


def _block_text(block: pd.DataFrame) -> str:
    """The CSV lines of a block of rows, as Python's csv module writes them (minimal quoting, '\\n').

    Each row is one ``%`` formatting of a line template, so the numbers are formatted in C without
    a string object per cell: floats with ``%.6g``, and a missing float with ``%.0s`` (nothing).
    A template is made for each pattern of missing floats found in the block (a few dozen).
    """
    specs, values, missing = [], [], []
    for name in block.columns:
        series = block[name]
        if pd.api.types.is_float_dtype(series.dtype):
            numbers = series.to_numpy(float)
            missing.append(np.isnan(numbers))
            specs.append(None)
            values.append(numbers.tolist())
        else:
            specs.append("%s")
            values.append(_cells(series))
    patterns, which = _missing_patterns(missing, len(block))
    empty = "%.0s"
    if len(specs) == 1:  # the csv module writes a row of one empty cell as "" (else it would be a blank line)
        empty = '""%.0s'
        values[0] = ['""' if cell == "" else cell for cell in values[0]]
    templates = []
    for pattern in patterns:
        gaps = iter(pattern)
        templates.append(",".join(spec or (empty if next(gaps) else "%.6g") for spec in specs) + "\n")
    return "".join([templates[k] % row for k, row in zip(which, zip(*values))])


def _missing_patterns(missing: list[np.ndarray], rows: int) -> tuple[list[list[bool]], list[int]]:
    """The distinct rows of the missing-float matrix, and each row's index among them."""
    if not missing:
        return [[]], [0] * rows
    bits = np.ascontiguousarray(np.packbits(np.column_stack(missing), axis=1))
    keys, which = np.unique(bits.view(f"V{bits.shape[1]}").ravel(), return_inverse=True)
    patterns = np.unpackbits(keys.view(np.uint8).reshape(len(keys), -1), axis=1, count=len(missing))
    return patterns.astype(bool).tolist(), which.ravel().tolist()


def _cells(series: pd.Series) -> list:
    """The cells of a column that is not float, as final CSV text (quoted where the csv module quotes)."""
    dtype = series.dtype
    if pd.api.types.is_bool_dtype(dtype):
        return np.where(series.to_numpy(bool), "true", "false").tolist()
    if pd.api.types.is_numeric_dtype(dtype):
        return series.tolist()
    if isinstance(dtype, pd.StringDtype):  # pandas' text columns: only the few risky cells one by one
        out = series.to_numpy(dtype=object, na_value="").tolist()
        for i in np.flatnonzero(series.str.contains(_RISKY, regex=True, na=False).to_numpy(bool)).tolist():
            out[i] = neutralise(out[i])
        for i in np.flatnonzero(series.str.contains(_QUOTED, regex=True, na=False).to_numpy(bool)).tolist():
            out[i] = _quote(out[i])
        return out
    return [_text_cell(v) for v in series.to_numpy(dtype=object).tolist()]


_RISKY = r"^[=+\-@\t\r]|[\r\n]"  # the cells neutralise changes: a formula start, or a line break anywhere
# The cells Python's csv module quotes (minimal quoting, ',' between cells, '\n' at the end of a row): a
# comma, a double quote or a line break; neutralise has left no line break.
_QUOTED = r'[",]'


def _quote(text: str) -> str:
    return '"' + text.replace('"', '""') + '"'


def _text_cell(v):
    if isinstance(v, str):
        v = neutralise(v)
        return _quote(v) if ('"' in v or "," in v) else v
    if v is True or v is False:
        return "true" if v else "false"
    if v is None or (isinstance(v, float) and v != v):
        return ""
    return v


# Every file a run or a comparison may publish: a new set replaces the old one whole, so a file of a
# format not written this time is removed rather than left beside outputs of another audit.
AUDIT_FILES = ("results.csv", "valves.csv", "rejected.csv", "audit_info.json", "audit.json", "report.html",
               "report.pdf", "worklist.xlsx", "history.csv")


def check_writable(target: Path) -> None:
    """Refuse, before any work, an output folder that cannot be written (OutputError)."""
    target = Path(target)
    try:
        target.mkdir(parents=True, exist_ok=True)
        handle, probe = tempfile.mkstemp(prefix=".valve-audit-probe-", dir=target)
        os.close(handle)
        Path(probe).unlink()
    except OSError as exc:
        raise OutputError(f"cannot write into the output folder '{target}': {exc.strerror or exc}") from None


@contextmanager
def staged_folder(target: Path, published: tuple[str, ...] = AUDIT_FILES):
    """Yield a staging folder; on success its files become the published set in ``target`` at once.

    Each completed run keeps its own folder (``.valve-audit-runs/<run>``); ``.valve-audit-current``
    is a link to the published one, and each published name in ``target`` is a link through it
    (``results.csv -> .valve-audit-current/results.csv``).  Publishing renames one link
    (``publish``), so anyone who opens the folder's files at any instant, a person, a
    spreadsheet or a script that knows nothing of the tool, sees one complete audit: the old or
    the new.  A run killed at any point leaves the previous audit published.
    """
    target = Path(target)
    try:
        target.mkdir(parents=True, exist_ok=True)
        remove_stale_stages(target)
        stage = Path(tempfile.mkdtemp(prefix=f"{STAGE_PREFIX}{os.getpid()}-", dir=target))
    except OSError as exc:
        raise OutputError(f"cannot write into '{target}': {exc.strerror or exc}") from None
    try:
        yield stage
        publish(target, stage, published)
    finally:
        shutil.rmtree(stage, ignore_errors=True)


RUNS = ".valve-audit-runs"
CURRENT = ".valve-audit-current"


def publish(target: Path, stage: Path, published: tuple[str, ...]) -> None:
    """Make the files of ``stage`` the published set of ``target`` (see ``staged_folder``).

    Steps, each atomic on one file system, in an order that keeps one audit visible and every
    visible name openable:
    1. the stage folder is renamed into .valve-audit-runs/ (it is complete);
    2. names of the published set the new run did not write are removed (a reader then sees the
       old audit without that format, never a name that does not open);
    3. .valve-audit-current is switched to the new run by renaming a new link over the old;
    4. each name the new set holds becomes a link through .valve-audit-current (a name already
       linked needs nothing; a plain file from an older version is replaced by the link); older
       run folders are deleted.
    """
    runs = target / RUNS
    runs.mkdir(exist_ok=True)
    run = runs / stage.name[len(STAGE_PREFIX):]
    umask = os.umask(0)
    os.umask(umask)
    stage.chmod(0o777 & ~umask)  # mkdtemp made it private; the published audit is read like any folder
    os.replace(stage, run)
    fault_point("renamed")
    new = sorted(p.name for p in run.iterdir())
    for name in published:
        if name not in new and ((target / name).is_symlink() or (target / name).is_file()):
            (target / name).unlink()
    fault_point("pruned")
    _replace_link(target / CURRENT, Path(RUNS) / run.name)
    fault_point("switched")
    for name in new:
        link = target / name
        wanted = Path(CURRENT) / name
        if not (link.is_symlink() and Path(os.readlink(link)) == wanted):
            _replace_link(link, wanted)
            fault_point("linked")
    for old in runs.iterdir():
        if old.name != run.name:
            shutil.rmtree(old, ignore_errors=True)


def _replace_link(path: Path, points_to: Path) -> None:
    """Point ``path`` at ``points_to`` by renaming a fresh link over it (atomic)."""
    fresh = path.with_name(f"{path.name}.{os.getpid()}.new")
    if fresh.is_symlink() or fresh.exists():
        fresh.unlink()
    os.symlink(points_to, fresh)
    os.replace(fresh, path)


def fault_point(step: str) -> None:
    """Fault injection for the kill tests: VALVE_AUDIT_KILL_AT=<step> kills this process there (SIGKILL).

    Unset in normal use, where this does nothing.
    """
    if os.environ.get("VALVE_AUDIT_KILL_AT") == step:
        import signal
        os.kill(os.getpid(), signal.SIGKILL)


STAGE_PREFIX = ".valve-audit-"


def remove_stale_stages(target: Path) -> list[str]:
    """Remove staging folders left by runs that were killed: those whose process no longer exists.

    A stage is named .valve-audit-<pid>-<random>; a stage of a live process (a concurrent run)
    is left alone.  Returns the names removed.
    """
    removed = []
    for stage in Path(target).glob(f"{STAGE_PREFIX}*"):
        pid = stage.name[len(STAGE_PREFIX):].split("-", 1)[0]
        if stage.is_symlink() or not stage.is_dir() or not pid.isdigit() or _alive(int(pid)):
            continue
        shutil.rmtree(stage, ignore_errors=True)
        removed.append(stage.name)
    for fresh in Path(target).glob("*.new"):  # a link a killed run was about to rename into place
        pid = fresh.name.rsplit(".", 2)[-2] if fresh.name.count(".") >= 2 else ""
        if fresh.is_symlink() and pid.isdigit() and not _alive(int(pid)):
            fresh.unlink()
            removed.append(fresh.name)
    return removed


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


class OutputError(Exception):
    """The output folder cannot be written (a file in its place, read-only, full)."""


def write_csvs(folder: Path, audit) -> None:
    write_csv(folder / "results.csv", results_table(audit.cases))
    write_csv(folder / "valves.csv", audit.valves[VALVES_COLUMNS + _extra_valve_columns(audit)])
    rejected = audit.rejected[REJECTED_COLUMNS] if len(audit.rejected) else pd.DataFrame(columns=REJECTED_COLUMNS)
    write_csv(folder / "rejected.csv", rejected)
    if getattr(audit, "history", None) is not None:
        write_csv(folder / "history.csv", audit.history.table)


def _extra_valve_columns(audit) -> list[str]:
    return [c for c in ("finding_codes",) + tuple(getattr(audit, "valve_extra_columns", ())) if c in audit.valves]
