"""One complete audit in the output folder at every instant (docs/outputs.md).

A run is killed (SIGKILL, through the VALVE_AUDIT_KILL_AT fault point) at each step of publishing; the
folder must then hold one complete, self-consistent audit, the old one or the new one, and the next run
must leave no staging folder behind.  Self-consistent: every CSV and audit_info.json of the folder come
from the same run (the same line list's digest and tags).
"""
import csv
import hashlib
import json
import os
import subprocess
import sys

import pytest

from conftest import ROOT

OLD = ROOT / "tests" / "data" / "plain.csv"
NEW = ROOT / "tests" / "data" / "nominal_sizes.csv"   # another line list: other bytes, other tags' sizes


def _run(src, out, kill_at=None, formats="csv,json"):
    env = dict(os.environ, VALVE_AUDIT_KILL_AT=kill_at or "")
    return subprocess.run([sys.executable, "-m", "audit.cli", "run", str(src), "--out", str(out), "--quiet",
                           "--format", formats], cwd=ROOT, env=env, capture_output=True, text=True)


def _published(out):
    info = json.loads((out / "audit_info.json").read_text(encoding="utf-8"))
    tags = {name: sorted({r["tag"] for r in csv.DictReader(open(out / name, encoding="utf-8"))})
            for name in ("valves.csv", "results.csv")}
    return info["input_sha256"], tags


@pytest.mark.parametrize("step", ["renamed", "pruned", "switched", "linked"])
def test_kill_at_each_publishing_step_leaves_one_complete_audit(tmp_path, step):
    out = tmp_path / "out"
    assert _run(OLD, out, formats="csv").returncode == 0
    old = _published(out)
    killed = _run(NEW, out, kill_at=step, formats="csv,json")  # json: a name new to the folder, to be linked
    assert killed.returncode == -9, killed.stderr
    digest, tags = _published(out)
    assert tags["valves.csv"] == tags["results.csv"]
    assert digest in (old[0], hashlib.sha256(NEW.read_bytes()).hexdigest())
    # What a reader sees is whole: every published name that exists opens.
    for link in out.iterdir():
        if not link.name.startswith("."):
            assert link.exists(), link.name
    assert _run(NEW, out).returncode == 0
    assert _published(out)[0] == hashlib.sha256(NEW.read_bytes()).hexdigest()
    leftovers = [p.name for p in out.iterdir() if p.name.startswith(".valve-audit-")
                 and p.name not in (".valve-audit-runs", ".valve-audit-current")]
    assert leftovers == [] and len(list((out / ".valve-audit-runs").iterdir())) == 1


def test_kill_before_publishing_leaves_the_old_audit(tmp_path):
    out = tmp_path / "out"
    assert _run(OLD, out).returncode == 0
    old = _published(out)
    assert _run(NEW, out, kill_at="renamed").returncode == -9
    # Killed after the stage became a run folder but before the switch: still the old audit.
    assert _published(out) == old


def test_a_format_not_written_again_is_removed_from_the_published_set(tmp_path):
    out = tmp_path / "out"
    assert _run(OLD, out, formats="csv,json").returncode == 0
    assert (out / "audit.json").exists()
    assert _run(OLD, out, formats="csv").returncode == 0
    assert not (out / "audit.json").exists() and not (out / "audit.json").is_symlink()
