"""Regenerate the severity and threshold tables of docs/severity.md from the code.

    python -m rules.docs docs/severity.md
"""
from __future__ import annotations

from pathlib import Path

from . import all_rules
from .severity import markdown_table


def update_doc(path) -> None:
    """Rewrite the two generated parts of docs/severity.md (the table and the thresholds) from the code."""
    page = Path(path).read_text(encoding="utf-8")
    start, end = page.index("| finding | family | level |"), page.index("\nThe second table says")
    page = page[:start] + markdown_table() + page[end:]
    rows = ["| rule | threshold | default | unit | source | meaning |", "|---|---|---|---|---|---|"]
    rows += [f"| {r.code} | `{t.name}` | {t.default:g} | {t.unit} | {t.source} | {t.meaning} |"
             for r in all_rules() for t in r.thresholds]
    start, end = page.index("| rule | threshold | default |"), page.index("\n\nA site rule file")
    Path(path).write_text(page[:start] + "\n".join(rows) + page[end:], encoding="utf-8")


if __name__ == "__main__":  # python -m rules.docs docs/severity.md
    import sys

    update_doc(sys.argv[1] if len(sys.argv) > 1 else "docs/severity.md")
