"""Command line: ``valve-audit run``, ``valve-audit rules``, ``valve-audit compare``.

Exit status of ``run`` (also in the README):
  0  every non-blank row of the line list was audited;
  1  the run finished, but some rows were rejected (see rejected.csv);
  2  the command line was wrong (unknown option, bad value, a case name the line list lacks);
  3  the input could not be read at all (missing file, unreadable, a required column missing,
     over a size limit, a bad rule or scaling file), or the output folder cannot be written;
  70 an internal error: a bug in valve-audit, never the line list's fault.
"""
from __future__ import annotations

import re
import tomllib
import traceback
from pathlib import Path
from typing import List, Optional

import typer

from audit import __version__

EXIT_OK, EXIT_REJECTED, EXIT_USAGE, EXIT_INPUT, EXIT_BUG = 0, 1, 2, 3, 70
FORMATS = ("csv", "html", "pdf", "xlsx", "json")
P_ATM_RANGE_KPA = (30.0, 110.0)  # from a high-altitude site to a deep one; outside is a typo
BUG_MESSAGE = ("valve-audit hit an internal error; this is a bug in the tool, not in your line list. "
               "Please report it with the line list (or the rows that trigger it) and this message:")

app = typer.Typer(add_completion=False, no_args_is_help=True, context_settings={"help_option_names": ["-h", "--help"]},
                  rich_markup_mode=None,
                  help="Screen a whole control-valve line list against IEC 60534 (sizing, choking, "
                       "cavitation, flashing, velocity, noise, travel). Screening only: results must be "
                       "confirmed by a competent engineer; local codes and licensed practice govern.")


class InputProblem(Exception):
    """The input (a file the user gave) cannot be used: exit 3 with the message."""


class UsageProblem(Exception):
    """An option's value does not fit the line list (an unknown case name): exit 2 with the message."""


def _load_toml(path: Path, what: str) -> dict:
    try:
        return tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputProblem(f"the {what} '{path}' does not exist")
    except IsADirectoryError:
        raise InputProblem(f"the {what} '{path}' is a folder, not a file")
    except (tomllib.TOMLDecodeError, UnicodeDecodeError, ValueError) as exc:
        raise InputProblem(f"the {what} '{path}' is not valid TOML: {str(exc)[:200]}")
    except OSError as exc:
        raise InputProblem(f"the {what} '{path}' cannot be read: {exc.strerror or exc}")


# Option checks run while the command line is parsed, so a wrong value is exit 2 with the option named.
def _formats(value: str) -> str:
    wanted = {f.strip().lower() for f in value.split(",") if f.strip()}
    unknown = wanted - set(FORMATS)
    if unknown:
        raise typer.BadParameter(f"unknown format(s) {', '.join(sorted(unknown))}; choose from {', '.join(FORMATS)}")
    return ",".join(sorted(wanted | {"csv"}))


def _positive(value: float) -> float:
    if not (value > 0) or value == float("inf"):
        raise typer.BadParameter(f"{value:g} is not a positive number")
    return value


def _p_atm(value: float) -> float:
    if not (P_ATM_RANGE_KPA[0] <= value <= P_ATM_RANGE_KPA[1]):
        raise typer.BadParameter(f"{value:g} kPa is not a site atmospheric pressure; expected "
                                 f"{P_ATM_RANGE_KPA[0]:g} to {P_ATM_RANGE_KPA[1]:g} kPa (sea level: 101.325)")
    return value


def _backend(value: str) -> str:
    if not re.fullmatch(r"HEOS|(BICUBIC|TTSE)&HEOS", value):
        raise typer.BadParameter(f"'{value}' is not a property backend; choose HEOS (full equation of state), "
                                 "BICUBIC&HEOS or TTSE&HEOS (tabular)")
    return value


def _hours(value: float) -> float:
    if not (0 < value <= 24 * 366):
        raise typer.BadParameter(f"{value:g} is not a number of hours between 0 and a year")
    return value


def _time_zone(value: str) -> str:
    import zoneinfo

    if value.upper() == "UTC":
        return "UTC"
    try:
        zoneinfo.ZoneInfo(value)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError):
        raise typer.BadParameter(f"'{value}' is not a time zone name; use an IANA name such as Europe/Oslo, or UTC")
    return value


def _at_least_one(value: int) -> int:
    if value < 1:
        raise typer.BadParameter(f"{value} must be 1 or more")
    return value


def _show_version(value: bool):
    if value:
        typer.echo(f"valve-audit {__version__}")
        raise typer.Exit(EXIT_OK)


@app.callback()
def _main(version: bool = typer.Option(False, "--version", callback=_show_version, is_eager=True,
                                       help="Print the version and exit.")):
    """Screen a whole control-valve line list against IEC 60534."""


@app.command()
def run(
    linelist: str = typer.Argument(..., help="Line list, CSV or XLSX (docs/input.md); '-' reads standard input."),
    out: Path = typer.Option(Path("reports"), "--out", help="Folder for the outputs (created if missing)."),
    sheet: Optional[str] = typer.Option(None, "--sheet", help="XLSX sheet to read (default: the first visible one)."),
    p_atm: float = typer.Option(101.325, "--p-atm", callback=_p_atm,
                                help="Site atmospheric pressure, in kPa, for gauge units (barg, kPag, psig); "
                                     "a p_atm column overrides it per row."),
    rules_file: Optional[Path] = typer.Option(None, "--rules", help="Site rule file (TOML) overriding "
                                                                     "thresholds; see 'valve-audit rules'."),
    formats: str = typer.Option("csv,html,pdf,xlsx", "--format", callback=_formats,
                                help="Comma-separated outputs among csv, html, pdf, xlsx, json. The CSV files "
                                     "are always written."),
    scale_flow: float = typer.Option(1.0, "--scale-flow", callback=_positive,
                                     help="What-if: multiply the flow of the chosen cases."),
    scale_cases: str = typer.Option("", "--scale-cases", help="Comma-separated cases --scale-flow applies to "
                                                              "(default: all)."),
    area_scale: Optional[Path] = typer.Option(None, "--area-scale", help="What-if: TOML table "
                                                                         "{area = multiplier} on top of --scale-flow."),
    trims: Optional[Path] = typer.Option(None, "--trims", help="CSV of available trims per body size; valves "
                                                               "with findings are re-screened against them."),
    backend: str = typer.Option("HEOS", "--backend", callback=_backend,
                                help="CoolProp backend for pure fluids: HEOS (full equation of state) or a "
                                     "tabular one, BICUBIC&HEOS or TTSE&HEOS."),
    max_rows: int = typer.Option(100_000, "--max-rows", callback=_at_least_one,
                                 help="Refuse a line list with more rows."),
    max_bytes: int = typer.Option(50_000_000, "--max-bytes", callback=_at_least_one,
                                  help="Refuse a line list file larger than this many bytes."),
    max_cell: int = typer.Option(1_000, "--max-cell", callback=_at_least_one, help="Reject a row with a longer cell."),
    previous: Optional[Path] = typer.Option(None, "--previous", help="Folder of an earlier audit: its worklist.xlsx "
                                            "planner entries (status, action, owner, work_order, due) are carried "
                                            "to the same valves."),
    history: Optional[List[Path]] = typer.Option(None, "--history", help="Historian export (CSV or Parquet, "
                                                 "docs/history.md); repeat for several files. Needs hist_* columns."),
    history_tz: str = typer.Option("UTC", "--history-tz", callback=_time_zone,
                                   help="Time zone of history time stamps written without an offset."),
    history_hold: float = typer.Option(2.0, "--history-hold", callback=_hours,
                                       help="Hours a signal's last value stays valid for a sample."),
    history_stuck: float = typer.Option(24.0, "--history-stuck", callback=_hours,
                                        help="Hours of one repeated value (while flow changes) that mark a signal "
                                             "as stuck."),
    quiet: bool = typer.Option(False, "--quiet", help="No progress or summary on the terminal (for schedulers)."),
):
    """Audit LINELIST and write results.csv, valves.csv, rejected.csv and the reports into --out.

    Exit status: 0 every row audited; 1 some rows rejected; 2 bad command line;
    3 input unreadable (file, size limit, rule or scaling file); 70 internal error (a bug).
    """
    early = None
    try:
        from audit.io.early import start_reading
        from audit.io.reader import Limits

        limits = Limits(max_bytes=max_bytes, max_rows=max_rows, max_cell_chars=max_cell)
        # Before the engine's imports: a child reads the line list while they load (audit.io.early).
        early = start_reading(linelist, sheet, p_atm * 1000.0, limits)
        from audit.history.study import HistorySettings

        hist = HistorySettings(tuple(history or ()), history_tz, history_hold, history_stuck)
        code = _run(linelist, out, sheet, p_atm, rules_file, formats, scale_flow, scale_cases, area_scale,
                    trims, backend, limits, quiet, hist, previous, early)
    except InputProblem as exc:
        typer.echo(f"valve-audit: {exc}", err=True)
        code = EXIT_INPUT
    except UsageProblem as exc:
        typer.echo(f"valve-audit: {exc}", err=True)
        code = EXIT_USAGE
    except KeyboardInterrupt:
        raise
    except Exception:
        typer.echo(BUG_MESSAGE, err=True)
        typer.echo(traceback.format_exc(limit=-3), err=True)
        code = EXIT_BUG
    finally:
        if early is not None:
            early.cancel()  # a no-op once the run has its result; else the child ends now
    raise typer.Exit(code)


def _run(linelist, out, sheet, p_atm, rules_file, formats, scale_flow, scale_cases, area_scale, trims, backend,
         limits, quiet, history=None, previous=None, early=None) -> int:
    from audit.engine import Options
    from audit.io.loader import InputError
    from audit.io.outputs import OutputError
    from audit.pipeline import OptionMismatch, run_files
    from rules import ThresholdError, effective_thresholds

    thresholds = _load_toml(rules_file, "rule file") if rules_file else {}
    try:
        effective_thresholds(thresholds)
    except ThresholdError as exc:
        raise InputProblem(f"rule file '{rules_file}': {exc}")
    areas = _load_toml(area_scale, "area scaling file") if area_scale else {}
    bad = [k for k, v in areas.items() if isinstance(v, bool) or not isinstance(v, (int, float)) or not v > 0
           or v == float("inf")]
    if bad:
        raise InputProblem(f"area scaling file: multipliers must be positive numbers (check {', '.join(bad[:5])})")
    options = Options(p_atm=p_atm * 1000.0, backend=backend, thresholds=thresholds, flow_scale=scale_flow,
                      scale_cases=tuple(c.strip().lower() for c in scale_cases.split(",") if c.strip()),
                      area_scale={str(k): float(v) for k, v in areas.items()})
    try:
        summary = run_files(linelist, out, options, limits, sheet=sheet, formats=set(formats.split(",")),
                            rules_file=rules_file, trims_file=trims, quiet=quiet, history=history,
                            previous=previous, early=early)
    except (InputError, OutputError) as exc:
        raise InputProblem(str(exc))
    except OptionMismatch as exc:
        raise (UsageProblem(str(exc)) if exc.usage else InputProblem(str(exc)))
    return EXIT_OK if summary.rejected == 0 else EXIT_REJECTED


@app.command("rules")
def rules_cmd(
    rules_file: Optional[Path] = typer.Option(None, "--rules", help="Site rule file (TOML) to apply."),
):
    """Print every rule, its thresholds, their source and the effective value after a site file."""
    from rules import ThresholdError, all_rules, effective_thresholds
    from rules.severity import ADJUSTMENTS, TABLE

    try:
        effective = effective_thresholds(_load_toml(rules_file, "rule file") if rules_file else {})
    except (ThresholdError, InputProblem) as exc:
        typer.echo(f"valve-audit: {exc}", err=True)
        raise typer.Exit(EXIT_INPUT)
    for rule in all_rules():
        typer.echo(f"[{rule.code}] {rule.title}: {rule.description}")
        if not rule.thresholds:
            typer.echo("    (no thresholds)")
        for t in rule.thresholds:
            value = effective[rule.code.lower()][t.name]
            mark = "" if value == t.default else "   <- site file"
            typer.echo(f"    {t.name} = {value:g} {t.unit}   (default {t.default:g}; source: {t.source}) "
                       f"{t.meaning}{mark}")
    typer.echo("A row's velocity_limit overrides the velocity limit for that valve, and its noise_limit the "
               "noise limit. Noise: IEC 60534-8-3 for gases and vapours, IEC 60534-8-4 for liquids.")
    typer.echo("")
    typer.echo("Severity table (docs/severity.md): finding, level, when, source")
    for g in TABLE:
        typer.echo(f"  {g.code:<22} {g.severity.label:<7} {g.when}   (source: {g.source})")
    typer.echo("Changed by the line list's service columns:")
    for codes, when, becomes in ADJUSTMENTS:
        typer.echo(f"  {codes}: {when} -> {becomes}")


@app.command()
def compare(
    old: Path = typer.Argument(..., help="Folder of the earlier audit's outputs."),
    new: Path = typer.Argument(..., help="Folder of the later audit's outputs."),
    out: Path = typer.Option(Path("reports/compare"), "--out", help="Folder for the comparison."),
):
    """Compare two audits' CSV outputs: new and cleared findings, worse and better choke ratios."""
    from audit.studies.compare import CompareError, compare_folders

    try:
        summary = compare_folders(old, new, out)
    except CompareError as exc:
        typer.echo(f"valve-audit: {exc}", err=True)
        raise typer.Exit(EXIT_INPUT)
    typer.echo(summary)


@app.command()
def version():
    """Print the tool version."""
    typer.echo(f"valve-audit {__version__}")


def main():  # console entry point
    app()


if __name__ == "__main__":
    main()
