"""Release flow in a real browser: save a shift, review it, see it in the history.

Debian's Chromium driven by Playwright (never ``playwright install``); a streamlit server
of its own on a free port with QCNORM_DB pointing at a SQLite file under tmp, so the
test checks the database as well as the page. Screenshots go to tests/artifacts/.
The browser fixture and the page helpers are the ones of tests/test_browser.py.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from browser_util import streamlit_server
from conftest import skip_or_fail
from test_browser import CHROMIUM, _charts, _go, _no_traceback, _shot, _wait_idle, browser  # noqa: F401

from qcnorm.store import HistoryStore

pytestmark = pytest.mark.browser


@pytest.fixture(scope="module")
def release_server(tmp_path_factory):
    """(url, database path, server log path): streamlit with its own history database."""
    if not Path(CHROMIUM).exists():
        skip_or_fail("Chromium not installed at /usr/bin/chromium", "QCNORM_REQUIRE_BROWSER")
    tmp = tmp_path_factory.mktemp("release_browser")
    db, log = tmp / "history.sqlite3", tmp / "server.log"
    with streamlit_server(log, env={"QCNORM_DB": str(db)}) as url:
        yield url, db, log


def _fill(page, label: str, text: str) -> None:
    page.get_by_label(label, exact=True).fill(text)


def test_save_review_history_in_the_browser(release_server, browser, artifacts_dir):  # noqa: F811
    url, db, log = release_server
    page = browser.new_page(viewport={"width": 1500, "height": 1000})
    try:
        page.goto(url, wait_until="domcontentloaded")
        page.get_by_text("What was read").wait_for(timeout=30_000)
        _wait_idle(page)

        # Technician: save this shift.
        _go(page, "5 · Save & baseline", "Release checklist")
        body = page.locator("body").inner_text()
        assert str(db) in body and "authorised person" in body
        page.get_by_role("button", name="Save this shift").click()  # nothing typed yet
        page.get_by_text("Not saved: enter the operator's name").wait_for(timeout=30_000)
        _fill(page, "Operator (your name) *", "Dana Whit")
        _fill(page, "Shift label *", "2026-11-25 C")
        _fill(page, "Lot", "L-4471")
        page.get_by_role("button", name="Save this shift").click()
        page.get_by_text("Saved as analysis #1").wait_for(timeout=30_000)
        _wait_idle(page)
        _no_traceback(page)
        _shot(page, artifacts_dir / "browser_release_5_saved.png")

        # PDF summary of the current analysis: a real download.
        page.get_by_role("button", name="Prepare PDF summary").click()
        dl_button = page.get_by_role("button", name="Download PDF summary")
        dl_button.wait_for(timeout=60_000)
        with page.expect_download(timeout=30_000) as dl:
            dl_button.click()
        pdf_path = artifacts_dir / "browser_release_current.pdf"
        dl.value.save_as(str(pdf_path))
        assert pdf_path.read_bytes()[:5] == b"%PDF-"

        # Supervisor: the shift awaits review; open it and approve with a comment.
        _go(page, "6 · Review", "Awaiting review (1)")
        _charts(page, 1)
        body = page.locator("body").inner_text()
        assert "Dana Whit" in body and "2026-11-25 C" in body and "Release checklist" in body
        _no_traceback(page)
        _shot(page, artifacts_dir / "browser_release_6_review.png")
        page.get_by_role("button", name="Record decision").click()  # no name, no decision
        page.get_by_text("Decision not recorded").wait_for(timeout=30_000)
        _fill(page, "Reviewer (your name) *", "Sam Reyes")
        page.get_by_text("Approve", exact=True).click()
        _fill(page, "Comment", "signals traced to the insert change; parts sorted")
        page.get_by_role("button", name="Record decision").click()
        page.get_by_text("Review #1 recorded").wait_for(timeout=30_000)
        _wait_idle(page)
        _no_traceback(page)
        _shot(page, artifacts_dir / "browser_release_6_decided.png")

        # History: the shift with its decision, the capability chart over shifts.
        _go(page, "7 · History", "Shifts and decisions")
        _charts(page, 2)
        # (tables are drawn on a canvas: their content is checked in the database below)
        assert "Every decision" in page.locator("body").inner_text()
        _no_traceback(page)
        _shot(page, artifacts_dir / "browser_release_7_history.png")
    finally:
        page.close()

    with HistoryStore(db) as s:
        (rec,) = s.list_analyses()
        (rv,) = s.reviews_for(rec.id)
        assert s.verify(rec.id)
    assert (rec.operator, rec.shift, rec.lot) == ("Dana Whit", "2026-11-25 C", "L-4471")
    assert (rv.decision, rv.reviewer) == ("approve", "Sam Reyes")
    assert f"qcnorm history database: sqlite:///{db}" in log.read_text()
