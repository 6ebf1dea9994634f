"""report.pdf: the report page printed by WeasyPrint, in parts on all cores when it is large.

The renderer gets a URL fetcher that refuses every URL (local files included),
so nothing in a line list can make it read the disk or the network.
"""
from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from audit.report.parallel import die_with_parent


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


def split_for_print(html: str, parts: int) -> list[str]:
    """The report as ``parts`` documents, cut between valve sections, each with the full styles.

    The renderer is single-threaded and takes some 0.1 s per valve section; cut in parts, the
    cores share the work and the parts' pages are joined in order.  Page numbers then run per
    part ("part 2 of 2, page 7").
    """
    starts = [m.start() for m in re.finditer('<section class="valve"', html)]
    if parts < 2 or len(starts) < PDF_PARALLEL_FROM:
        return [html]
    body_at = html.index("<body>") + len("<body>")
    end_at = html.index('<h2 id="rejected"')
    head, tail = html[:body_at], html[end_at:html.rindex("</body>")]
    prefix = html[body_at:starts[0]]
    bounds = starts + [end_at]
    # Balance the parts by estimated cost: a valve section is 1, a row of the summary, ranked and
    # headroom tables about 1/4 of one (measured at 2,000 valves with images in the PDF, the parts
    # rendered one after the other: 53 ms a section, 12.5 ms a table row).
    cost = np.r_[prefix.count("<tr") / 4.2, np.ones(len(starts))]
    edges = np.searchsorted(np.cumsum(cost), np.arange(1, parts) * cost.sum() / parts) - 1
    edges = np.clip(edges, 1, len(starts) - 1)
    groups = [g for g in np.split(np.arange(len(starts)), edges) if len(g)]
    parts = len(groups)
    docs = []
    for k, group in enumerate(groups):
        footer = (f'<style>@page {{ @bottom-center {{ content: "valve-audit screening report, part {k + 1} of '
                  f'{parts}, page " counter(page); }} }}</style>')
        middle = html[bounds[group[0]]:bounds[group[-1] + 1]]
        docs.append(head + footer + (prefix if k == 0 else "") + middle + (tail if k == parts - 1 else "")
                    + "</body></html>")
    return docs


def render_pdf(html: str, path: Path, workers: int | None = None) -> None:
    """Write the report as PDF; large reports are rendered in parts on all cores and joined."""
    import concurrent.futures
    import io
    import multiprocessing
    import os

    workers = workers or min(os.cpu_count() or 1, 8)
    docs = split_for_print(html, workers)
    if len(docs) == 1:
        Path(path).write_bytes(_pdf_bytes(html))
        return
    from pypdf import PdfReader, PdfWriter

    with concurrent.futures.ProcessPoolExecutor(len(docs), mp_context=multiprocessing.get_context("fork"),
                                                initializer=die_with_parent) as pool:
        futures = [pool.submit(_pdf_bytes, doc) for doc in docs]
        writer = PdfWriter()
        for future in futures:  # in order; a part is joined as soon as it is done, while later ones render
            writer.append(PdfReader(io.BytesIO(future.result())))
    with open(path, "wb") as fh:
        writer.write(fh)
