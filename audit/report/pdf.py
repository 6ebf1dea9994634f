"""report.pdf: the report page printed by WeasyPrint, in parts on all cores when it is large.

The renderer gets a URL fetcher that refuses every URL (local files included),
so nothing in a line list can make it read the disk or the network.
"""
from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from audit.workers import die_with_parent


PNG_DATA = "data:image/png;base64,"


class RefusedFetch(Exception):
    pass


class RefuseEveryUrl:
    """URL fetcher for the PDF renderer: nothing is fetched, from anywhere, local files included;
    only the report's own inline PNG plots (data: URLs) are decoded.

    A refusal is a plain error to the renderer (it drops the resource and goes on), not a
    fatal one, so a stray reference can never stop the run.
    """
    _fail_on_errors = False  # read by the renderer when a fetch fails
    asked: list

    def __init__(self):
        self.asked = []

    def __call__(self, url: str, *args, **kwargs):
        # The one exception: a plot the report itself placed inline as a PNG (no disk, no network).
        if url.startswith(PNG_DATA):
            import base64
            data = base64.b64decode(url[len(PNG_DATA):], validate=True)
            try:  # WeasyPrint 66 and later take a response object; earlier ones a dict
                from weasyprint.urls import URLFetcherResponse
            except ImportError:
                return {"string": data, "mime_type": "image/png"}
            return URLFetcherResponse(url, body=data, headers={"Content-Type": "image/png"})
        self.asked.append(url)
        raise RefusedFetch(f"the report renderer fetches nothing (asked for {url[:80]!r})")



def _pdf_bytes(html: str) -> bytes:
    import logging

    from weasyprint import HTML
    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    return HTML(string=html, base_url=None, url_fetcher=RefuseEveryUrl()).write_pdf()


PDF_PARALLEL_FROM = 80  # valve sections; a smaller report is one document with "page n of m"
# Rendering costs measured at 2,000 valves (1,399 valve sections, 2,392 rows in the summary tables), a
# part at a time: 37 ms a valve section, 10.5 ms a table row.  A part holds about PART_COST sections'
# worth, so what a worker holds is bounded by the part, not by the report (half of a 2,000-valve report
# at once took over 1 GB a worker).
ROW_COST = 10.5 / 37.0
PART_COST = 100.0


def _table_cuts(html: str, start: int, end: int) -> list[tuple[int, tuple[str, str]]]:
    """Places between the body rows of the tables in html[start:end], each with the markup that closes
    the table before the cut and reopens it, header row included, after it."""
    cuts = []
    for m in re.finditer("<table", html[start:end]):
        t0 = start + m.start()
        t1 = html.index("</table>", t0)
        head_end = html.find("</thead>", t0, t1)
        if head_end < 0:
            continue
        head_end += len("</thead>")
        tbody = html[head_end:t1].lstrip().startswith("<tbody>")
        opening = html[t0:head_end] + ("<tbody>" if tbody else "")
        closing = "</tbody></table>" if tbody else "</table>"
        rows = [head_end + r.start() for r in re.finditer("<tr", html[head_end:t1])]
        cuts += [(pos, (opening, closing)) for pos in rows[1:]]
    return cuts


def split_for_print(html: str, parts: int, part_cost: float = PART_COST) -> list[str]:
    """The report as documents of about ``part_cost`` valve sections' worth each (at least ``parts`` of
    them), cut between valve sections, headings or table rows, each with the full styles.

    The renderer is single-threaded and its memory grows with the document; cut in parts, the cores share
    the work, each holds one part at a time, and the parts' pages are joined in order.  A table cut
    between parts ends in one and starts again, header row first, in the next.  Page numbers run per
    part ("part 2 of 9, page 7").
    """
    starts = [m.start() for m in re.finditer('<section class="valve"', html)]
    if parts < 2 or len(starts) < PDF_PARALLEL_FROM:
        return [html]
    body_at = html.index("<body>") + len("<body>")
    body_end = html.rindex("</body>")
    first = starts[0]
    cuts = [(m.start(), None) for m in re.finditer("<h[23] ", html[body_at:first]) if m.start() > 0]
    cuts = [(body_at + pos, None) for pos, _ in cuts] + _table_cuts(html, body_at, first)
    cuts = sorted(cuts + [(pos, None) for pos in starts[1:]])
    at = np.array([pos for pos, _ in cuts])
    rows = np.array([m.start() + body_at for m in re.finditer("<tr", html[body_at:first])])
    cost_at = np.searchsorted(starts, at) + ROW_COST * np.searchsorted(rows, at)
    total = len(starts) + ROW_COST * len(rows)
    parts = max(parts, int(np.ceil(total / part_cost)))
    chosen = np.unique(np.clip(np.searchsorted(cost_at, np.arange(1, parts) * total / parts), 0, len(at) - 1))
    bounds = [body_at] + [int(at[i]) for i in chosen] + [body_end]
    reopen = [None] + [cuts[i][1] for i in chosen] + [None]
    head = html[:body_at]
    docs = []
    for k in range(len(bounds) - 1):
        footer = (f'<style>@page {{ @bottom-center {{ content: "valve-audit screening report, part {k + 1} of '
                  f'{len(bounds) - 1}, page " counter(page); }} }}</style>')
        before = reopen[k][0] if reopen[k] else ""
        after = reopen[k + 1][1] if reopen[k + 1] else ""
        docs.append(head + footer + before + html[bounds[k]:bounds[k + 1]] + after + "</body></html>")
    return docs


def render_pdf(html: str, path: Path, workers: int | None = None, part_cost: float = PART_COST) -> None:
    """Write the report as PDF; large reports are rendered in parts of about ``part_cost`` valve sections
    each, on all cores, and joined in order."""
    import os

    workers = workers or min(os.cpu_count() or 1, 8)
    docs = split_for_print(html, workers, part_cost)
    if len(docs) == 1:
        Path(path).write_bytes(_pdf_bytes(html))
        return
    del html
    _release_freed_memory()
    _render_parts(docs, Path(path), workers)


def _release_freed_memory() -> None:
    """Give the heap the audit and the page's drawing freed back to the system before printing (glibc keeps
    freed blocks mapped: at 2,000 valves some hundreds of MB), so the process holds what it uses."""
    import ctypes
    import gc
    import sys

    gc.collect()
    if sys.platform.startswith("linux"):
        try:
            ctypes.CDLL("libc.so.6").malloc_trim(0)
        except (OSError, AttributeError):
            pass


def _render_parts(docs: list[str], path: Path, workers: int) -> None:
    """Each part rendered by one of ``workers`` fresh processes (``python -m audit.report.pdf``), the next
    part going to whichever is free, and the pages joined in order at the end.

    Fresh processes, not forks of this one: a fork copies the audit process's memory page by page as it
    touches it (reference counts, the garbage collector), some 200 MB a worker at 2,000 valves, and the
    start methods that avoid that re-run the caller's main script."""
    import io
    import os
    import selectors
    import subprocess
    import sys
    import tempfile

    from pypdf import PdfReader, PdfWriter

    import audit

    env = dict(os.environ)
    here = str(Path(audit.__file__).resolve().parents[1])  # so the worker imports this same copy of the tool
    env["PYTHONPATH"] = here + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
    with tempfile.TemporaryDirectory(prefix="valve-audit-pdf-") as tmp:
        parts = []
        for k, doc in enumerate(docs):
            src = Path(tmp) / f"part{k:04d}.html"
            src.write_text(doc, encoding="utf-8")
            docs[k] = None   # on disk now: this process need not hold the page twice while printing
            parts.append((src, Path(tmp) / f"part{k:04d}.pdf"))
        todo, done, busy = list(range(len(parts)))[::-1], set(), {}
        writer = PdfWriter()
        procs = [subprocess.Popen([sys.executable, "-m", "audit.report.pdf"], stdin=subprocess.PIPE,
                                  stdout=subprocess.PIPE, text=True, env=env)
                 for _ in range(min(workers, len(parts)))]
        chooser = selectors.DefaultSelector()
        try:
            for proc in procs:
                chooser.register(proc.stdout, selectors.EVENT_READ, proc)
                _give(proc, todo, busy, parts, chooser)
            while busy:
                for key, _ in chooser.select():
                    proc = key.data
                    if not proc.stdout.readline():
                        raise RuntimeError(f"a PDF worker stopped on part {busy.get(proc)} (exit {proc.wait()})")
                    done.add(busy.pop(proc))
                    _give(proc, todo, busy, parts, chooser)
        finally:
            for proc in procs:
                if proc.stdin and not proc.stdin.closed:
                    proc.stdin.close()
                if proc.poll() is None and busy:
                    proc.kill()
                proc.wait()
        # Joined once the workers are gone, so the joined document and the workers are not held at once.
        for _, pdf in parts:
            writer.append(PdfReader(io.BytesIO(pdf.read_bytes())))
        with open(path, "wb") as fh:
            writer.write(fh)


def _give(proc, todo: list, busy: dict, parts: list, chooser) -> None:
    """The next part to a free worker; with none left, the worker's input is closed so it ends."""
    if todo:
        k = todo.pop()
        busy[proc] = k
        proc.stdin.write(f"{parts[k][0]}\t{parts[k][1]}\n")
        proc.stdin.flush()
    else:
        chooser.unregister(proc.stdout)
        proc.stdin.close()


def _worker() -> None:
    """``python -m audit.report.pdf``: render each 'part.html<TAB>part.pdf' line of standard input, and
    say the PDF's path on standard output when it is written."""
    import sys

    die_with_parent()
    for line in sys.stdin:
        src, dst = line.rstrip("\n").split("\t")
        Path(dst).write_bytes(_pdf_bytes(Path(src).read_text(encoding="utf-8")))
        print(dst, flush=True)


if __name__ == "__main__":
    _worker()
