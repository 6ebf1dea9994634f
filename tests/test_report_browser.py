"""The report in a real browser: headless Chromium (the OS package) driven by Playwright.

Checks what a planner does with the page: sort a column, filter by severity, search a tag,
follow a tag to its details and back; and that the page asks for nothing over the network and
logs no script error, and still reads with scripting off. Skipped, with the reason, only where no
browser can be started (the project's CI installs Debian's chromium package).
"""
import pathlib
import shutil

import pandas as pd
import pytest
from typer.testing import CliRunner

from audit.cli import app

ROOT = pathlib.Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_linelist"
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")

playwright_api = pytest.importorskip("playwright.sync_api", reason="Playwright's Python package is not installed")
if CHROMIUM is None:
    pytest.skip("no chromium on this machine (Debian: apt-get install chromium)", allow_module_level=True)


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    out = tmp_path_factory.mktemp("browser") / "out"
    result = CliRunner().invoke(app, ["run", str(SAMPLE / "fenmoor_unit.csv"), "--history",
                                      str(SAMPLE / "fenmoor_history.csv"), "--history",
                                      str(SAMPLE / "fenmoor_history_area300.csv"), "--out", str(out),
                                      "--format", "csv,html", "--quiet"])
    assert result.exit_code == 0, result.output
    return out


@pytest.fixture(scope="module")
def browser():
    with playwright_api.sync_playwright() as p:
        try:
            b = p.chromium.launch(executable_path=CHROMIUM, args=["--no-sandbox"])
        except Exception as exc:  # a browser that cannot start on this machine: say why
            pytest.skip(f"chromium would not start: {str(exc)[:200]}")
        yield b
        b.close()


@pytest.fixture()
def page(browser, report):
    context = browser.new_context(viewport={"width": 1300, "height": 900})
    pg = context.new_page()
    pg.requests, pg.errors = [], []
    pg.on("request", lambda r: pg.requests.append(r.url))
    pg.on("console", lambda m: pg.errors.append(m.text) if m.type == "error" else None)
    pg.on("pageerror", lambda e: pg.errors.append(str(e)))
    url = (report / "report.html").resolve().as_uri()
    pg.goto(url)
    pg.url_loaded = url
    yield pg
    context.close()


def visible_rows(pg):
    return pg.locator("#ranked-table tbody tr:not([hidden])")


def test_page_makes_no_request_and_logs_no_error(page):
    page.click("#ranked-table thead th:nth-child(6)")
    page.select_option("#f-severity", "plan")
    assert page.requests == [page.url_loaded]   # the page itself, nothing else: no network, no file
    assert page.errors == []


def test_sort_by_capacity_margin_both_ways(page):
    header = page.locator("#ranked-table thead th", has_text="capacity margin")
    header.click()
    keys = page.eval_on_selector_all("#ranked-table tbody tr td:nth-child(6)", "cs => cs.map(c => c.dataset.key)")
    numbers = [float(k) for k in keys if k]
    assert numbers == sorted(numbers) and len(numbers) > 40
    assert header.get_attribute("aria-sort") == "ascending"
    header.click()
    keys = page.eval_on_selector_all("#ranked-table tbody tr td:nth-child(6)", "cs => cs.map(c => c.dataset.key)")
    numbers = [float(k) for k in keys if k]
    assert numbers == sorted(numbers, reverse=True)


def test_filter_by_severity_counts_what_is_shown(page, report):
    valves = pd.read_csv(report / "valves.csv")
    urgent = int((valves["severity"] == "urgent").sum())
    page.select_option("#f-severity", "urgent")
    shown = visible_rows(page)
    assert shown.count() == urgent > 0
    assert set(shown.evaluate_all("rs => rs.map(r => r.dataset.severity)")) == {"urgent"}
    assert page.text_content("#f-count") == f"Showing {urgent} of {len(valves)} valves"


def test_filter_by_family_and_area_together(page, report):
    valves = pd.read_csv(report / "valves.csv", keep_default_na=False)
    page.select_option("#f-family", "choking")
    page.select_option("#f-area", "300 Gas processing")
    tags = set(visible_rows(page).evaluate_all("rs => rs.map(r => r.dataset.tag)"))
    expected = {t for t, a, c in zip(valves["tag"], valves["area"], valves["finding_codes"])
                if a == "300 Gas processing" and ("CHOKED" in c.split(";") or "CHOKE_NEAR" in c.split(";"))}
    assert tags == expected and tags


def test_search_a_tag(page):
    page.fill("#f-tag", "lv-12")
    tags = visible_rows(page).evaluate_all("rs => rs.map(r => r.dataset.tag)")
    assert tags and all(t.startswith("LV-12") for t in tags)
    page.fill("#f-tag", "no such valve")
    assert visible_rows(page).count() == 0
    assert page.text_content("#f-count").startswith("Showing 0 of")


def test_tag_links_to_its_details_and_back(page):
    first = page.locator("#ranked-table tbody tr").first
    tag = first.get_attribute("data-tag")
    first.locator("a").click()
    assert page.evaluate("location.hash") == "#valve-1"
    section = page.locator("#valve-1")
    assert tag in section.locator("h3").text_content()
    assert section.is_visible()
    section.locator("a.backlink").click()
    assert page.evaluate("location.hash") == "#row-1"


def test_page_reads_without_scripting(browser, report):
    context = browser.new_context(java_script_enabled=False)
    pg = context.new_page()
    pg.goto((report / "report.html").resolve().as_uri())
    assert not pg.locator("#controls").is_visible()        # no dead controls
    assert pg.locator("#ranked-table tbody tr:visible").count() == len(pd.read_csv(report / "valves.csv"))
    context.close()
