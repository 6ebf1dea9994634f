"""Random line lists over every documented column, valid and invalid values and units, and the check
that no row is lost, nothing ends as a bug (exit 70), and every output is safe to open.

    python benchmarks/fuzz_linelist.py [--rows 10000] [--seed 17]

writes a line list of that many rows, audits it through the command line, and prints what it found.
tests/test_fuzz_columns.py runs the same check on a few hundred rows in CI.
"""
from __future__ import annotations

import argparse
import csv
import json
import random
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

CASES = ("min", "max")
VALID = {
    "tag": lambda r: f"FZ-{r.randrange(10**6):06d}",
    "area": lambda r: r.choice(["", "100 Utilities", "200 Gas"]),
    "service": lambda r: r.choice(["", "Letdown", "=HYPERLINK(\"x\")", "+cmd", "-1+1", "@x", "line\nbreak"]),
    "fluid": lambda r: r.choice(["Water", "Methane", "Propane", "Nitrogen", "Methane[0.9]&Ethane[0.1]", "custom"]),
    "phase": lambda r: r.choice(["", "", "liquid", "gas", "steam"]),
    "density": lambda r: r.choice(["", "", "950", "1.1 g/cm3"]),
    "vapour_pressure": lambda r: r.choice(["", "", "3", "0.2 bar"]),
    "critical_pressure": lambda r: r.choice(["", "", "22000"]),
    "viscosity": lambda r: r.choice(["", "", "1.2", "0.01"]),
    "molar_mass": lambda r: r.choice(["", "", "18", "28"]),
    "k": lambda r: r.choice(["", "", "1.3"]),
    "z": lambda r: r.choice(["", "", "0.95"]),
    "sound_speed": lambda r: r.choice(["", "1400"]),
    "p_atm": lambda r: r.choice(["", "", "98"]),
    "valve_size": lambda r: r.choice(["50", "80 mm", "DN100", "NPS 3", "2\"", "1-1/2 in"]),
    "rated_cv": lambda r: r.choice([f"{r.uniform(1, 400):.3g}", ""]),
    "rated_kv": lambda r: r.choice(["", f"{r.uniform(1, 300):.3g}"]),
    "characteristic": lambda r: r.choice(["", "linear", "equal %", "quick_opening"]),
    "rangeability": lambda r: r.choice(["", "30", "50"]),
    "fl": lambda r: f"{r.uniform(0.6, 0.95):.2f}",
    "xt": lambda r: f"{r.uniform(0.3, 0.8):.2f}",
    "fd": lambda r: f"{r.uniform(0.2, 1.0):.2f}",
    "valve_style": lambda r: r.choice(["", "globe_cage_drilled"]),
    "xfz": lambda r: r.choice(["", "0.3"]),
    "noise_an": lambda r: r.choice(["", "-4"]),
    "noise_stp": lambda r: r.choice(["", "0.25"]),
    "pipe_in_id": lambda r: r.choice(["", "", "102"]),
    "pipe_out_id": lambda r: r.choice(["", "", "154"]),
    "pipe_in_size": lambda r: r.choice(["", "4"]),
    "pipe_in_schedule": lambda r: r.choice(["40", "STD"]),
    "pipe_out_size": lambda r: r.choice(["", "6"]),
    "pipe_out_schedule": lambda r: r.choice(["40", "80S", "40.0"]),
    "pipe_out_wall": lambda r: r.choice(["", "7 mm"]),
    "noise_limit": lambda r: r.choice(["", "85"]),
    "velocity_limit": lambda r: r.choice(["", "12"]),
    "intent": lambda r: r.choice(["", "", "flashing", "choked"]),
    "duty": lambda r: r.choice(["", "continuous", "startup", "emergency", "intermittent"]),
    "criticality": lambda r: r.choice(["", "high", "low"]),
    "dissolved_gas": lambda r: r.choice(["", "", "yes"]),
    # signal names are only text without --history: any text is accepted and kept
    "hist_flow": lambda r: r.choice(["", "FI-101.PV", "FI-101.PV [t/h]"]),
    "hist_p_in": lambda r: r.choice(["", "PI-101A"]),
    "hist_p_out": lambda r: r.choice(["", "PI-101B [barg]"]),
    "hist_t_in": lambda r: r.choice(["", "TI-101"]),
    "hist_travel": lambda r: r.choice(["", "ZI-101 [%]"]),
    "flow": lambda r: r.choice([f"{r.uniform(1, 100):.3g}", f"{r.uniform(100, 9000):.4g} kg/h", "800 Nm3/h", "20 gpm"]),
    "p_in": lambda r: r.choice([f"{r.uniform(3, 60):.3g}", f"{r.uniform(2, 40):.3g} barg"]),
    "p_out": lambda r: r.choice(["1.5", "0.4 barg", "2"]),
    "t_in": lambda r: r.choice([f"{r.uniform(10, 300):.3g}", "sat", "350 K"]),
    "quality_in": lambda r: r.choice(["", "", "", "0", "1", "0.95"]),
    "travel": lambda r: r.choice(["", "45"]),
}
INVALID = ["", "-1", "0", "abc", "1e400", "1e-320", "12 furlongs", "1,500", "TRUE", "=1+1", "+1+cmd|' /C calc'!A0",
           "\x07", "\x00x", "NaN", "inf", "1.2.3", "99999999999999999999", "$\\foo{x}$", "\u200b", "-", "3 in in"]
CASE_FIELDS = ("flow", "p_in", "p_out", "t_in", "quality_in", "travel")


def header() -> list[str]:
    plain = [c for c in VALID if c not in CASE_FIELDS]
    return plain + [f"{f}_{c}" for c in CASES for f in CASE_FIELDS]


def make_row(r: random.Random) -> list[str]:
    cols = header()
    row = []
    for col in cols:
        key = col.rsplit("_", 1)[0] if col.rsplit("_", 1)[-1] in CASES else col
        row.append(VALID[key](r))
    for _ in range(r.choice([0, 0, 1, 2, 3])):  # zero to three defects
        row[r.randrange(len(row))] = r.choice(INVALID)
    if r.random() < 0.02:
        row = [""] * len(row)                   # a blank row: skipped silently
    return row


def write(path: Path, rows: int, seed: int) -> int:
    r = random.Random(seed)
    non_blank = 0
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header())
        for _ in range(rows):
            row = make_row(r)
            non_blank += any(c.strip() for c in row)
            w.writerow(row)
    return non_blank


def check(out: Path, non_blank: int, exit_code: int, output: str) -> list[str]:
    """What is wrong with an audit's outputs, in words ([] when nothing)."""
    problems = []
    if exit_code not in (0, 1):
        problems.append(f"exit {exit_code}: {output[-300:]}")
        return problems
    if "Traceback" in output:
        problems.append("a traceback on the terminal")
    valves = list(csv.DictReader(open(out / "valves.csv", encoding="utf-8")))
    rejected = list(csv.DictReader(open(out / "rejected.csv", encoding="utf-8")))
    if len(valves) + len(rejected) != non_blank:
        problems.append(f"{non_blank} non-blank rows but {len(valves)} valves + {len(rejected)} rejected")
    for name in ("valves.csv", "results.csv", "rejected.csv"):
        for row in csv.reader(open(out / name, encoding="utf-8")):
            for cell in row:
                if cell and cell[0] in "=+-@\t\r" and not _number(cell):
                    problems.append(f"{name}: formula-like cell {cell[:40]!r}")
    def refuse(name):
        raise ValueError(name)
    try:
        json.loads((out / "audit.json").read_text(encoding="utf-8"), parse_constant=refuse)
    except ValueError as exc:
        problems.append(f"audit.json is not valid JSON: {exc}")
    return problems


def _number(cell: str) -> bool:
    try:
        float(cell)
        return True
    except ValueError:
        return False


def run(rows: int, seed: int, folder: Path) -> tuple[list[str], float]:
    path = folder / "fuzz.csv"
    non_blank = write(path, rows, seed)
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "audit.cli", "run", str(path), "--out", str(folder / "out"),
                           "--format", "csv,json", "--quiet"], cwd=ROOT, capture_output=True, text=True)
    seconds = time.perf_counter() - t0
    return check(folder / "out", non_blank, proc.returncode, proc.stdout + proc.stderr), seconds


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--rows", type=int, default=10_000)
    p.add_argument("--seed", type=int, default=17)
    a = p.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        problems, seconds = run(a.rows, a.seed, Path(tmp))
    print(f"{a.rows} random rows (seed {a.seed}) audited in {seconds:.1f} s: "
          + ("no problem found" if not problems else f"{len(problems)} problem(s)"))
    for line in problems[:20]:
        print("  " + line)
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
