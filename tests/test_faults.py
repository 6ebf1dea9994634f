"""Hostile files and faults: one bad row never costs another, no input ends as 'a bug in the tool' (exit 70).

Each test builds the file it uses and names the break it checks.  The CSV-injection checks follow the
OWASP rule (a text cell starting with =, +, -, @, tab or CR is prefixed with an apostrophe).
"""
import csv
import json
import os
import subprocess
import sys

import pytest
from openpyxl import Workbook
from typer.testing import CliRunner

from audit.cli import app
from audit.engine import compute
from audit.io.loader import load_linelist
from audit.io.outputs import STAGE_PREFIX

HEADER = "tag,fluid,valve_size,rated_cv,fl,fd,xt,flow_max,p_in_max,p_out_max,t_in_max"
GOOD = "Water,50,40,0.9,0.46,0.7,10,10,2,20"
runner = CliRunner()


def _file(tmp_path, rows, header=HEADER, name="l.csv"):
    f = tmp_path / name
    with open(f, "w", newline="", encoding="utf-8") as fh:
        fh.write(header + "\n" + "\n".join(rows) + "\n")
    return f


def _run(tmp_path, f, formats="csv"):
    out = tmp_path / "out"
    r = runner.invoke(app, ["run", str(f), "--out", str(out), "--format", formats, "--quiet"])
    assert r.exit_code in (0, 1), r.output
    assert "Traceback" not in r.output
    return out, {row["tag"]: row["reason"] for row in csv.DictReader(open(out / "rejected.csv", encoding="utf-8"))}


def test_mixture_of_a_fluid_with_itself_rejects_its_row_only(tmp_path):
    f = _file(tmp_path, ["MIX-1,Water[0.5]&Water[0.5],50,40,0.9,0.46,0.7,10,10,2,20", f"OK-1,{GOOD}"])
    out, rejected = _run(tmp_path, f)
    assert "appears twice" in rejected["MIX-1"] and "OK-1" not in rejected


@pytest.mark.parametrize("value", ["1e-320", "1e300"])
def test_absurd_magnitude_is_refused_by_name(tmp_path, value):
    f = _file(tmp_path, [f"CV-1,Water,50,{value},0.9,0.46,0.7,10,10,2,20", f"OK-1,{GOOD}"])
    out, rejected = _run(tmp_path, f, formats="csv,html")
    assert "rated_cv" in rejected["CV-1"] and "plausible range" in rejected["CV-1"]


@pytest.mark.parametrize("char", ["\x07", "\x1b", "\x01", "\x00", "\u200b"])
def test_control_characters_are_removed_not_fatal(tmp_path, char):
    f = _file(tmp_path, [f"C-1{char},Water{char},50{char},40,0.9,0.46,0.7,10,10,2,20"])
    out, rejected = _run(tmp_path, f, formats="csv,html")
    valves = list(csv.DictReader(open(out / "valves.csv", encoding="utf-8")))
    assert [v["tag"] for v in valves] == ["C-1"] and not rejected


def test_tag_that_looks_like_plot_math_is_drawn_literally(tmp_path):
    f = _file(tmp_path, ['"HM-FV-$\\foo{x}$",Water,50,5,0.9,0.46,0.7,30,10,2,20'])
    out, _ = _run(tmp_path, f, formats="csv,html")
    assert "HM-FV-$\\foo{x}$" in (out / "report.html").read_text(encoding="utf-8")


def test_row_with_text_only_in_an_unread_column_is_reported(tmp_path):
    f = _file(tmp_path, [f"OK-1,{GOOD},", ",,,,,,,,,,,a remark"], header=HEADER + ",remarks")
    out, rejected = _run(tmp_path, f)
    rows = list(csv.DictReader(open(out / "rejected.csv", encoding="utf-8")))
    assert [r["row"] for r in rows] == ["3"] and "does not read" in rows[0]["reason"]


@pytest.mark.parametrize("tag", ["+1+cmd|' /C calc'!A0", "-2+3+cmd", "-1+1", "@SUM(1)", "=1+1"])
def test_formula_like_text_is_neutralised_in_every_csv(tmp_path, tag):
    f = _file(tmp_path, [f'"{tag}",{GOOD}', f'"{tag}x",Watter,50,40,0.9,0.46,0.7,10,10,2,20'])
    out, _ = _run(tmp_path, f)
    for name in ("valves.csv", "results.csv", "rejected.csv"):
        for row in csv.reader(open(out / name, encoding="utf-8")):
            for cell in row:
                assert not cell or cell[0] not in "=+-@\t\r" or _is_number(cell), (name, cell)


def _is_number(cell):
    try:
        float(cell)
        return True
    except ValueError:
        return False


def test_carriage_return_in_a_tag_makes_no_extra_row(tmp_path):
    f = _file(tmp_path, ['"CR-1\r=1+1",' + GOOD])
    out, _ = _run(tmp_path, f)
    lines = (out / "valves.csv").read_text(encoding="utf-8").splitlines()
    assert len(lines) == 2 and not any(line.startswith("=") for line in lines)


def test_zero_width_space_does_not_make_a_tag_unique(tmp_path):
    f = _file(tmp_path, [f"T-1,{GOOD}", f"T-\u200b1,{GOOD}"])
    out, rejected = _run(tmp_path, f)
    assert len(rejected) == 1 and "more than once" in rejected["T-1"]


def test_long_cell_rejects_its_row_not_the_file(tmp_path):
    f = _file(tmp_path, [f"OK-1,{GOOD}", "LONG-1,Water,50,40,0.9,0.46,0.7,10,10,2," + "9" * 200_000])
    out, rejected = _run(tmp_path, f)
    assert "LONG-1" in rejected and "characters" in rejected["LONG-1"]


def test_boolean_cell_is_not_a_number(tmp_path):
    book = Workbook()
    sheet = book.active
    sheet.append(HEADER.split(","))
    sheet.append(["B-1", "Water", 50, 40, True, 0.46, 0.7, 10, 10, 2, 20])
    book.save(tmp_path / "b.xlsx")
    ll = load_linelist(tmp_path / "b.xlsx")
    assert "'TRUE' is not a number" in ll.rejected["reason"].iloc[0]


def test_hidden_first_sheet_is_skipped_and_the_sheet_read_is_named(tmp_path):
    book = Workbook()
    hidden = book.active
    hidden.title = "old"
    hidden.append(HEADER.split(","))
    hidden.append(["OLD-1", "Water", 50, 40, 0.9, 0.46, 0.7, 10, 10, 2, 20])
    hidden.sheet_state = "hidden"
    current = book.create_sheet("current")
    current.append(HEADER.split(","))
    current.append(["NEW-1", "Water", 50, 40, 0.9, 0.46, 0.7, 10, 10, 2, 20])
    book.save(tmp_path / "h.xlsx")
    out, _ = _run(tmp_path, tmp_path / "h.xlsx")
    info = json.loads((out / "audit_info.json").read_text())
    assert info["input_sheet"] == "current"
    assert [v["tag"] for v in csv.DictReader(open(out / "valves.csv"))] == ["NEW-1"]


def test_duplicated_header_is_refused_in_csv_as_in_xlsx(tmp_path):
    f = _file(tmp_path, [f"D-1,{GOOD},0.9"], header=HEADER + ",fl")
    r = runner.invoke(app, ["run", str(f), "--out", str(tmp_path / "o"), "--format", "csv"])
    assert r.exit_code == 3 and "appears twice" in r.output


def test_xlsx_declaring_a_huge_sheet_is_refused_before_parsing(tmp_path):
    import re
    import zipfile
    book = Workbook()
    book.active.append(HEADER.split(","))
    book.save(tmp_path / "small.xlsx")
    with zipfile.ZipFile(tmp_path / "small.xlsx") as zin, zipfile.ZipFile(tmp_path / "huge.xlsx", "w") as zout:
        for item in zin.infolist():
            data = zin.read(item.filename)
            if item.filename.startswith("xl/worksheets/"):
                data = re.sub(rb'<dimension ref="[^"]*"', b'<dimension ref="A1:XFD1048576"', data)
            zout.writestr(item, data)
    r = runner.invoke(app, ["run", str(tmp_path / "huge.xlsx"), "--out", str(tmp_path / "o"), "--format", "csv"])
    assert r.exit_code == 3 and "declares a sheet" in r.output


def test_too_many_cases_per_valve_is_refused(tmp_path):
    header = "tag,fluid,valve_size,rated_cv,fl,fd,xt," + ",".join(f"flow_c{i}" for i in range(60))
    f = _file(tmp_path, ["M-1,Water,50,40,0.9,0.46,0.7," + ",".join("10" for _ in range(60))], header=header)
    r = runner.invoke(app, ["run", str(f), "--out", str(tmp_path / "o"), "--format", "csv"])
    assert r.exit_code == 3 and "cases per valve" in r.output


def test_audit_json_holds_null_for_non_finite_numbers(tmp_path):
    f = _file(tmp_path, [f"OK-1,{GOOD}"])
    out, _ = _run(tmp_path, f, formats="csv,json")

    def refuse(name):
        raise AssertionError(f"{name} in audit.json")
    json.loads((out / "audit.json").read_text(encoding="utf-8"), parse_constant=refuse)


def test_stale_staging_folder_of_a_killed_run_is_removed(tmp_path):
    # A stage named after a process that no longer exists (the child below has exited) is removed by the next
    # run; a stage of a live process (this one) is left for it.
    child = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    out = tmp_path / "out"
    dead = out / f"{STAGE_PREFIX}{child.stdout.strip()}-abc"
    live = out / f"{STAGE_PREFIX}{os.getpid()}-xyz"
    dead.mkdir(parents=True)
    live.mkdir()
    (dead / "results.csv").write_text("half written")
    _run(tmp_path, _file(tmp_path, [f"OK-1,{GOOD}"]))
    assert not dead.exists() and live.exists()


def test_worker_processes_are_asked_to_die_with_their_parent():
    # prctl(PR_SET_PDEATHSIG) in the worker initializer: checked in a forked child, which reads it back.
    if not sys.platform.startswith("linux"):
        pytest.skip("PR_SET_PDEATHSIG is Linux's")
    code = ("import ctypes, signal; from audit.workers import die_with_parent; die_with_parent(); "
            "libc = ctypes.CDLL('libc.so.6'); sig = ctypes.c_int(); libc.prctl(2, ctypes.byref(sig)); "
            "print(sig.value == int(signal.SIGKILL))")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert r.stdout.strip() == "True", r.stderr


def test_formula_without_a_stored_value_rejects_its_row_by_name(tmp_path):
    # openpyxl writes formulas without results, as a program-written workbook can: the cell is unknown,
    # not blank, so the valve must not silently lose its noise limit.
    book = Workbook()
    sheet = book.active
    sheet.append(HEADER.split(",") + ["noise_limit"])
    sheet.append(["F-1", "Water", 50, 40, 0.9, 0.46, 0.7, 10, 10, 2, 20, None])
    sheet.append(["F-2", "Water", 50, 40, 0.9, 0.46, 0.7, 10, 10, 2, 20, 85])
    sheet["L2"] = "=80+5"
    book.save(tmp_path / "f.xlsx")
    ll = load_linelist(tmp_path / "f.xlsx")
    assert list(ll.valves["tag"]) == ["F-2"]
    assert "noise_limit" in ll.rejected["reason"].iloc[0] and "no stored value" in ll.rejected["reason"].iloc[0]


def test_workbook_unpacking_over_the_limit_is_refused_before_parsing(tmp_path):
    # The zip directory's uncompressed sizes are summed before anything is unpacked (a megabyte can hold a
    # gigabyte-long string); here the limit is lowered instead of building such a file.
    from audit.io.loader import InputError, Limits
    book = Workbook()
    book.active.append(HEADER.split(","))
    book.save(tmp_path / "w.xlsx")
    with pytest.raises(InputError, match="unpacks to"):
        load_linelist(tmp_path / "w.xlsx", limits=Limits(max_unpacked_bytes=1000))


def test_line_list_deleted_after_reading_does_not_lose_the_audit(tmp_path):
    # The file is read once, and hashed from the bytes that were audited: nothing reads it again.
    import hashlib
    from audit.engine import Options
    from audit.pipeline import run_audit, run_metadata
    f = _file(tmp_path, [f"OK-1,{GOOD}"])
    digest = hashlib.sha256(f.read_bytes()).hexdigest()
    audit = run_audit(f, Options())
    f.unlink()
    assert run_metadata(audit.linelist, Options(), None, None)["input_sha256"] == digest


def test_full_disk_while_writing_is_an_input_error_and_keeps_the_previous_audit(tmp_path, monkeypatch):
    # ENOSPC in the middle of writing: exit 3 with a plain message, and the folder still holds the previous audit.
    import errno
    import audit.pipeline as pipeline
    f = _file(tmp_path, [f"OK-1,{GOOD}"])
    out, _ = _run(tmp_path, f)
    before = (out / "valves.csv").read_bytes()

    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device")
    monkeypatch.setattr(pipeline, "write_csvs", full)
    r = runner.invoke(app, ["run", str(f), "--out", str(out), "--format", "csv", "--quiet"])
    assert r.exit_code == 3 and "No space left on device" in r.output and "unchanged" in r.output
    assert (out / "valves.csv").read_bytes() == before
