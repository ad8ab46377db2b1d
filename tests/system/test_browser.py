"""report.html of the default scenario in a real browser: Debian's Chromium, headless, driven by Playwright.

The promises (issue #10): the page loads from a file URL with no console error and no network
request (only file: and data: URLs), it draws something (a screenshot that is not blank), and the
browser's print to PDF gives at least two pages on A4 and on letter paper.

Playwright is pointed at the system Chromium (``executable_path``); it never downloads a browser.
Without /usr/bin/chromium or without the playwright package the module is skipped with the reason.
CI installs Debian's chromium first (.ci/run).
"""
from __future__ import annotations

import io
import os
import re

import pytest

CHROMIUM = "/usr/bin/chromium"
# Chromium's own background connections (updates, sync, QUIC probes) are off: the page must be the only
# thing loading, and on a closed network they would be refused anyway.
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync"]

if not (os.path.isfile(CHROMIUM) and os.access(CHROMIUM, os.X_OK)):
    pytest.skip(f"no Chromium at {CHROMIUM} (Debian: apt-get install chromium; CI installs it)",
                allow_module_level=True)
sync_api = pytest.importorskip("playwright.sync_api",
                               reason="the playwright package is not installed (pip install -e '.[test]')")

# The fixtures run the default scenario and start a browser (about 15 s).
pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def report_file(tmp_path_factory):
    from tradeopt.inputs.scenario import load_scenario
    from tradeopt.outputs.report import build_files
    from tradeopt.outputs.writer import write_results
    from tradeopt.trade.optimize import optimize

    files = build_files(optimize(load_scenario(None)), "unused", plots=False, report=True)
    folder = write_results(tmp_path_factory.mktemp("browser") / "cinder-lark", files)
    return folder / "report.html"


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    profile = tmp_path_factory.mktemp("chromium-profile")  # a fresh profile, never the user's
    with sync_api.sync_playwright() as pw:
        context = pw.chromium.launch_persistent_context(str(profile), executable_path=CHROMIUM, args=ARGS,
                                                        headless=True, viewport={"width": 1200, "height": 900})
        try:
            yield context
        finally:
            context.close()


@pytest.fixture(scope="module")
def loaded(browser, report_file):
    """The page loaded from its file URL, with every console message, page error and request recorded."""
    page = browser.new_page()
    record = {"console": [], "errors": [], "requests": []}
    page.on("console", lambda m: record["console"].append((m.type, m.text)))
    page.on("pageerror", lambda e: record["errors"].append(str(e)))
    page.on("request", lambda r: record["requests"].append(r.url))
    page.goto(report_file.as_uri(), wait_until="load")
    yield page, record
    page.close()


def test_loads_from_a_file_url_without_console_errors_or_network_requests(loaded, report_file):
    # Catches: a stylesheet, font, script or image fetched from the network (the page must read offline),
    # and markup or inline SVG that the browser reports as broken.
    page, record = loaded
    assert record["errors"] == []
    assert [m for m in record["console"] if m[0] in ("error", "warning")] == []
    assert record["requests"] and record["requests"][0] == report_file.as_uri()
    assert all(re.match(r"(file|data):", url) for url in record["requests"]), record["requests"]
    assert page.title().startswith("Link trade: cinder-lark")
    assert page.locator("section").count() == 10
    assert page.locator("figure svg").count() == 5


def test_a_screenshot_is_not_blank(loaded, tmp_path):
    # Catches: a page that renders white (CSS hiding the body, SVG that fails to draw, a wrong encoding).
    from PIL import Image, ImageStat

    page, _ = loaded
    png = page.screenshot(full_page=True)
    (tmp_path / "report.png").write_bytes(png)
    image = Image.open(io.BytesIO(png)).convert("L")
    assert image.height > 3000  # the whole report, not one screen
    stats = ImageStat.Stat(image)
    assert stats.stddev[0] > 20, stats.stddev
    dark = sum(image.histogram()[:128]) / (image.width * image.height)
    assert dark > 0.01, dark  # text and figures, not a near-empty page
    figure = Image.open(io.BytesIO(page.locator("figure svg").first.screenshot())).convert("L")
    assert ImageStat.Stat(figure).stddev[0] > 20  # the first figure draws too


@pytest.mark.parametrize("paper", ["A4", "Letter"])
def test_printing_to_pdf_gives_at_least_two_pages(loaded, paper):
    # Catches: a print stylesheet that hides the content or collapses it to one page, and a print that fails.
    page, _ = loaded
    pdf = page.pdf(format=paper, print_background=True)
    assert pdf.startswith(b"%PDF-")
    pages = len(re.findall(rb"/Type\s*/Page(?![s\w])", pdf))
    assert pages >= 2, pages
