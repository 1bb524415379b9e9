"""No user text as markup (issue 12): typed or file-borne text is shown as text on every page.

A file named, headed and labelled with markup, units typed as markup, and a shift saved,
frozen and reviewed with markup in every free-text field go through every page
(Streamlit's AppTest, no browser). Each text element the page sends is Markdown (or
Markdown with raw HTML for the badges), each plotly figure reads a subset of HTML; the
check is that none of the markup could open there:

- in Markdown, ``<b>``, ``<script>``, ``**``, ``[link](…)`` and ``:colour[…]`` must appear
  only backslash-escaped (CommonMark 0.31, section 2.4: a backslash-escaped ASCII
  punctuation character stands for itself) — and the escaped text must be there, so the
  name is shown, not dropped;
- in a plotly figure (it reads <b>, <br>, <a href> … in titles, labels and hover text),
  the typed ``<b>``/``<script>`` appear only HTML-escaped (``&lt;b&gt;``).

The browser test (tests/test_browser_signin.py) checks the rendered page itself.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pytest
from streamlit.testing.v1 import AppTest

from qcnorm.store import HistoryStore
from qcnorm.ui.common import esc, md

ROOT = Path(__file__).resolve().parents[1]
APP = str(ROOT / "app.py")

EVIL = "<b>x</b> <script>alert(1)</script> **bold** [link](http://example.com) :red-background[APPROVED]"
#: markup that must never reach a Markdown renderer unescaped (a backslash before it = text)
_MD_OPENERS = [r"<b>", r"</b>", r"<script", r"\*\*bold", r"\[link\]", r"\(http", r":red-background\["]
_MD_BAD = re.compile("|".join(rf"(?<!\\){p}" for p in _MD_OPENERS))


@pytest.fixture
def db(tmp_path, monkeypatch) -> Path:
    path = tmp_path / "history.sqlite3"
    monkeypatch.setenv("QCNORM_DB", str(path))
    return path


def _file() -> bytes:
    rng = np.random.default_rng(12)
    x = np.round(rng.lognormal(np.log(3.0), 0.3, 60), 3)
    lines = [f"Part,Batch,{EVIL}"] + [f"P{i},<b>B{i // 5}</b>,{v}" for i, v in enumerate(x)]
    return ("\n".join(lines) + "\n").encode()


def _run(at: AppTest) -> AppTest:
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def _go(at: AppTest, key: str) -> AppTest:
    at.session_state["qc_page"] = key
    return _run(at)


def _texts(at: AppTest) -> list[str]:
    """Every Markdown string the page sent: text elements, alerts, metric and widget labels."""
    out: list[str] = []
    for kind in ("markdown", "caption", "info", "success", "warning", "error", "title", "header",
                 "subheader", "toast"):
        out += [str(e.value) for e in at.get(kind)]
    for kind in ("text_input", "text_area", "number_input", "selectbox", "radio", "checkbox", "toggle",
                 "button", "metric", "expander"):
        out += [str(getattr(e, "label", "") or "") for e in at.get(kind)]
    return out


def _figures(at: AppTest) -> list[str]:
    return [e.proto.spec for e in at.get("plotly_chart")]


def _strings(obj) -> list[str]:
    if isinstance(obj, str):
        return [obj]
    if isinstance(obj, dict):
        return [s for v in obj.values() for s in _strings(v)]
    if isinstance(obj, list):
        return [s for v in obj for s in _strings(v)]
    return []


def _check_page(at: AppTest, page: str, *, seen: dict[str, int]) -> None:
    texts = _texts(at)
    bad = [t for t in texts if _MD_BAD.search(t)]
    assert not bad, f"{page}: markup typed by a user reaches a Markdown renderer: {bad[:3]}"
    seen[page] = sum(md("<b>x</b>") in t for t in texts)
    for spec in _figures(at):
        strings = _strings(json.loads(spec))
        raw = [s for s in strings if "<b>x</b>" in s or "<script>" in s or "<b>B" in s]
        assert not raw, f"{page}: markup typed by a user reaches a plotly label: {raw[:3]}"


def test_markup_in_names_comments_and_labels_is_shown_as_text(db):
    at = AppTest.from_file(APP, default_timeout=90)
    _run(at)
    at.radio(key="qc_source_kind").set_value("upload").run()
    at.file_uploader(key="qc_upload").set_value(("<b>x</b>.csv", _file(), "text/csv")).run()
    _run(at)
    at.selectbox(key="qc_subgroup").set_value("Batch")
    at.text_input(key="qc_units").set_value("<b>µm</b>")
    at.number_input(key="qc_usl").set_value(6.0)
    _run(at)
    seen: dict[str, int] = {}
    _check_page(at, "load", seen=seen)
    for page in ("overview", "shape", "stability", "capability"):
        _go(at, page)
        _check_page(at, page, seen=seen)

    # technician: save with markup in every field; freeze a baseline with markup in its reason
    _go(at, "release")
    _check_page(at, "release", seen=seen)
    for key in ("rs_operator", "rs_shift", "rs_lot"):
        at.text_input(key=key).set_value(EVIL)
    at.text_area(key="rs_note").set_value(EVIL + "\n# not a heading\n- not a list")
    next(b for b in at.button if b.label == "Save this shift").click()
    _run(at)
    _check_page(at, "release (saved)", seen=seen)
    at.text_input(key="rs_freeze_by").set_value(EVIL)
    at.text_input(key="rs_freeze_reason").set_value(EVIL)
    if any(c.key == "rs_freeze_unstable" for c in at.checkbox):
        at.checkbox(key="rs_freeze_unstable").check()
    next(b for b in at.button if b.label == "Freeze as baseline").click()
    _run(at)
    _check_page(at, "release (frozen)", seen=seen)
    assert any("frozen" in t for t in _texts(at) if "Baseline #" in t), "the baseline was not frozen"

    # supervisor (single-user mode: a typed name): decision with markup in name and comment
    _go(at, "review")
    _check_page(at, "review", seen=seen)
    at.text_input(key="rs_reviewer").set_value(EVIL)
    at.radio(key="rs_decision").set_value("hold")
    at.text_area(key="rs_comment").set_value(EVIL)
    next(b for b in at.button if b.label == "Record decision").click()
    _run(at)
    assert not at.error, [e.value for e in at.error]
    _check_page(at, "review (decided)", seen=seen)
    _go(at, "history")
    _check_page(at, "history", seen=seen)

    # the names are shown (escaped), not dropped: on the pages that quote them
    for page in ("load", "release (saved)", "review (decided)"):
        assert seen[page] > 0, (page, seen)
    with HistoryStore(db) as s:
        (rec,) = s.list_analyses()
        assert rec.operator == EVIL and rec.lot == EVIL  # stored exactly as typed
        (rv,) = s.reviews_for(rec.id)
        assert rv.comment == EVIL


def test_escaping_helpers():
    # CommonMark 0.31 section 2.4 (backslash escapes) and the HTML standard's five escapes
    assert md("<b>x</b>") == r"\<b\>x\</b\>"
    assert md("**a** [l](u) :red[z] $m$ `c`") == r"\*\*a\*\* \[l\]\(u\) \:red\[z\] \$m\$ \`c\`"
    assert md("# h") == r"\# h" and md("- i") == r"\- i" and md("1. i") == r"1\. i"
    assert md("2026-11-25 C. Dana") == "2026-11-25 C. Dana"  # ordinary text is left alone
    assert md("a\n# b", multiline=True) == "a  \n\\# b" and md("a\nb") == "a b"
    assert md(None) == "" and esc(None) == ""
    assert esc("<b>\"x\" & 'y'</b>") == "&lt;b&gt;&quot;x&quot; &amp; &#x27;y&#x27;&lt;/b&gt;"


def test_markup_in_account_names_is_shown_as_text_in_team_mode(tmp_path, monkeypatch):
    """Team mode: a full name with markup (set by an administrator) on the sidebar, the save
    and review pages, the signing box, the decision trail, history, audit and accounts."""
    db = tmp_path / "team.sqlite3"
    monkeypatch.setenv("QCNORM_DB", str(db))
    with HistoryStore(db) as s:
        ada = s.add_user("ada", EVIL, "administrator", "admin-pass-9431")
        s.add_user("tina", EVIL, "technician", "tech-pass-5520", actor=ada)
        s.add_user("sam", EVIL, "supervisor", "super-pass-7718", actor=ada)

    def sign_in(at, user, pw):
        at.text_input(key="qc_signin_username").set_value(user)
        next(t for t in at.text_input if t.label == "Password").set_value(pw)
        next(b for b in at.button if b.label == "Sign in").click()
        _run(at)

    def check(at, page, seen):
        _check_page(at, page, seen=seen)
        side = [str(c.value) for c in at.sidebar.caption]
        assert not [t for t in side if _MD_BAD.search(t)], side

    seen: dict[str, int] = {}
    at = AppTest.from_file(APP, default_timeout=90)
    _run(at)
    sign_in(at, "tina", "tech-pass-5520")
    check(at, "load (team)", seen)
    _go(at, "release")
    check(at, "release (team)", seen)
    at.text_input(key="rs_shift").set_value(EVIL)
    next(b for b in at.button if b.label == "Save this shift").click()
    _run(at)
    check(at, "release (team, saved)", seen)
    at.sidebar.button(key="qc_sign_out").click()
    _run(at)
    sign_in(at, "sam", "super-pass-7718")
    _go(at, "review")
    at.radio(key="rs_decision").set_value("hold")
    _run(at)
    check(at, "review (team)", seen)
    at.text_area(key="rs_comment").set_value(EVIL)
    next(t for t in at.text_input if t.label.startswith("Your password")).set_value("super-pass-7718")
    next(b for b in at.button if b.label == "Sign decision").click()
    _run(at)
    assert "Review #1 recorded" in "\n".join(str(x.value) for x in at.success)
    check(at, "review (team, signed)", seen)
    for page in ("history", "audit"):
        _go(at, page)
        check(at, page + " (team)", seen)
    assert seen["review (team, signed)"] > 0, seen  # the name is shown, escaped
