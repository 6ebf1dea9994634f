"""The line list read in a child process while the parent imports CoolProp (audit.io.early).

The child's result, finished in the parent, must be the same tables ``load_linelist`` gives, and
every failure must leave the parent to read the file itself, so that errors appear unchanged.
The equivalence runs in fresh interpreters: in this one CoolProp is imported already, and the
early read declines (there is nothing left to overlap).
"""
import os
import subprocess
import sys
from pathlib import Path

import pytest

from audit.io import early
from audit.io.loader import load_linelist
from audit.io.reader import Limits
from audit.io.rows import Reasons

ROOT = Path(__file__).resolve().parents[1]

HOSTILE = """tag,fluid,valve_size,rated_cv,fl,xt,fd,flow_max [kg/h],p_in_max [barg],p_out_max [barg],t_in_max [degC]
A-1,Water,80 mm,60,0.9,0.72,0.46,40000,6.2,2.6,25
A-2,Watr,80 mm,60,0.9,0.72,0.46,40000,6.2,2.6,25
A-3,Watr,,60,0.9,0.72,0.46,40000,6.2,2.6,25
A-4,Methane[0.9]&Foo[0.1],,60,0.9,0.72,0.46,40000,6.2,2.6,25
A-5,Methane[0.9]&Ethane[0.1],80 mm,60,0.9,0.72,0.46,900,12.5,6.8,20
A-6,custom,80 mm,60,0.9,0.72,0.46,40000,6.2,2.6,25
A-7,,,60,0.9,0.72,0.46,40000,6.2,2.6,25
A-8,water,80 mm,60,0.9,0.72,0.46,40000,6.2,2.6,25
"""

# In a fresh interpreter: the child reads while this process imports CoolProp, as the command line
# does; then the same file is loaded the plain way and the two line lists are compared exactly.
SAME = r"""
import sys
from audit.io.early import start_reading
from audit.io.reader import Limits
path, sheet = sys.argv[1], (sys.argv[2] or None)
job = start_reading(path, sheet, 101325.0, Limits())
assert job is not None, "the early read declined"
import CoolProp.CoolProp  # the import the child's reading overlaps
import pandas as pd
from audit.io.loader import finish_linelist, load_linelist
read = job.collect(path, sheet, 101325.0, Limits())
assert read is not None, "the child gave no result"
a, b = finish_linelist(read), load_linelist(path, sheet, 101325.0, Limits())
assert list(a.valves["fluid_obj"]) == list(b.valves["fluid_obj"])
pd.testing.assert_frame_equal(a.valves.drop(columns="fluid_obj"), b.valves.drop(columns="fluid_obj"), check_exact=True)
pd.testing.assert_frame_equal(a.cases, b.cases, check_exact=True)
pd.testing.assert_frame_equal(a.rejected, b.rejected, check_exact=True)
assert (a.ignored_columns, a.rows_total, a.units, a.source) == (b.ignored_columns, b.rows_total, b.units, b.source)
print("same", len(a.valves), len(a.rejected))
"""


def _fresh(code: str, *args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True, cwd=ROOT,
                          timeout=300)


@pytest.mark.parametrize("name, sheet", [("sample_linelist/fenmoor_unit.csv", ""), ("tests/data/long.csv", ""),
                                         ("tests/data/numeric_cells.xlsx", ""), ("hostile", "")])
def test_start_reading_same_as_load_linelist(tmp_path, name, sheet):
    path = ROOT / name
    if name == "hostile":
        path = tmp_path / "hostile.csv"
        path.write_text(HOSTILE)
    run = _fresh(SAME, str(path), sheet)
    assert run.returncode == 0, run.stderr
    assert run.stdout.startswith("same")


def test_loader_imports_no_coolprop():
    # The overlap exists only because reading needs no CoolProp: a fresh interpreter proves it.
    run = _fresh("import sys, audit.io.loader, audit.io.early; print('CoolProp' in sys.modules)")
    assert run.returncode == 0, run.stderr
    assert run.stdout.strip() == "False"


def test_resolve_fluids_keeps_reason_order(tmp_path):
    # The fluid's reason is settled after the reading, but stays where its check stands: before the
    # valve's own checks, as the loader runs them (and as every run before the split wrote them).
    path = tmp_path / "hostile.csv"
    path.write_text(HOSTILE)
    ll = load_linelist(path)
    reason = dict(zip(ll.rejected["tag"], ll.rejected["reason"]))
    assert reason["A-2"].startswith("column 'fluid': unknown fluid 'Watr'")
    assert reason["A-3"].startswith("column 'fluid': unknown fluid 'Watr'")
    assert reason["A-3"].endswith("column 'valve_size' is blank; the valve size is needed")
    assert reason["A-4"].startswith("column 'fluid': unknown component 'Foo'")
    assert reason["A-7"].startswith("column 'fluid' is blank")
    assert set(ll.valves["tag"]) == {"A-1", "A-5", "A-8"}  # 'water' is CoolProp's Water in another case
    assert "A-6" in reason  # custom without its phase or overrides


def test_reasons_settle_keeps_places():
    reasons = Reasons(2)
    reasons.note(0, "first")
    reasons.note_later(0, "x")
    reasons.note(0, "second")
    reasons.note_later(0, "y")
    reasons.note_later(1, "x")
    reasons.note(0, "third")
    reasons.settle({"x": "from x", "y": "from y"})
    assert reasons.text[0] == ["first", "from x", "second", "from y", "third"]
    assert reasons.text[1] == ["from x"] and reasons.bad().tolist() == [True, True]
    quiet = Reasons(1)
    quiet.note_later(0, "x")
    quiet.settle({"x": ""})  # no reason: the row stays good
    assert quiet.text[0] == [] and not quiet.bad().any()


@pytest.fixture
def forking(monkeypatch):
    """Let the early read start in this process although CoolProp is imported here."""
    if not hasattr(os, "fork"):
        pytest.skip("no fork on this system: the early read never starts (tested by test_start_reading_declines)")
    monkeypatch.setattr(early, "_worth_it", lambda path: True)


def test_collect_other_arguments_gives_none(tmp_path, forking):
    path = tmp_path / "hostile.csv"
    path.write_text(HOSTILE)
    job = early.start_reading(path, None, 101325.0, Limits())
    assert job.collect(path, None, 90000.0, Limits()) is None  # another site pressure: read it again
    assert job.pid == 0  # the child was waited for


def test_collect_after_child_failure_gives_none(tmp_path, forking):
    path = tmp_path / "twice.csv"
    path.write_text("tag,tag,fluid\nA,B,Water\n")  # the loader refuses the file as a whole
    job = early.start_reading(path, None, 101325.0, Limits())
    assert job.collect(path, None, 101325.0, Limits()) is None


def test_cancel_ends_the_child(tmp_path, forking):
    path = tmp_path / "hostile.csv"
    path.write_text(HOSTILE)
    job = early.start_reading(path, None, 101325.0, Limits())
    pid = job.pid
    job.cancel()
    with pytest.raises(ChildProcessError):
        os.waitpid(pid, 0)  # reaped: no process left behind


def test_start_reading_declines(tmp_path, monkeypatch):
    path = tmp_path / "hostile.csv"
    path.write_text(HOSTILE)
    assert early.start_reading(path) is None  # CoolProp is imported in this process: nothing to overlap
    assert early.start_reading("-") is None
    monkeypatch.delitem(sys.modules, "CoolProp")
    assert early.start_reading(tmp_path / "missing.csv") is None
    if hasattr(os, "mkfifo"):
        os.mkfifo(tmp_path / "pipe.csv")
        assert early.start_reading(tmp_path / "pipe.csv") is None  # reads once: the parent must read it
    job = early.start_reading(path)  # the plain file is read early
    assert job is not None or not hasattr(os, "fork")
    if job is not None:
        job.cancel()
    monkeypatch.setattr(early, "EARLY_MAX_BYTES_CSV", 10)
    assert early.start_reading(path) is None  # larger than the limit: read in the process itself


def test_cli_error_same_with_early_read(tmp_path):
    # A file the loader refuses: the child fails, the parent reads it and reports it as always (exit 3).
    path = tmp_path / "twice.csv"
    path.write_text("tag,tag,fluid\nA,B,Water\n")
    run = subprocess.run([sys.executable, "-m", "audit.cli", "run", str(path), "--out", str(tmp_path / "out"),
                          "--quiet"], capture_output=True, text=True, cwd=ROOT, timeout=300)
    assert run.returncode == 3, run.stderr
    assert "column 'tag' appears twice in the header" in run.stderr


# In a fresh interpreter (stderr is the child's too): a reading that warns, in a child that succeeds
# or fails after the warning; the parent reads the file itself after a failure, as run_audit does.
WARNS = r"""
import os, sys, warnings
import audit.io.loader as loader
from audit.io.early import start_reading
from audit.io.reader import Limits
path, mode, parent = sys.argv[1], sys.argv[2], os.getpid()
real = loader.read_linelist
def noisy(*a, **k):
    warnings.warn("a workbook feature was dropped", UserWarning)
    if mode == "fail" and os.getpid() != parent:
        raise RuntimeError("the child fails after the warning")
    return real(*a, **k)
loader.read_linelist = noisy
job = start_reading(path, None, 101325.0, Limits())
assert job is not None, "the early read declined"
read = job.collect(path, None, 101325.0, Limits())
print("child" if read is not None else "parent")
if read is None:
    loader.load_linelist(path, None, 101325.0, Limits())
"""


@pytest.mark.parametrize("mode,reader", [("ok", "child"), ("fail", "parent")])
def test_reading_warning_shown_once(tmp_path, mode, reader):
    # The child keeps its warnings and the parent shows them when it uses the child's tables; a
    # child that fails shows none, so the parent's own reading shows it once (twice before).
    path = tmp_path / "hostile.csv"
    path.write_text(HOSTILE)
    run = _fresh(WARNS, str(path), mode)
    assert run.returncode == 0, run.stderr
    assert run.stdout.strip() == reader
    assert run.stderr.count("a workbook feature was dropped") == 1, run.stderr
