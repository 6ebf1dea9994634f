"""worklist.xlsx: one row per valve with findings, ranked, for the maintenance planner to fill in.

The audit's columns come first; then the planner's own: ``status`` (a list:
open, planned, done, accepted), ``action``, ``owner``, ``work_order``, ``due``.
With ``--previous DIR`` the planner's entries of an earlier audit's work list
are carried to the same valve while one of its finding families is still
there; entries whose findings have all gone are kept at the end, marked, never
dropped (``carry_over``).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from audit.io.outputs import neutralise

AUDIT_COLUMNS = ["rank", "tag", "area", "service", "severity", "criticality", "worst_case", "choke_ratio_max",
                 "travel_max_pct", "capacity_margin", "cv_required_max", "rated_cv", "families", "finding_codes",
                 "findings"]
PLANNER_COLUMNS = ["status", "action", "owner", "work_order", "due"]
STATUS = ("open", "planned", "done", "accepted")
WORKLIST_COLUMNS = AUDIT_COLUMNS + PLANNER_COLUMNS + ["carried"]
SEVERITY_FILL = {"urgent": "5C0A0A", "plan": "B4541A", "watch": "E9CF6A", "note": "D6E0EA", "clear": "FFFFFF",
                 "gone": "DDDDDD"}  # the report's tones; the word and its marks carry the meaning without colour
SEVERITY_MARK = {"urgent": "!!!! urgent", "plan": "!!! plan", "watch": "!! watch", "note": "! note", "clear": "- clear",
                 "gone": "gone"}
NUMBER_FORMATS = {"choke_ratio_max": "0.00", "travel_max_pct": "0", "capacity_margin": "0.00",
                  "cv_required_max": "0.0", "rated_cv": "0.0", "due": "yyyy-mm-dd"}
WIDTHS = {"rank": 6, "tag": 13, "area": 18, "service": 30, "severity": 11, "criticality": 9, "worst_case": 9,
          "choke_ratio_max": 9, "travel_max_pct": 8, "capacity_margin": 9, "cv_required_max": 10, "rated_cv": 9,
          "families": 22, "finding_codes": 24, "findings": 70, "status": 10, "action": 30, "owner": 12,
          "work_order": 12, "due": 11, "carried": 34}


def worklist_table(audit) -> pd.DataFrame:
    """One row per valve with findings, ranked, with what a planner sorts and filters on."""
    from rules.severity import family_of

    cases, valves = audit.cases, audit.valves
    per = cases.groupby("valve").agg(cv_required_max=("cv", "max"))
    out = valves.join(per, on="valve")
    out["rated_cv"] = audit.linelist.valves["rated_cv"].to_numpy()[out["valve"].to_numpy(int)]
    out = out[out["finding_codes"] != ""].copy()
    out["families"] = [", ".join(sorted({family_of(c) for c in codes.split(";") if c}))
                       for codes in out["finding_codes"]]
    for col in PLANNER_COLUMNS + ["carried"]:
        out[col] = ""
    out["status"] = "open"
    return out[WORKLIST_COLUMNS].reset_index(drop=True)


@dataclass
class Carried:
    carried: int = 0          # valves whose planner entries moved to this work list
    gone: int = 0             # valves whose entries stay, marked, because their findings have gone
    source: str = ""
    problems: list = field(default_factory=list)


def read_previous(folder: Path) -> pd.DataFrame:
    """The planner columns of an earlier audit's worklist.xlsx (any row with an entry), by tag."""
    from openpyxl import load_workbook

    path = Path(folder) / "worklist.xlsx"
    book = load_workbook(path, read_only=True, data_only=True)
    try:
        sheet = book["work list"] if "work list" in book.sheetnames else book.worksheets[0]
        rows = list(sheet.iter_rows(values_only=True))
    finally:
        book.close()
    if not rows:
        return pd.DataFrame(columns=["tag"])
    header = [str(h).strip() if h is not None else "" for h in rows[0]]
    table = pd.DataFrame([list(r) + [None] * (len(header) - len(r)) for r in rows[1:]], columns=header)
    if "tag" not in table:
        return pd.DataFrame(columns=["tag"])
    for col in PLANNER_COLUMNS + ["families", "findings", "area", "service", "carried"]:
        if col not in table:
            table[col] = None
    entered = table[["action", "owner", "work_order", "due"]].notna().any(axis=1) | \
        ~table["status"].fillna("open").astype(str).str.strip().str.lower().isin(["", "open"])
    return table[entered & table["tag"].notna()].reset_index(drop=True)


def carry_over(current: pd.DataFrame, previous: pd.DataFrame, source: str) -> tuple[pd.DataFrame, Carried]:
    """The work list with the previous audit's planner entries placed on the same valves.

    An entry moves when the valve is on the new list with at least one finding family it had before;
    its `carried` column says so (and names families that have gone). An entry whose valve has none of
    its families left is appended at the end, severity 'gone', its entries and findings kept.
    """
    out = current.copy()
    note = Carried(source=source)
    row_of = {t: i for i, t in enumerate(out["tag"])}
    gone_rows = []
    for prev in previous.itertuples(index=False):
        tag = str(prev.tag)
        before = {f.strip() for f in str(prev.families or "").split(",") if f.strip()}
        i = row_of.get(tag)
        now = set(out.at[i, "families"].split(", ")) if i is not None else set()
        if i is not None and (before & now or not before):
            for col in PLANNER_COLUMNS:
                value = getattr(prev, col)
                if value is not None and str(value).strip() != "":
                    out.at[i, col] = value
            lost = sorted(before - now)
            out.at[i, "carried"] = "from the previous audit" + (f"; gone since: {', '.join(lost)}" if lost else "")
            note.carried += 1
        else:
            row = {c: "" for c in WORKLIST_COLUMNS}
            row.update(rank=None, tag=tag, area=prev.area or "", service=prev.service or "", severity="gone",
                       families=prev.families or "", findings=prev.findings or "",
                       carried="finding gone since the previous audit: " + (", ".join(sorted(before)) or "all"))
            for col in PLANNER_COLUMNS:
                row[col] = getattr(prev, col) if getattr(prev, col) is not None else ""
            for col in ("choke_ratio_max", "travel_max_pct", "capacity_margin", "cv_required_max", "rated_cv"):
                row[col] = np.nan
            gone_rows.append(row)
            note.gone += 1
    if gone_rows:
        out = pd.concat([out, pd.DataFrame(gone_rows, columns=WORKLIST_COLUMNS)], ignore_index=True)
    return out, note


def _cell(v):
    if isinstance(v, float) and not np.isfinite(v):
        return None
    if isinstance(v, (np.floating, np.integer)):
        return v.item() if np.isfinite(v) else None
    return neutralise(v) if isinstance(v, str) else v


def write_worklist(path: Path, audit, table: pd.DataFrame | None = None) -> None:
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Font, PatternFill
    from openpyxl.utils import get_column_letter
    from openpyxl.worksheet.datavalidation import DataValidation

    table = worklist_table(audit) if table is None else table
    book = Workbook()
    sheet = book.active
    sheet.title = "work list"
    sheet.append(WORKLIST_COLUMNS)
    for cell in sheet[1]:
        cell.font = Font(bold=True)
        cell.fill = PatternFill("solid", fgColor="E8E8E8")
        cell.alignment = Alignment(wrap_text=True, vertical="top")
    col = {name: i + 1 for i, name in enumerate(WORKLIST_COLUMNS)}
    for row in table.itertuples(index=False):
        sheet.append([_cell(v) for v in row])
    last = sheet.max_row
    for r in sheet.iter_rows(min_row=2):
        for cell in r:
            if isinstance(cell.value, str):
                cell.data_type = "s"  # text stays text, never a formula
            cell.alignment = Alignment(vertical="top", wrap_text=cell.column in (col["findings"], col["carried"],
                                                                                  col["action"], col["service"]))
        sev = r[col["severity"] - 1]
        level = str(sev.value or "")
        sev.value = SEVERITY_MARK.get(level, level)
        sev.fill = PatternFill("solid", fgColor=SEVERITY_FILL.get(level, "FFFFFF"))
        sev.font = Font(bold=True, color="FFFFFF" if level in ("urgent", "plan") else "111111")
    for name, fmt in NUMBER_FORMATS.items():
        for (cell,) in sheet.iter_rows(min_row=2, min_col=col[name], max_col=col[name]):
            cell.number_format = fmt
    for name, width in WIDTHS.items():
        sheet.column_dimensions[get_column_letter(col[name])].width = width
    status = DataValidation(type="list", formula1='"' + ",".join(STATUS) + '"', allow_blank=True,
                            showErrorMessage=True, errorTitle="status",
                            error="Choose open, planned, done or accepted.")
    letter = get_column_letter(col["status"])
    status.add(f"{letter}2:{letter}{max(last, 2) + 500}")  # room for rows the planner adds
    sheet.add_data_validation(status)
    due = DataValidation(type="date", operator="greaterThan", formula1="1", allow_blank=True,
                         showErrorMessage=True, error="A date, for example 2027-03-31.")
    letter = get_column_letter(col["due"])
    due.add(f"{letter}2:{letter}{max(last, 2) + 500}")
    sheet.add_data_validation(due)
    sheet.freeze_panes = "C2"
    sheet.auto_filter.ref = f"A1:{get_column_letter(len(WORKLIST_COLUMNS))}{max(last, 1)}"
    sheet.page_setup.orientation = "landscape"
    sheet.page_setup.paperSize = sheet.PAPERSIZE_A4
    sheet.page_setup.fitToWidth = 1
    sheet.page_setup.fitToHeight = 0
    sheet.sheet_properties.pageSetUpPr.fitToPage = True
    sheet.print_title_rows = "1:1"
    sheet.oddFooter.center.text = "valve-audit work list, page &P of &N: screening only"
    note = book.create_sheet("caution")
    note.append(["Screening only: every finding must be confirmed by a competent engineer before action. "
                 "Local codes, regulations and licensed practice govern."])
    note.append(["Planner columns: status (open, planned, done, accepted), action, owner, work_order, due. "
                 "The next audit run with --previous carries them to the same valves while a finding family "
                 "they were made for is still there, and marks those whose findings have gone."])
    book.save(path)
