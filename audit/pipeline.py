"""One audit run from files to files: load, compute, write (staged), summarise."""
from __future__ import annotations

import datetime as _dt
import hashlib
import json
from dataclasses import dataclass
from pathlib import Path

from . import OUTPUT_FORMAT_VERSION, __version__
from .engine import Audit, Options, compute
from .loader import Limits, load_linelist
from .outputs import staged_folder, write_csvs


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


def sha256(path: Path) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def run_metadata(linelist: Path, options: Options, rules_file: Path | None, trims_file: Path | None) -> dict:
    """What a reader needs to trace a report back to its input; lives in the report, not the CSVs."""
    return {
        "input_file": linelist.name,
        "input_sha256": sha256(linelist),
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


def run_audit(linelist: Path, options: Options, limits: Limits | None = None, sheet: str | None = None,
              trims_file: Path | None = None) -> Audit:
    ll = load_linelist(linelist, sheet=sheet, p_atm=options.p_atm, limits=limits)
    audit = compute(ll, options)
    if trims_file:
        from .trims import add_trim_alternatives
        add_trim_alternatives(audit, trims_file)
    return audit


def run_files(linelist: Path, out: Path, options: Options, limits: Limits | None = None, sheet: str | None = None,
              formats: set[str] | None = None, rules_file: Path | None = None, trims_file: Path | None = None,
              quiet: bool = False) -> Summary:
    """Audit ``linelist`` and write the chosen outputs into ``out``; return the counts."""
    formats = formats or {"csv", "html", "pdf", "xlsx"}
    progress = _Progress(quiet)
    progress.say(f"Reading {linelist.name}")
    audit = run_audit(Path(linelist), options, limits, sheet, trims_file)
    summary = Summary(rows=audit.linelist.rows_total, audited=len(audit.valves), rejected=len(audit.rejected),
                      cases=len(audit.cases), findings=len(audit.findings))
    meta = run_metadata(Path(linelist), options, rules_file, trims_file)
    with staged_folder(Path(out)) as stage:
        progress.say("Writing CSV outputs")
        write_csvs(stage, audit)
        info = {k: meta[k] for k in ("output_format_version", "tool_version", "input_file", "input_sha256",
                                     "rules_file_sha256", "flow_scale", "scale_cases", "area_scale")}
        # No date here: the same input and options give the same bytes (the date is in the report).
        (stage / "audit_info.json").write_text(json.dumps(info, indent=1, sort_keys=True) + "\n", encoding="utf-8")
        if "json" in formats:
            (stage / "audit.json").write_text(_json(audit, meta), encoding="utf-8")
        wanted = formats & {"html", "pdf", "xlsx"}
        if wanted:
            from .report import write_reports
            write_reports(stage, audit, meta, wanted, progress=progress)
    progress.say(summary.text())
    return summary


def _json(audit: Audit, meta: dict) -> str:
    from .outputs import VALVES_COLUMNS, results_table
    valves = audit.valves[VALVES_COLUMNS].to_dict(orient="records")
    results = results_table(audit.cases).to_dict(orient="records")
    rejected = audit.rejected.to_dict(orient="records")
    clean = lambda rows: [{k: (None if isinstance(v, float) and v != v else v) for k, v in r.items()} for r in rows]  # noqa: E731
    return json.dumps({"metadata": meta, "valves": clean(valves), "results": clean(results),
                       "rejected": clean(rejected)}, indent=1, default=str)


class _Progress:
    """Progress lines on a terminal; silent under --quiet or when output is not a terminal."""

    def __init__(self, quiet: bool):
        self.quiet = quiet
        self.console = None
        if not quiet:
            from rich.console import Console
            self.console = Console(stderr=True)

    def say(self, message: str) -> None:
        if self.console is not None:
            self.console.print(message, markup=False, highlight=False)
