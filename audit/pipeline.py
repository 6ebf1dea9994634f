"""One audit run from files to files: load, compute, write (staged), summarise."""
from __future__ import annotations

import datetime as _dt
import hashlib
import json
import math
import time
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

from audit import OUTPUT_FORMAT_VERSION, __version__
from audit.engine import Audit, Options, compute
from audit.io.loader import LineList, Limits, finish_linelist, load_linelist
from audit.io.outputs import OutputError, check_writable, staged_folder, write_csvs
from audit.memory import release_free_memory, use_system_allocator_for_text


@dataclass
class Summary:
    rows: int
    audited: int
    rejected: int
    cases: int
    findings: int

    def text(self) -> str:
        return (f"{self.rows} rows: {self.audited} valves audited ({self.cases} cases), "
                f"{self.rejected} rows rejected; {self.findings} findings")


class OptionMismatch(Exception):
    """An option names something the line list does not hold (a case, an area)."""

    def __init__(self, message: str, usage: bool):
        super().__init__(message)
        self.usage = usage  # True: a command-line value (exit 2); False: a file the user gave (exit 3)


def sha256(path: Path) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def run_metadata(ll: LineList, options: Options, rules_file: Path | None, trims_file: Path | None) -> dict:
    """What a reader needs to trace a report back to its input; lives in the report, not the CSVs.

    The input's digest is of the bytes that were read and audited, not of the file as it is now.
    """
    source = ll.source
    return {
        "input_file": source.source if source else "",
        "input_sheet": source.sheet if source else "",
        "input_sha256": source.digest if source else "",
        "date": _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"),
        "tool_version": __version__,
        "output_format_version": OUTPUT_FORMAT_VERSION,
        "rules_file": str(rules_file) if rules_file else "(none: defaults)",
        "rules_file_sha256": sha256(rules_file) if rules_file else "",
        "trims_file": str(trims_file) if trims_file else "",
        "p_atm_kpa": options.p_atm / 1000.0,
        "property_backend": options.backend,
        "flow_scale": options.flow_scale,
        "scale_cases": ", ".join(options.scale_cases) or "all",
        "area_scale": dict(options.area_scale),
    }


def check_options(ll: LineList, options: Options) -> None:
    """Refuse what-if options that name cases or areas the line list does not hold."""
    cases = sorted(set(ll.cases["case"])) if len(ll.cases) else []
    unknown = [c for c in options.scale_cases if c not in cases]
    if unknown:
        raise OptionMismatch(f"--scale-cases: no case {', '.join(repr(c) for c in unknown)} in the line list; "
                             f"its cases are {', '.join(cases) or '(none)'}", usage=True)
    areas = sorted(set(ll.valves["area"])) if len(ll.valves) else []
    unknown = [a for a in options.area_scale if a not in areas]
    if unknown:
        raise OptionMismatch(f"area scaling file: no area {', '.join(repr(a) for a in unknown[:5])} in the line "
                             f"list; its areas are {', '.join(repr(a) for a in areas) or '(none)'}", usage=False)


def run_audit(linelist, options: Options, limits: Limits | None = None, sheet: str | None = None,
              trims_file: Path | None = None, progress=None, history=None, early=None) -> Audit:
    """early: an ``audit.io.early.EarlyRead`` started on this file, or None."""
    progress = progress or _Progress(True)
    with progress.stage("Reading the line list"):
        read = early.collect(linelist, sheet, options.p_atm, limits) if early else None
        if read is not None:
            ll = finish_linelist(read)
        else:  # read here: no child, or it could not (any error then appears as it would without one)
            ll = load_linelist(linelist, sheet=sheet, p_atm=options.p_atm, limits=limits)
    release_free_memory()  # the file's text and cells are gone; give their pages back before the engine
    check_options(ll, options)
    progress.report_input(ll)
    with progress.stage(f"Auditing {len(ll.valves)} valves ({len(ll.cases)} cases)"):
        audit = compute(ll, options)
    if history is not None and history.files:
        audit = _with_history(audit, options, history, progress)
    if trims_file:
        from audit.studies.trims import add_trim_alternatives
        with progress.stage("Re-screening against the trims file"):
            add_trim_alternatives(audit, trims_file)
    return audit


def _with_history(audit: Audit, options: Options, history, progress) -> Audit:
    """Audit every operating sample of the process history, then re-audit the line list with the
    representative samples added as cases (so ranking, headroom and the report treat them like any other)."""
    from audit.history.study import study_history, with_history_cases

    files = len(history.files)
    with progress.stage(f"Reading and auditing the process history ({files} file{'s' if files != 1 else ''})"):
        result = study_history(audit, history, options)
    used = int(result.table["samples_used"].sum()) if len(result.table) else 0
    progress.say(f"History: {len(result.table)} valves, {int(result.table['samples_read'].sum()):,} samples read, "
                 f"{used:,} audited")
    ll = with_history_cases(audit.linelist, result)
    with progress.stage(f"Auditing {len(ll.valves)} valves with the representative history cases"):
        final = compute(ll, options)
    final.history = result
    return final


def run_files(linelist, out: Path, options: Options, limits: Limits | None = None, sheet: str | None = None,
              formats: set[str] | None = None, rules_file: Path | None = None, trims_file: Path | None = None,
              quiet: bool = False, history=None, previous: Path | None = None, early=None) -> Summary:
    """Audit ``linelist`` (a path, or '-' for standard input) and write the chosen outputs into ``out``.

    early: an ``audit.io.early.EarlyRead`` already reading ``linelist`` (the command line starts one
    before importing the engine), or None.
    """
    formats = formats or {"csv", "html", "pdf", "xlsx"}
    check_writable(Path(out))
    use_system_allocator_for_text()  # so that release_free_memory reaches pandas' text columns too
    planner = _read_previous(previous) if previous else None  # before this run can replace that folder
    progress = _Progress(quiet)
    audit = run_audit(linelist, options, limits, sheet, trims_file, progress, history, early)
    summary = Summary(rows=audit.linelist.rows_total, audited=len(audit.valves), rejected=len(audit.rejected),
                      cases=len(audit.cases), findings=len(audit.findings))
    meta = run_metadata(audit.linelist, options, rules_file, trims_file)
    if previous:
        meta["previous"] = str(previous)
    if history is not None and history.files:
        meta["history_files"] = [{"file": str(f), "sha256": sha256(Path(f))} for f in history.files]
        meta["history_settings"] = {"time_zone": history.tz, "hold_hours": history.hold_hours,
                                    "stuck_hours": history.stuck_hours}
    try:
        written = _write_outputs(Path(out), audit, meta, formats, progress, planner)
    except OSError as exc:  # a full disk, a folder made read-only meanwhile: the previous audit stays published
        raise OutputError(f"could not write the outputs into '{out}': {exc.strerror or exc}; the previous "
                          "outputs there are unchanged") from None
    progress.say(summary.text())
    progress.say(f"Outputs in {Path(out).resolve()}: {', '.join(written)}")
    return summary


def _read_previous(folder: Path):
    """The planner entries of an earlier audit's work list; an InputError if there is none to read."""
    from audit.io.reader import InputError
    from audit.report.worklist import read_previous

    path = Path(folder) / "worklist.xlsx"
    if not path.is_file():
        raise InputError(f"--previous '{folder}': no worklist.xlsx there; give the folder of an earlier audit "
                         "run with the xlsx format (the default)")
    try:
        return read_previous(Path(folder))
    except Exception as exc:  # a damaged or foreign workbook: say which, never a traceback
        raise InputError(f"--previous '{folder}': worklist.xlsx cannot be read as a work list "
                         f"({type(exc).__name__}: {str(exc)[:120]})") from None


def _write_outputs(out: Path, audit: Audit, meta: dict, formats: set[str], progress, planner=None) -> list[str]:
    """Every chosen output, staged and then published at once; returns the names written."""
    with staged_folder(out) as stage:
        with progress.stage("Writing the CSV outputs"):
            write_csvs(stage, audit)
            info = {k: meta[k] for k in ("output_format_version", "tool_version", "input_file", "input_sheet",
                                         "input_sha256", "rules_file_sha256", "flow_scale", "scale_cases",
                                         "area_scale")}
            info.update({k: meta[k] for k in ("history_files", "history_settings") if k in meta})
            # No date here: the same input and options give the same bytes (the date is in the report).
            (stage / "audit_info.json").write_text(json.dumps(info, indent=1, sort_keys=True) + "\n",
                                                   encoding="utf-8")
            if "json" in formats:
                (stage / "audit.json").write_text(_json(audit, meta), encoding="utf-8")
        wanted = formats & {"html", "pdf", "xlsx"}
        if wanted:
            from audit.report.write import write_reports
            write_reports(stage, audit, meta, wanted, progress=progress, previous=planner)
        written = sorted(p.name for p in stage.iterdir())
    return written


def _json(audit: Audit, meta: dict) -> str:
    from audit.io.outputs import VALVES_COLUMNS, results_table
    valves = audit.valves[VALVES_COLUMNS].to_dict(orient="records")
    results = results_table(audit.cases).to_dict(orient="records")
    rejected = audit.rejected.to_dict(orient="records")

    def clean(rows):  # JSON has no NaN or Infinity: null
        return [{k: (None if isinstance(v, float) and not math.isfinite(v) else v) for k, v in r.items()}
                for r in rows]
    return json.dumps({"metadata": meta, "valves": clean(valves), "results": clean(results),
                       "rejected": clean(rejected)}, indent=1, default=str, allow_nan=False)


class _Progress:
    """Stages with their elapsed time on the terminal (stderr); silent under --quiet."""

    def __init__(self, quiet: bool):
        self.console = None
        self.started = time.perf_counter()
        if not quiet:
            from rich.console import Console
            self.console = Console(stderr=True, highlight=False, soft_wrap=True)  # a line per message, unwrapped

    def say(self, message: str) -> None:
        if self.console is not None:
            self.console.print(message, markup=False, highlight=False)

    @contextmanager
    def stage(self, title: str):
        """A stage: a spinner while it runs on a terminal, then one line with its time."""
        if self.console is None:
            yield
            return
        t0 = time.perf_counter()
        if self.console.is_terminal:
            with self.console.status(title + " ..."):
                yield
        else:
            yield
        self.say(f"{title}: {time.perf_counter() - t0:.1f} s")

    def report_input(self, ll: LineList) -> None:
        """What was read, and the columns that were not: a misspelt column should not pass unseen."""
        source = ll.source
        if source is None:
            return
        where = f"{source.source}" + (f", sheet '{source.sheet}'" if source.sheet else "")
        self.say(f"Read {where}: {ll.rows_total} rows")
        for note in source.notes:
            self.say(f"  note: {note}")
        if ll.ignored_columns:
            self.say(f"  columns not read (not in docs/input.md): {'; '.join(ll.ignored_columns)}")
