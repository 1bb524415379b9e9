"""The whole flow in a real browser: Debian's Chromium driven by Playwright.

Starts ``streamlit run app.py`` on 127.0.0.1 at a free port, uploads a CSV, walks the
four pages, waits for the plotly charts to be drawn and saves screenshots under
tests/artifacts/ (git-ignored). Skips when /usr/bin/chromium is absent (a failure in
CI, where QCNORM_REQUIRE_BROWSER is set). Never runs ``playwright install``.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from browser_util import streamlit_server
from conftest import ROOT, skip_or_fail

pytestmark = pytest.mark.browser

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]
DEMO = ROOT / "demo_data" / "line3_spool_last_shift.csv"


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    """A streamlit server for this module; always stopped (its whole process group)."""
    if not Path(CHROMIUM).exists():
        skip_or_fail("Chromium not installed at /usr/bin/chromium", "QCNORM_REQUIRE_BROWSER")
    log = tmp_path_factory.mktemp("browser") / "server.log"
    with streamlit_server(log) as url:
        yield url


@pytest.fixture(scope="module")
def browser():
    if not Path(CHROMIUM).exists():
        skip_or_fail("Chromium not installed at /usr/bin/chromium", "QCNORM_REQUIRE_BROWSER")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            yield b
        finally:
            b.close()


def _wait_idle(page, timeout: float = 30_000) -> None:
    """Wait until the app has finished its rerun: no 'running' widget, no stale element."""
    page.wait_for_timeout(300)
    page.wait_for_function(
        "() => !document.querySelector('[data-testid=\"stStatusWidget\"]')"
        " && !document.querySelector('[data-stale=\"true\"]')", timeout=timeout)


def _go(page, title: str, marker: str) -> None:
    """Open a page from the sidebar and wait for a text only that page shows."""
    page.locator('[data-testid="stSidebar"]').get_by_text(title, exact=True).click()
    page.get_by_text(marker).first.wait_for(timeout=30_000)
    _wait_idle(page)


def _shot(page, path: Path) -> None:
    """Screenshot of the whole page: the app scrolls inside its own container, so the
    viewport is made tall enough for the content first."""
    size = page.viewport_size
    h = page.evaluate(
        "() => Math.max(...[...document.querySelectorAll('[data-testid=\"stMain\"], "
        "[data-testid=\"stAppViewContainer\"] section, .main')].map(e => e.scrollHeight), 0)")
    page.set_viewport_size({"width": size["width"], "height": max(size["height"], min(int(h) + 40, 6000))})
    page.wait_for_timeout(600)  # plotly re-lays out on resize
    page.screenshot(path=str(path), full_page=True)
    page.set_viewport_size(size)


def _charts(page, n: int, timeout: float = 30_000) -> int:
    page.wait_for_function(
        f"() => document.querySelectorAll('.js-plotly-plot .main-svg').length >= {n}", timeout=timeout)
    return page.locator(".js-plotly-plot").count()


def _no_traceback(page) -> None:
    text = page.locator("body").inner_text()
    assert "Traceback" not in text
    assert page.locator('[data-testid="stException"]').count() == 0


@pytest.mark.parametrize("width,height,tag", [(1600, 1000, "wide"), (1280, 800, "laptop")])
def test_upload_and_walk_the_flow(server, browser, artifacts_dir, width, height, tag):
    page = browser.new_page(viewport={"width": width, "height": height})
    try:
        page.goto(server, wait_until="domcontentloaded")
        page.get_by_text("Upload a file").click()
        page.locator('input[type="file"]').set_input_files(str(DEMO))
        page.get_by_text(f"Loaded: {DEMO.name}").wait_for(timeout=30_000)
        page.get_by_text("What was read").wait_for(timeout=30_000)
        _wait_idle(page)
        body = page.locator("body").inner_text()
        assert "line3_spool_last_shift.csv" in body
        assert "Values used" in body
        _no_traceback(page)
        _shot(page, artifacts_dir / f"browser_{tag}_1_load.png")

        _go(page, "2 · Shape", "Normality before and after")
        assert _charts(page, 4) >= 4  # two histograms, two probability plots
        _no_traceback(page)
        _shot(page, artifacts_dir / f"browser_{tag}_2_shape.png")

        _go(page, "3 · Stability", "Assignable causes")
        assert _charts(page, 2) >= 2  # control chart and dispersion chart
        _no_traceback(page)
        _shot(page, artifacts_dir / f"browser_{tag}_3_stability.png")

        _go(page, "4 · Capability", "to compute capability")
        body = page.locator("body").inner_text()
        # no specs in an uploaded file: the page says what to do, and the caution is there
        assert "spec limit" in body
        assert "authorised person" in body
        _no_traceback(page)
        _shot(page, artifacts_dir / f"browser_{tag}_4_capability.png")
    finally:
        page.close()


def test_demo_with_specs_capability(server, browser, artifacts_dir):
    """The demo data (specs pre-filled) reaches a verdict in the browser."""
    page = browser.new_page(viewport={"width": 1500, "height": 1000})
    try:
        page.goto(server, wait_until="domcontentloaded")
        page.get_by_text("What was read").wait_for(timeout=30_000)
        _wait_idle(page)
        _go(page, "3 · Stability", "Assignable causes")
        _charts(page, 2)
        _no_traceback(page)
        _shot(page, artifacts_dir / "browser_demo_3_stability.png")
        _go(page, "4 · Capability", "Out of specification")
        _charts(page, 1)
        body = page.locator("body").inner_text()
        assert "Verdict" in body and "Cpk" in body
        assert "authorised person" in body
        _no_traceback(page)
        _shot(page, artifacts_dir / "browser_demo_4_capability.png")
    finally:
        page.close()


def test_not_a_table_shows_a_message(server, browser, artifacts_dir, tmp_path):
    bad = tmp_path / "photo.csv"
    bad.write_bytes(b"\x89PNG\r\n\x1a\n" + bytes(range(256)) * 4)
    page = browser.new_page(viewport={"width": 1280, "height": 800})
    try:
        page.goto(server, wait_until="domcontentloaded")
        page.get_by_text("Upload a file").click()
        page.locator('input[type="file"]').set_input_files(str(bad))
        page.locator('[data-testid="stAlertContentError"]').first.wait_for(timeout=30_000)
        _no_traceback(page)
        _shot(page, artifacts_dir / "browser_bad_file.png")
    finally:
        page.close()
