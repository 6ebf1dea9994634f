"""Safe outputs: all-or-nothing writing, a killed run leaves the old outputs, identical reruns."""
import os
import signal
import subprocess
import sys
import time

from audit.engine import Options
from audit.pipeline import run_files
from conftest import ROOT, SAMPLE_CSV


def test_two_runs_give_byte_identical_csv(tmp_path):
    for name in ("a", "b"):
        run_files(SAMPLE_CSV, tmp_path / name, Options(), formats={"csv"}, quiet=True)
    for f in ("results.csv", "valves.csv", "rejected.csv"):
        assert (tmp_path / "a" / f).read_bytes() == (tmp_path / "b" / f).read_bytes(), f


def _big_linelist(path, copies=40):
    lines = SAMPLE_CSV.read_text(encoding="utf-8").splitlines()
    header, body = lines[0], lines[1:]
    out = [header]
    for k in range(copies):
        out += [line.replace(line.split(",")[0], f"{line.split(',')[0]}-{k}", 1) for line in body]
    path.write_text("\n".join(out) + "\n", encoding="utf-8")
    return path


def test_a_run_killed_midway_leaves_the_previous_outputs(tmp_path):
    out = tmp_path / "out"
    run_files(SAMPLE_CSV, out, Options(), formats={"csv", "html"}, quiet=True)
    before = {p.name: p.read_bytes() for p in out.iterdir() if p.is_file()}
    big = _big_linelist(tmp_path / "big.csv")
    proc = subprocess.Popen([sys.executable, "-m", "audit.cli", "run", str(big), "--out", str(out), "--quiet",
                             "--format", "csv,html,pdf"], cwd=ROOT, start_new_session=True)
    deadline = time.time() + 120
    while time.time() < deadline and not any(p.name.startswith(".valve-audit-") for p in out.iterdir()):
        time.sleep(0.05)
    time.sleep(1.0)              # well inside the run: the staged files are being written
    assert proc.poll() is None, "the run ended before it could be killed; make the input larger"
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait()
    after = {p.name: p.read_bytes() for p in out.iterdir() if p.is_file()}
    assert after == before
