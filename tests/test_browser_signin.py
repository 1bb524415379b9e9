"""Team mode in a real browser: sign in, save, sign out, sign the release, find it in the PDF.

Debian's Chromium driven by Playwright (never ``playwright install``); a streamlit server
of its own with QCNORM_DB pointing at a SQLite file that holds a technician and a
supervisor, created with the store's API (as ``python -m qcnorm users add`` does). The
technician signs in and saves the shift, signs out; the supervisor signs in, approves
with the password re-entered, and downloads the PDF, whose text (pypdf) must carry the
signature. No password and no Argon2 hash (``$argon2id$``, RFC 9106 PHC string) may show
on any page or in the server log. A note typed with markup must show as text in the
rendered page (no <b> element, no script run). Screenshots go to tests/artifacts/.
"""

from __future__ import annotations

import io
import re
import shutil
from pathlib import Path

import pytest

from browser_util import streamlit_server
from conftest import skip_or_fail
from test_browser import CHROMIUM, _go, _no_traceback, _shot, _wait_idle, browser  # noqa: F401

from qcnorm.store import HistoryStore

pytestmark = pytest.mark.browser

PASSWORDS = {"ada": "admin-pass-9431", "tina": "tech-pass-5520", "sam": "super-pass-7718"}
NOTE = "<b>x</b> <script>window.__qcInjected = 1</script> **not bold**"


@pytest.fixture(scope="module")
def team_server(tmp_path_factory):
    """(url, database path, server log path): streamlit on a history database with accounts."""
    if not Path(CHROMIUM).exists():
        skip_or_fail("Chromium not installed at /usr/bin/chromium", "QCNORM_REQUIRE_BROWSER")
    tmp = tmp_path_factory.mktemp("signin_browser")
    db, log = tmp / "team.sqlite3", tmp / "server.log"
    with HistoryStore(db) as s:
        ada = s.add_user("ada", "Ada Lind", "administrator", PASSWORDS["ada"])
        s.add_user("tina", "Tina Marsh", "technician", PASSWORDS["tina"], actor=ada)
        s.add_user("sam", "Sam Reyes", "supervisor", PASSWORDS["sam"], actor=ada)
    with streamlit_server(log, env={"QCNORM_DB": str(db)}) as url:
        yield url, db, log


def _no_secret(text: str, where: str) -> None:
    for pw in PASSWORDS.values():
        assert pw not in text, f"a password shows on {where}"
    assert "$argon2" not in text, f"a password hash shows on {where}"


def _body(page, where: str) -> str:
    text = page.locator("body").inner_text()
    _no_secret(text, where)
    _no_secret(page.content(), where + " (HTML)")
    _no_traceback(page)
    return text


def _sign_in(page, username: str) -> None:
    page.get_by_role("button", name="Sign in").wait_for(timeout=30_000)
    page.get_by_label("User name", exact=True).fill(username)
    page.get_by_label("Password", exact=True).fill(PASSWORDS[username])
    page.get_by_role("button", name="Sign in").click()
    page.get_by_text("Signed in:", exact=False).first.wait_for(timeout=30_000)
    _wait_idle(page)
    assert page.get_by_label("Password", exact=True).count() == 0  # the sign-in form is gone


def _shots(page, artifacts_dir: Path, name: str) -> Path:
    path = artifacts_dir / name
    _shot(page, path)
    extra = Path("/tmp/shots")
    extra.mkdir(parents=True, exist_ok=True)
    shutil.copy(path, extra / name)
    return path


def test_sign_in_save_sign_out_sign_the_release_and_find_it_in_the_pdf(team_server, browser, artifacts_dir):  # noqa: F811
    from pypdf import PdfReader

    url, db, log = team_server
    page = browser.new_page(viewport={"width": 1400, "height": 950})
    try:
        page.goto(url, wait_until="domcontentloaded")
        page.get_by_role("button", name="Sign in").wait_for(timeout=30_000)
        _wait_idle(page)
        body = _body(page, "the sign-in page")
        assert "authorised person" in body and "What was read" not in body  # nothing but sign-in
        _shots(page, artifacts_dir, "signin_1_page.png")

        # a wrong password: a plain message, still on the sign-in page
        page.get_by_label("User name", exact=True).fill("tina")
        page.get_by_label("Password", exact=True).fill("not-her-password")
        page.get_by_role("button", name="Sign in").click()
        page.get_by_text("Not signed in", exact=False).or_(page.get_by_text("incorrect", exact=False)).first.wait_for(timeout=30_000)
        _wait_idle(page)
        assert page.get_by_label("Password", exact=True).input_value() == ""  # emptied
        _shots(page, artifacts_dir, "signin_2_wrong_password.png")

        # technician: signs in, lands on the demo data, saves the shift under her account
        _sign_in(page, "tina")
        page.get_by_text("What was read").wait_for(timeout=60_000)
        side = page.locator('[data-testid="stSidebar"]').inner_text()
        assert "Tina Marsh" in side and "technician" in side
        _go(page, "5 · Save & baseline", "Release checklist")
        body = _body(page, "the save page")
        assert "Saved by" in body and "Operator (your name)" not in body
        page.get_by_label("Shift label *", exact=True).fill("2026-11-25 C")
        page.get_by_label("Lot", exact=True).fill("L-4471")
        page.get_by_label("Note", exact=True).fill(NOTE)
        page.get_by_role("button", name="Save this shift").click()
        page.get_by_text("Saved as analysis #1").wait_for(timeout=30_000)
        _wait_idle(page)
        _body(page, "the save page after saving")
        page.locator('[data-testid="stSidebar"]').get_by_role("button", name="Sign out").click()

        # supervisor: signs in, opens the shift, signs the approval with her password
        _sign_in(page, "sam")
        _go(page, "6 · Review", "Awaiting review (1)")
        body = _body(page, "the review page")
        assert "Record intact" in body
        assert "Reviewer (your name)" not in body  # no typed identity in team mode
        # the note typed with markup is shown as text: no <b> element, no script run
        assert "<b>x</b>" in body and "**not bold**" in body  # the characters as typed
        assert page.evaluate("() => window.__qcInjected === undefined")
        assert page.locator('[data-testid="stMain"] b', has_text=re.compile(r"^x$")).count() == 0
        page.get_by_text("Approve", exact=True).click()
        page.get_by_text("By signing you approve release of lot").wait_for(timeout=30_000)
        _wait_idle(page)
        page.get_by_label("Comment", exact=True).fill("signals traced to the insert change; parts sorted")
        page.get_by_label("Your password (re-enter it to sign) *", exact=True).fill(PASSWORDS["sam"])
        _shots(page, artifacts_dir, "signin_3_review_signing.png")
        page.get_by_role("button", name="Sign decision").click()
        page.get_by_text("Review #1 recorded").wait_for(timeout=30_000)
        _wait_idle(page)
        body = _body(page, "the review page after signing")
        assert "Electronically signed by Sam Reyes (sam)" in body
        _shots(page, artifacts_dir, "signin_4_review_signed.png")

        # the PDF of the saved shift carries the signature
        page.get_by_role("button", name="Prepare PDF summary").click()
        dl_button = page.get_by_role("button", name="Download PDF summary")
        dl_button.wait_for(timeout=60_000)
        with page.expect_download(timeout=30_000) as dl:
            dl_button.click()
        pdf_path = artifacts_dir / "browser_signed_release.pdf"
        dl.value.save_as(str(pdf_path))
        text = re.sub(r"\s+", " ", "\n".join(p.extract_text() for p in PdfReader(io.BytesIO(pdf_path.read_bytes())).pages))
        _no_secret(text, "the PDF")

        # the audit trail page (supervisor)
        _go(page, "Audit trail", "Download the audit trail (CSV)")
        _body(page, "the audit page")
        _shots(page, artifacts_dir, "signin_5_audit.png")
    finally:
        page.close()

    with HistoryStore(db) as s:
        (rec,) = s.list_analyses()
        (rv,) = s.reviews_for(rec.id)
        assert s.verify_chain().ok
    assert rec.saved_by_username == "tina" and rec.note == NOTE
    assert (rv.signed, rv.signer_username, rv.meaning) == (True, "sam", "approved")
    assert "Signed by Sam Reyes (sam)" in text
    assert "Meaning approved" in text
    assert rv.signed_at_utc[:19].replace("T", " ") + " UTC" in text
    assert rv.analysis_sha256 in text.replace(" ", "")
    _no_secret(log.read_text(errors="replace"), "the server log")
