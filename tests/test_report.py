"""The human-readable report: order, self-containment, escaping, caution and methods."""
import csv
import re

import pytest
from pypdf import PdfReader

from audit.engine import Options
from audit.pipeline import run_files
from conftest import SAMPLE_CSV


@pytest.fixture(scope="module")
def sample_reports(tmp_path_factory):
    out = tmp_path_factory.mktemp("reports")
    run_files(SAMPLE_CSV, out, Options(), formats={"csv", "html", "pdf", "xlsx"}, quiet=True)
    return out


def _ranked_tags(folder):
    with open(folder / "valves.csv", newline="", encoding="utf-8") as fh:
        return [r["tag"] for r in csv.DictReader(fh)]


def _in_order(text, tags):
    positions, start = [], 0
    for tag in tags:
        i = text.find(tag, start)
        assert i >= 0, f"{tag} missing or out of ranked order"
        positions.append(i)
        start = i + len(tag)
    return positions


def test_html_and_pdf_list_valves_in_ranked_order(sample_reports):
    tags = _ranked_tags(sample_reports)
    html = (sample_reports / "report.html").read_text(encoding="utf-8")
    ranked = html[html.index('id="ranked"'):html.index('id="details"')]
    _in_order(ranked, tags)
    pdf = "\n".join(page.extract_text() for page in PdfReader(sample_reports / "report.pdf").pages)
    ranked_pdf = pdf[pdf.rindex("All audited valves, ranked"):pdf.rindex("Valves with findings")]  # past the contents
    _in_order(ranked_pdf, tags)


def test_html_references_nothing_outside_itself(sample_reports):
    html = (sample_reports / "report.html").read_text(encoding="utf-8")
    assert not re.search(r"https?:|file:|ftp:", html, flags=re.I)
    assert not re.search(r"""(src|href)\s*=\s*["']?//""", html, flags=re.I)
    assert not re.search(r"""(src|href)\s*=\s*["']?(?!#)[a-z]""", html, flags=re.I)  # only in-page anchors
    assert "<link" not in html and not re.search(r"<script[^>]*\bsrc", html, flags=re.I)  # inline script only


def test_stylesheet_is_inlined_as_css_not_escaped_text(sample_reports):
    # An escaped stylesheet (&#34;DejaVu Sans&#34;) drops the font setting: the report's own CSS goes in as is.
    html = (sample_reports / "report.html").read_text(encoding="utf-8")
    style = html[html.index("<style>"):html.index("</style>")]
    assert 'font-family: "DejaVu Sans"' in style and "&#34;" not in style and "&quot;" not in style


def _fonts(reader) -> dict:
    """Every font the PDF uses: base name -> whether its program is embedded (a FontFile* stream)."""
    out = {}
    for page in reader.pages:
        fonts = page["/Resources"].get_object().get("/Font")
        for font in (fonts.get_object().values() if fonts else []):
            font = font.get_object()
            desc = (font["/DescendantFonts"][0].get_object() if "/DescendantFonts" in font else font)
            desc = desc.get("/FontDescriptor")
            desc = desc.get_object() if desc is not None else {}
            out[str(font["/BaseFont"])] = any(k in desc for k in ("/FontFile", "/FontFile2", "/FontFile3"))
    return out


def test_pdf_embeds_the_fonts_it_names(sample_reports):
    # PDF 1.7 (ISO 32000-1) 9.8: an embedded font program is a FontFile, FontFile2 or FontFile3 stream of the
    # font descriptor; a PDF that only names a font is drawn with whatever the reader's machine substitutes.
    fonts = _fonts(PdfReader(sample_reports / "report.pdf"))
    assert fonts and all(fonts.values()), fonts
    assert all("DejaVu" in name for name in fonts), fonts   # the report's font, not a fallback


def test_pdf_repeats_table_headers_on_every_page(sample_reports):
    pages = [p.extract_text() for p in PdfReader(sample_reports / "report.pdf").pages]
    start = max(i for i, t in enumerate(pages) if "All audited valves, ranked" in t)  # the heading, not the contents
    end = next(i for i, t in enumerate(pages) if "Headroom: how far each valve can go" in t and i > start)
    assert end - start >= 2   # the ranked table runs over more than one page, so the check means something
    for text in pages[start:end]:
        assert "capacity" in text and "worst" in text and "findings" in text   # its header row on each page


@pytest.fixture(scope="module")
def sample_print_html():
    from audit.pipeline import run_audit, run_metadata
    from audit.report.html import build_context, render_html
    options = Options()
    audit = run_audit(SAMPLE_CSV, options)
    context = build_context(audit, run_metadata(audit.linelist, options, None, None), images=True)
    return render_html(context, for_print=True)


def test_split_for_print_keeps_every_row_and_section_once_in_order(sample_print_html, monkeypatch):
    from audit.report import pdf
    monkeypatch.setattr(pdf, "PDF_PARALLEL_FROM", 5)
    html = sample_print_html
    docs = pdf.split_for_print(html, 2, part_cost=4.0)   # small parts, so tables are cut between rows
    assert len(docs) >= 6
    rows = re.findall(r'<tr id="row-\d+"', html)
    sections = re.findall(r'<section class="valve" id="[^"]+"', html)
    assert re.findall(r'<tr id="row-\d+"', "".join(docs)) == rows
    assert re.findall(r'<section class="valve" id="[^"]+"', "".join(docs)) == sections
    ranked_head = html[html.index('<table id="ranked-table"'):html.index("</thead>", html.index('<table id="ranked-table"'))]
    holding = [d for d in docs if '<tr id="row-' in d]
    assert len(holding) >= 2   # the ranked table itself is cut, the case this checks
    for doc in docs:
        body = doc[doc.index("<body>"):]
        assert body.count("<table") == body.count("</table>")   # every table cut is closed and reopened
    for doc in holding:   # each part with ranked rows opens the table with its header row
        assert ranked_head in doc


def test_pdf_in_parts_lists_valves_in_ranked_order_with_headers(sample_print_html, tmp_path, monkeypatch):
    from audit.report import pdf
    monkeypatch.setattr(pdf, "PDF_PARALLEL_FROM", 5)
    out = tmp_path / "report.pdf"
    pdf.render_pdf(sample_print_html, out, workers=2, part_cost=6.0)
    pages = [p.extract_text() for p in PdfReader(out).pages]
    text = "\n".join(pages)
    assert "part 1 of" in pages[0] and "part 2 of" in text
    tags = re.findall(r'<tr id="row-\d+"[^>]* data-tag="([^"]+)"', sample_print_html)
    assert len(tags) > 30
    _in_order(text[text.rindex("All audited valves, ranked"):text.rindex("Valves with findings")], tags)


def test_pdf_places_plots_as_images_and_html_keeps_vectors(sample_reports):
    # Images in the PDF (ISO 32000-1 8.9: image XObjects), vector SVG in the HTML; both from one drawing.
    reader = PdfReader(sample_reports / "report.pdf")
    images = set()
    for page in reader.pages:
        xobjects = page["/Resources"].get_object().get("/XObject")
        for name, obj in (xobjects.get_object().items() if xobjects else []):
            if obj.get_object().get("/Subtype") == "/Image":
                images.add(obj.idnum if hasattr(obj, "idnum") else name)
    html = (sample_reports / "report.html").read_text(encoding="utf-8")
    details = html[html.index('<h2 id="details"'):]
    # identical plots (the sample's twin valves) make one image: count distinct drawings
    drawings = set(re.findall(r'<figure class="plot keep">(<svg.*?</svg>)', details, flags=re.S))
    assert len(drawings) > 5 and len(images) == len(drawings)
    assert "data:image" not in html


def test_caution_and_methods_in_both_formats(sample_reports):
    html = (sample_reports / "report.html").read_text(encoding="utf-8")
    pdf = "\n".join(page.extract_text() for page in PdfReader(sample_reports / "report.pdf").pages)
    for text in (html, pdf):
        assert "Methods and assumptions" in text
        assert "competent engineer" in text
        assert "Local codes, regulations and licensed engineering practice govern" in " ".join(text.split())
        assert "IEC 60534-2-1" in text


def test_metadata_traces_the_input(sample_reports):
    import hashlib
    html = (sample_reports / "report.html").read_text(encoding="utf-8")
    assert hashlib.sha256(SAMPLE_CSV.read_bytes()).hexdigest() in html
    assert "fenmoor_unit.csv" in html


def test_markup_in_line_list_text_appears_as_text(tmp_path):
    f = tmp_path / "evil.csv"
    f.write_text('tag,service,area,fluid,valve_size,rated_cv,fl,fd,xt,flow_max,p_in_max,p_out_max,t_in_max\n'
                 '"<b>FV-1</b><img src=x onerror=alert(1)>","<script>alert(2)</script>","<i>A</i>",'
                 'Water,50,20,0.9,0.46,0.7,30,10,2,20\n')
    run_files(f, tmp_path / "out", Options(), formats={"csv", "html", "pdf"}, quiet=True)
    html = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    assert "<script>alert(2)" not in html and "<img src=x" not in html and "<b>FV-1" not in html
    assert "&lt;script&gt;alert(2)&lt;/script&gt;" in html
    pdf = "\n".join(p.extract_text() for p in PdfReader(tmp_path / "out" / "report.pdf").pages)
    assert "<script>alert(2)</script>" in pdf  # shown as text


def test_pdf_renderer_fetches_nothing():
    from audit.report.pdf import RefuseEveryUrl, render_pdf
    import tempfile, pathlib
    fetcher_calls = []

    class Spy(RefuseEveryUrl):
        def __call__(self, url, *a, **k):
            fetcher_calls.append(url)
            return super().__call__(url, *a, **k)

    import audit.report.pdf as report
    original = report.RefuseEveryUrl
    report.RefuseEveryUrl = Spy
    try:
        with tempfile.TemporaryDirectory() as d:
            render_pdf('<html><body><img src="file:///etc/passwd"><img src="http://example.invalid/x.png">'
                       '<p>text</p></body></html>', pathlib.Path(d) / "x.pdf")
            assert (pathlib.Path(d) / "x.pdf").stat().st_size > 0
    finally:
        report.RefuseEveryUrl = original
    assert fetcher_calls == ["file:///etc/passwd", "http://example.invalid/x.png"]  # asked, and refused


def test_worklist_xlsx_is_ranked_and_neutralised(sample_reports):
    from openpyxl import load_workbook
    sheet = load_workbook(sample_reports / "worklist.xlsx").active
    header = [c.value for c in sheet[1]]
    assert header[:3] == ["rank", "tag", "area"]
    ranks = [r[0].value for r in sheet.iter_rows(min_row=2)]
    assert ranks == sorted(ranks)
