"""Audit-to-audit comparison: what changed between two runs' CSV outputs.

Reads valves.csv, results.csv and audit_info.json of both folders, refuses outputs of another
output-format version, and writes comparison.csv (one row per change) and comparison.html.
Changes: valves added or removed, findings new or cleared (by code; a finding the later audit
could no longer predict is "no longer predicted", never "cleared"), choke ratio worse or better
(by more than ``RATIO_STEP``).
"""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
from jinja2 import Environment, select_autoescape

from audit import OUTPUT_FORMAT_VERSION
from audit.io.outputs import staged_folder, to_csv_text

RATIO_STEP = 0.005  # choke-ratio change below this is rounding, not a change
CHANGE_COLUMNS = ["tag", "change", "old", "new", "detail"]
# A finding that disappears where the later audit says it could not predict that quantity is not cleared.
NOT_PREDICTED = {"NOISE_NO_DATA": ("NOISE_SEVERE", "NOISE", "NOISE_NEAR")}
NEEDED = ("tag", "worst_case", "choke_ratio_max", "finding_codes")  # the valves.csv columns a comparison reads


class CompareError(Exception):
    """The folders cannot be compared (missing files, other output-format version)."""


def _read(folder: Path) -> tuple[pd.DataFrame, dict]:
    info_path = folder / "audit_info.json"
    if not (folder / "valves.csv").exists() or not info_path.exists():
        raise CompareError(f"'{folder}' does not hold an audit's outputs (valves.csv and audit_info.json)")
    try:
        info = json.loads(info_path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, ValueError) as exc:
        raise CompareError(f"'{info_path}' cannot be read as JSON: {str(exc)[:120]}") from None
    if not isinstance(info, dict):
        raise CompareError(f"'{info_path}' is not an audit's information file")
    if str(info.get("output_format_version")) != OUTPUT_FORMAT_VERSION:
        raise CompareError(f"'{folder}' was written with output format version {info.get('output_format_version')!r} "
                           f"(valve-audit {info.get('tool_version', '?')}); this version reads format "
                           f"{OUTPUT_FORMAT_VERSION}. Rerun both audits with the same version to compare them.")
    try:
        valves = pd.read_csv(folder / "valves.csv", dtype=str, keep_default_na=False, encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError, ValueError, pd.errors.ParserError) as exc:
        raise CompareError(f"'{folder / 'valves.csv'}' cannot be read as CSV: {str(exc)[:120]}") from None
    missing = [c for c in NEEDED if c not in valves.columns]
    if missing:
        raise CompareError(f"'{folder / 'valves.csv'}' lacks column(s) {', '.join(missing)}; was it edited?")
    dup = valves["tag"][valves["tag"].duplicated()]
    if len(dup):
        raise CompareError(f"'{folder / 'valves.csv'}' lists tag '{dup.iloc[0][:40]}' twice; was it edited?")
    return valves, info


def _codes(text: str) -> set[str]:
    return {c for c in str(text).split(";") if c}


def compare_frames(old: pd.DataFrame, new: pd.DataFrame) -> pd.DataFrame:
    """The list of changes between two valves.csv tables."""
    old_i, new_i = old.set_index("tag"), new.set_index("tag")
    rows = []
    for tag in sorted(set(new_i.index) - set(old_i.index)):
        rows.append((tag, "added", "", "", f"choke ratio {new_i.at[tag, 'choke_ratio_max']}"))
    for tag in sorted(set(old_i.index) - set(new_i.index)):
        rows.append((tag, "removed", "", "", f"choke ratio {old_i.at[tag, 'choke_ratio_max']}"))
    for tag in sorted(set(old_i.index) & set(new_i.index)):
        a, b = old_i.loc[tag], new_i.loc[tag]
        for code in sorted(_codes(b["finding_codes"]) - _codes(a["finding_codes"])):
            rows.append((tag, "new finding", "", code, ""))
        unknown_now = _codes(b["finding_codes"]) & set(NOT_PREDICTED)
        for code in sorted(_codes(a["finding_codes"]) - _codes(b["finding_codes"])):
            lost = [u for u in unknown_now if code in NOT_PREDICTED[u]]
            if lost:  # the later audit could not predict it: that is not a fix
                rows.append((tag, "no longer predicted", code, lost[0], "the later audit gives no number for it; "
                                                                        "see the case notes"))
            else:
                rows.append((tag, "cleared finding", code, "", ""))
        ra, rb = _num(a["choke_ratio_max"]), _num(b["choke_ratio_max"])
        if np.isfinite(ra) and np.isfinite(rb) and abs(rb - ra) > RATIO_STEP:
            rows.append((tag, "choke ratio worse" if rb > ra else "choke ratio better", f"{ra:.4g}", f"{rb:.4g}",
                         f"worst case {a['worst_case']} -> {b['worst_case']}"))
    return pd.DataFrame(rows, columns=CHANGE_COLUMNS)


def _num(v) -> float:
    try:
        return float(v)
    except (TypeError, ValueError):
        return float("nan")


_PAGE = """<!DOCTYPE html><html lang="en"><head><meta charset="utf-8"><title>Audit comparison</title>
<style>body{font-family:"DejaVu Sans",Arial,sans-serif;font-size:10pt;max-width:60em;margin:1.5em auto}
table{border-collapse:collapse;width:100%}th,td{border:0.5pt solid #999;padding:2pt 4pt;text-align:left}
th{background:#e8e8e8}.caution{border:2pt solid #111;padding:6pt;background:#f4f4f4}</style></head><body>
<h1>Audit comparison</h1>
<p>Earlier: <b>{{ old.input_file }}</b> ({{ old.input_sha256[:12] }}) &middot; later: <b>{{ new.input_file }}</b>
({{ new.input_sha256[:12] }})</p>
<p>{{ counts }}</p>
<table><tr><th>tag</th><th>change</th><th>before</th><th>after</th><th>detail</th></tr>
{% for r in rows %}<tr><td>{{ r.tag }}</td><td>{{ r.change }}</td><td>{{ r.old }}</td><td>{{ r.new }}</td><td>{{ r.detail }}</td></tr>{% endfor %}
</table>
<p class="caution">Screening only: a competent engineer confirms every finding before action; local codes,
regulations and licensed practice govern.</p></body></html>"""


def compare_folders(old_dir: Path, new_dir: Path, out: Path) -> str:
    """Compare two audits' output folders; write comparison.csv and comparison.html into ``out``."""
    old, old_info = _read(Path(old_dir))
    new, new_info = _read(Path(new_dir))
    changes = compare_frames(old, new)
    counts = ", ".join(f"{n} {k}" for k, n in changes["change"].value_counts().sort_index().items()) or "no changes"
    html = Environment(autoescape=select_autoescape(default_for_string=True)).from_string(_PAGE).render(
        old=old_info, new=new_info, rows=changes.to_dict(orient="records"), counts=counts)
    with staged_folder(Path(out), published=("comparison.csv", "comparison.html")) as stage:
        (stage / "comparison.csv").write_text(to_csv_text(changes), encoding="utf-8")
        (stage / "comparison.html").write_text(html, encoding="utf-8")
    return f"{len(changes)} changes: {counts}"
