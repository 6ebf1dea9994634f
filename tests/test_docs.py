"""docs/ is what users get: it must list exactly the columns the loader reads, and point nowhere outside."""
import re

import pytest

from audit.io.columns import CASE_FIELDS, KNOWN
from conftest import ROOT

DOCS = ROOT / "docs"


def documented_columns() -> set[str]:
    """Names in backticks in the first cell of each table row of docs/input.md."""
    text = (DOCS / "input.md").read_text(encoding="utf-8")
    first_cells = re.findall(r"^\| ([^|]*`[^|]*) \|", text, flags=re.M)
    return {name for cell in first_cells for name in re.findall(r"`([a-z_<>]+)`", cell)}


def loader_columns() -> set[str]:
    return set(KNOWN) | {f"{p}_<case>" for p in CASE_FIELDS} | {"case"}


def test_docs_list_every_column_the_loader_reads():
    assert loader_columns() - documented_columns() == set()


def test_loader_reads_every_column_the_docs_list():
    assert documented_columns() - loader_columns() == set()


def test_no_doc_points_outside_the_repository():
    for page in DOCS.glob("*.md"):
        assert "../" + "shared" not in page.read_text(encoding="utf-8"), page.name


def _tables(text: str) -> list[list[dict]]:
    """Markdown tables of a page as lists of {header: cell}."""
    out, block = [], []
    for line in text.splitlines() + [""]:
        if line.startswith("|"):
            block.append([c.strip() for c in line.strip().strip("|").split("|")])
        elif block:
            out.append([dict(zip(block[0], r)) for r in block[2:]])
            block = []
    return out


def test_worked_example_numbers_are_those_of_a_fresh_run():
    from audit.engine import compute
    from audit.io.loader import load_linelist
    from audit.io.outputs import results_table

    audit = compute(load_linelist(ROOT / "tests" / "data" / "plain.csv"))
    results = results_table(audit.cases).set_index(["tag", "case"])
    cases, valves = _tables((DOCS / "worked-example.md").read_text(encoding="utf-8"))[:2]
    assert len(cases) == len(results)
    columns = {"Cv required": "cv_required", "travel [%]": "travel_pct", "choke ratio": "choke_ratio",
               "noise [dBA]": "noise_dba", "outlet velocity [m/s]": "velocity_out_m_s"}
    for row in cases:
        r = results.loc[(row["tag"], row["case"])]
        assert row["cavitation"] == (r["cavitation"] or "")
        assert row["findings"] == r["findings"].replace(";", ", ")
        for head, col in columns.items():
            # The page rounds to three significant figures: half a unit in the third digit is at most 0.5 %.
            assert float(row[head]) == pytest.approx(r[col], rel=5e-3, abs=5e-3), (row["tag"], row["case"], head)
    ranked = audit.valves.set_index("tag")
    for row in valves:
        assert int(row["rank"]) == ranked.at[row["tag"], "rank"] and row["severity"] == ranked.at[row["tag"], "severity"]


def test_severity_page_carries_the_table_the_code_grades_by():
    from rules.severity import markdown_table
    assert markdown_table() in (DOCS / "severity.md").read_text(encoding="utf-8")


def test_severity_page_lists_every_threshold():
    from rules import all_rules
    text = (DOCS / "severity.md").read_text(encoding="utf-8")
    for rule in all_rules():
        for t in rule.thresholds:
            assert f"| {rule.code} | `{t.name}` | {t.default:g} |" in text, (rule.code, t.name)
