"""worklist.xlsx as a planner uses it: formats, print setup, the status list, and --previous carry-over.

Sources: the planner columns and their carry-over rules are this project's contract (docs/outputs.md,
"worklist.xlsx"); the spreadsheet features are checked through openpyxl's reading of the file (ECMA-376
SpreadsheetML: data validation, page setup, print titles).
"""
import csv
import pathlib

import pytest
from openpyxl import load_workbook
from typer.testing import CliRunner

from audit.cli import app

ROOT = pathlib.Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_linelist" / "fenmoor_unit.csv"


def run(linelist, out, *extra):
    result = CliRunner().invoke(app, ["run", str(linelist), "--out", str(out), "--format", "csv,xlsx,html",
                                      "--quiet", *extra])
    return result


def sheet_rows(path):
    sheet = load_workbook(path)["work list"]
    header = [c.value for c in sheet[1]]
    return sheet, header, [dict(zip(header, (c.value for c in r))) for r in sheet.iter_rows(min_row=2)]


@pytest.fixture(scope="module")
def first(tmp_path_factory):
    out = tmp_path_factory.mktemp("wl") / "first"
    assert run(SAMPLE, out).exit_code in (0, 1)
    return out


def test_worklist_has_planner_columns_formats_and_print_setup(first):
    sheet, header, rows = sheet_rows(first / "worklist.xlsx")
    assert header[-6:] == ["status", "action", "owner", "work_order", "due", "carried"]
    assert {r["status"] for r in rows} == {"open"} and not any(r["action"] or r["owner"] for r in rows)
    col = {h: i + 1 for i, h in enumerate(header)}
    top = sheet.cell(2, col["severity"])
    assert top.value == "!!!! urgent" and top.fill.fgColor.rgb.endswith("5C0A0A")   # mark and tone both
    assert sheet.cell(2, col["choke_ratio_max"]).number_format == "0.00"
    assert sheet.cell(2, col["travel_max_pct"]).number_format == "0"
    assert sheet.page_setup.orientation == "landscape" and sheet.page_setup.fitToWidth == 1
    assert sheet.sheet_properties.pageSetUpPr.fitToPage and sheet.print_title_rows == "$1:$1"
    lists = [v for v in sheet.data_validations.dataValidation if v.type == "list"]
    assert lists and lists[0].formula1 == '"open,planned,done,accepted"'
    letter = sheet.cell(1, col["status"]).column_letter
    assert f"{letter}2" in str(lists[0].sqref)


def test_previous_round_trip_carries_entries_by_tag_and_marks_what_went(first, tmp_path):
    # A planner fills in three rows of the first work list ...
    path = first / "worklist.xlsx"
    book = load_workbook(path)
    sheet = book["work list"]
    header = [c.value for c in sheet[1]]
    col = {h: i + 1 for i, h in enumerate(header)}
    tags = [sheet.cell(r, col["tag"]).value for r in range(2, sheet.max_row + 1)]
    kept_a, kept_b, removed = tags[0], tags[5], tags[9]
    entries = {kept_a: ("planned", "replace trim with a larger Cv", "A. Planner", "WO-1001"),
               kept_b: ("accepted", "", "B. Engineer", ""),
               removed: ("done", "resized", "C. Fitter", "WO-1003")}
    for r in range(2, sheet.max_row + 1):
        tag = sheet.cell(r, col["tag"]).value
        if tag in entries:
            for name, value in zip(("status", "action", "owner", "work_order"), entries[tag]):
                sheet.cell(r, col[name]).value = value or None
    book.save(path)
    # ... and the line list changes: one valve leaves it, another's rows move (the order is new).
    with open(SAMPLE, newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    kept = [rows[0]] + [r for r in rows[1:] if r[0] != removed][::-1]
    changed = tmp_path / "changed.csv"
    with open(changed, "w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows(kept)
    out = tmp_path / "second"
    assert run(changed, out, "--previous", str(first)).exit_code in (0, 1)
    _, _, new_rows = sheet_rows(out / "worklist.xlsx")
    by_tag = {}
    for r in new_rows:
        by_tag.setdefault(r["tag"], []).append(r)
    a, b = by_tag[kept_a][0], by_tag[kept_b][0]
    assert (a["status"], a["action"], a["owner"], a["work_order"]) == entries[kept_a]
    assert (b["status"], b["owner"]) == ("accepted", "B. Engineer") and b["carried"].startswith("from the previous")
    gone = by_tag[removed]
    assert len(gone) == 1 and gone[0]["severity"] == "gone" and gone[0]["carried"].startswith("finding gone")
    assert (gone[0]["status"], gone[0]["action"], gone[0]["owner"]) == ("done", "resized", "C. Fitter")
    assert new_rows[-1]["tag"] == removed                        # kept at the end, not dropped
    untouched = [r for r in new_rows if r["tag"] not in entries]
    assert all(r["status"] == "open" and not r["carried"] for r in untouched)
    html = (out / "report.html").read_text(encoding="utf-8")
    text = " ".join(html.split())
    assert "planner entries of 2 valves" in text and "; 1 kept at the end of the work list and marked" in text


def test_previous_without_a_worklist_is_an_input_error(tmp_path):
    result = run(SAMPLE, tmp_path / "out", "--previous", str(tmp_path))
    assert result.exit_code == 3 and "no worklist.xlsx" in result.output
