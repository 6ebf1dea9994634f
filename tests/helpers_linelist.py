"""Build small line lists in tests."""
from pathlib import Path

from audit.engine import Options, compute
from audit.io.loader import load_linelist


def audit_rows(tmp_path: Path, header: str, rows: list[str], name="l.csv", options: Options | None = None):
    f = tmp_path / name
    f.write_text(header + "\n" + "\n".join(rows) + "\n", encoding="utf-8")
    return compute(load_linelist(f), options or Options())
