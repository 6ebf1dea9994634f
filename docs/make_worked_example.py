"""Rewrite the generated tables of docs/worked-example.md from a fresh audit of tests/data/plain.csv.

Run from the repository: ``python docs/make_worked_example.py``.  The prose around the tables is
written by hand; tests/test_docs.py checks the tables against a fresh run, so rerun this after a
change that moves the numbers, and reread the prose.
"""
from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from audit.engine import compute  # noqa: E402
from audit.io.loader import load_linelist  # noqa: E402
from audit.io.outputs import results_table  # noqa: E402

PAGE = ROOT / "docs" / "worked-example.md"


def _f(x, digits=3) -> str:
    """Three significant figures; whole numbers from 1000 up, as a reader expects a flow."""
    if x != x:
        return ""
    return f"{x:.0f}" if abs(x) >= 10 ** digits else f"{x:.{digits}g}"


def tables() -> tuple[str, str, str]:
    audit = compute(load_linelist(ROOT / "tests" / "data" / "plain.csv"))
    r = results_table(audit.cases)
    cases = ["| tag | case | phase | flow [kg/h] | p_in [kPa] | p_out [kPa] | Cv required | travel [%] | choke ratio "
             "| cavitation | outlet velocity [m/s] | noise [dBA] | findings |", "|" + "---|" * 13]
    for row in r.itertuples():
        cases.append(f"| {row.tag} | {row.case} | {row.phase} | {_f(row.flow_kg_h, 4)} | {_f(row.p_in_kpa, 4)} | "
                     f"{_f(row.p_out_kpa, 4)} | {_f(row.cv_required)} | {_f(row.travel_pct)} | {_f(row.choke_ratio)} | "
                     f"{row.cavitation} | {_f(row.velocity_out_m_s)} | {_f(row.noise_dba)} | "
                     f"{row.findings.replace(';', ', ')} |")
    valves = ["| rank | tag | severity | capacity margin | worst case | gain min-max |", "|" + "---|" * 6]
    for v in audit.valves.itertuples():
        valves.append(f"| {v.rank} | {v.tag} | {v.severity} | {_f(v.capacity_margin)} | {v.worst_case} | "
                      f"{_f(v.gain_min)}-{_f(v.gain_max)} |")
    sentences = "\n".join(f"- **{v.tag}** ({v.severity}): {v.findings}" for v in audit.valves.itertuples())
    return "\n".join(cases), "\n".join(valves), sentences


def main() -> None:
    page = PAGE.read_text(encoding="utf-8")
    cases, valves, sentences = tables()
    for start, end, new in (("| tag | case | phase |", "\n\nReading it:", cases),
                            ("| rank | tag | severity |", "\n\nThe sentences,", valves),
                            ("worst:\n\n", "\n\nEvery number above", sentences)):
        a = page.index(start) + (len(start) if start.startswith("worst") else 0)
        page = page[:a] + new + page[page.index(end, a):]
    PAGE.write_text(page, encoding="utf-8")


if __name__ == "__main__":
    main()
