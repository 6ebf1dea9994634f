"""worklist.xlsx: one row per valve with findings, ranked, for the maintenance planner."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from audit.io.outputs import neutralise


WORKLIST_COLUMNS = ["rank", "tag", "area", "service", "severity", "worst_case", "choke_ratio_max", "travel_max_pct",
                    "cv_required_max", "rated_cv", "finding_codes", "findings"]


def worklist_table(audit) -> pd.DataFrame:
    """One row per valve with findings, ranked, with what a planner sorts and filters on."""
    cases, valves = audit.cases, audit.valves
    per = cases.groupby("valve").agg(cv_required_max=("cv", "max"))
    out = valves.join(per, on="valve")
    out["rated_cv"] = audit.linelist.valves["rated_cv"].to_numpy()[out["valve"].to_numpy(int)]
    out = out[out["finding_codes"] != ""]
    return out[WORKLIST_COLUMNS]


def write_worklist(path: Path, audit) -> None:
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Font

    table = worklist_table(audit)
    book = Workbook()
    sheet = book.active
    sheet.title = "work list"
    sheet.append(WORKLIST_COLUMNS)
    for cell in sheet[1]:
        cell.font = Font(bold=True)
    for row in table.itertuples(index=False):
        values = []
        for v in row:
            if isinstance(v, float) and not np.isfinite(v):
                v = None
            values.append(neutralise(v) if isinstance(v, str) else v)
        sheet.append(values)
    for r in sheet.iter_rows(min_row=2):
        for cell in r:
            if isinstance(cell.value, str):
                cell.data_type = "s"  # text stays text, never a formula
        r[-1].alignment = Alignment(wrap_text=True, vertical="top")
    widths = [6, 14, 20, 34, 9, 10, 12, 12, 13, 10, 28, 90]
    for i, w in enumerate(widths):
        sheet.column_dimensions[chr(ord("A") + i)].width = w
    sheet.freeze_panes = "C2"
    sheet.auto_filter.ref = f"A1:{chr(ord('A') + len(WORKLIST_COLUMNS) - 1)}{max(len(table) + 1, 1)}"
    note = book.create_sheet("caution")
    note.append(["Screening only: every finding must be confirmed by a competent engineer before action. "
                 "Local codes, regulations and licensed practice govern."])
    book.save(path)
