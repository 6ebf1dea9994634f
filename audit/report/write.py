"""Write the human-readable outputs a run asked for: report.html, report.pdf, worklist.xlsx."""
from __future__ import annotations

from pathlib import Path

from audit.report.html import _stage, build_context, render_html
from audit.report.pdf import render_pdf
from audit.report.worklist import carry_over, worklist_table, write_worklist


def write_reports(folder: Path, audit, meta: dict, formats: set[str], progress=None, previous=None) -> None:
    """Write the chosen human-readable outputs into ``folder``.

    previous: the planner entries of an earlier work list (``worklist.read_previous``), carried over
    to this one; the report says how many.
    """
    table = None
    if previous is not None:
        table, carried = carry_over(worklist_table(audit), previous, meta.get("previous", ""))
        meta = {**meta, "carried": {"carried": carried.carried, "gone": carried.gone, "source": carried.source}}
    if formats & {"html", "pdf"}:
        context = build_context(audit, meta, plots=True, progress=progress, images="pdf" in formats)
        if "html" in formats:
            (folder / "report.html").write_text(render_html(context), encoding="utf-8")
        if "pdf" in formats:
            with _stage(progress, "Writing the PDF report"):
                printed = render_html(context, for_print=True)
                del context  # its drawings are in the printed page now; freed before the printer starts
                render_pdf(printed, folder / "report.pdf")
    if "xlsx" in formats:
        with _stage(progress, "Writing the work list"):
            write_worklist(folder / "worklist.xlsx", audit, table)
