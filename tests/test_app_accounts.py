"""Team mode in the app (issue 12): sign-in, roles, electronic signatures, audit, chain check.

Streamlit's AppTest against a SQLite history database that holds accounts (created with
the store's own API, as ``python -m qcnorm users add`` does). What is checked, and
against what:

- before sign-in no page but "Sign in" is drawn, whatever the session asks for;
- the identity recorded for a save, a baseline and a decision is the signed-in account,
  never a typed name (read back from the database);
- a decision is signed with the password re-entered at the moment of signing; a
  technician, an administrator and the account that saved the shift are refused with a
  message naming who may sign (separation of duties — the principle of 21 CFR Part 11
  §11.10(g) "authority checks" and EU GMP Annex 11 §12, from memory);
- the signature's analysis hash is the store's :func:`qcnorm.store.analysis_sha256` of
  the record, recomputed here with hashlib over the stored JSON (FIPS 180-4);
- a row changed directly in SQLite is named on the History page;
- no password, and no Argon2 hash (``$argon2id$`` prefix, RFC 9106 PHC string), appears in
  any element, the session state after the run, the audit page or its CSV.
"""

from __future__ import annotations

import sqlite3
from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

from qcnorm.store import HistoryStore

ROOT = Path(__file__).resolve().parents[1]
APP = str(ROOT / "app.py")

PASSWORDS = {"ada": "admin-pass-9431", "tina": "tech-pass-5520", "sam": "super-pass-7718",
             "kim": "super-pass-2204"}


@pytest.fixture
def team_db(tmp_path, monkeypatch) -> Path:
    path = tmp_path / "team.sqlite3"
    monkeypatch.setenv("QCNORM_DB", str(path))
    with HistoryStore(path) as s:
        ada = s.add_user("ada", "Ada Lind", "administrator", PASSWORDS["ada"])  # first-run path
        s.add_user("tina", "Tina Marsh", "technician", PASSWORDS["tina"], actor=ada)
        s.add_user("sam", "Sam Reyes", "supervisor", PASSWORDS["sam"], actor=ada)
        s.add_user("kim", "Kim Ortega", "supervisor", PASSWORDS["kim"], actor=ada)
    return path


def _run(at: AppTest) -> AppTest:
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def _go(at: AppTest, page: str) -> AppTest:
    at.session_state["qc_page"] = page
    return _run(at)


def _texts(at: AppTest) -> str:
    out = []
    for kind in ("markdown", "caption", "info", "success", "warning", "error", "title", "subheader"):
        out += [str(e.value) for e in at.get(kind)]
    return "\n".join(out)


def _button(at: AppTest, label: str):
    labels = [b.label for b in at.button]
    assert label in labels, labels
    return at.button[labels.index(label)]


def _field(at: AppTest, label: str):
    for t in at.text_input:
        if t.label == label:
            return t
    raise AssertionError(f"no field {label!r}: {[t.label for t in at.text_input]}")


def _no_secret(at: AppTest) -> None:
    """No password or password hash on the page or left in the session."""
    page = _texts(at) + "\n".join(str(t.value) for t in at.text_input)
    session = repr({k: at.session_state[k] for k in at.session_state})
    for pw in PASSWORDS.values():
        assert pw not in page and pw not in session
    assert "$argon2" not in page and "$argon2" not in session


def _sign_in(at: AppTest, username: str, password: str | None = None) -> AppTest:
    at.text_input(key="qc_signin_username").set_value(username)
    _field(at, "Password").set_value(PASSWORDS[username] if password is None else password)
    _button(at, "Sign in").click()
    _run(at)
    _no_secret(at)
    return at


def _sign_out(at: AppTest) -> AppTest:
    at.sidebar.button(key="qc_sign_out").click()
    return _run(at)


def _save_shift(at: AppTest, shift: str, lot: str = "L-4471") -> AppTest:
    _go(at, "release")
    assert "rs_operator" not in [t.key for t in at.text_input]  # no typed identity in team mode
    at.text_input(key="rs_shift").set_value(shift)
    at.text_input(key="rs_lot").set_value(lot)
    _button(at, "Save this shift").click()
    return _run(at)


def _sign(at: AppTest, decision: str, comment: str, password: str) -> AppTest:
    _go(at, "review")
    at.radio(key="rs_decision").set_value(decision)
    _run(at)
    at.text_area(key="rs_comment").set_value(comment)
    _field(at, "Your password (re-enter it to sign) *").set_value(password)
    _button(at, "Sign decision").click()
    _run(at)
    _no_secret(at)
    return at


def test_nothing_but_sign_in_before_signing_in(team_db):
    at = AppTest.from_file(APP, default_timeout=90)
    _run(at)
    assert at.sidebar.radio(key="qc_page").options == ["Sign in"]
    assert at.title[0].value == "Sign in"
    assert not at.get("plotly_chart") and not at.dataframe and not at.metric
    # the page boundary asks the same question as the navigation (a session that asks for
    # another page is sent to sign-in by app.py, and run_page refuses to draw it)
    from qcnorm.ui import registry
    from qcnorm.ui.auth import Context
    nobody = Context("team", None)
    assert [p.key for p in registry.PAGES if registry.allowed(p, nobody)] == ["signin"]
    # a wrong password: a plain message, nobody signed in, the field emptied
    _sign_in(at, "tina", "not-her-password")
    assert "incorrect" in _texts(at).lower() or "wrong" in _texts(at).lower(), _texts(at)
    assert at.session_state["qc_user"] is None
    assert _field(at, "Password").value == ""
    with HistoryStore(team_db) as s:
        actions = [e.action for e in s.audit_events()]
    assert "sign_in_failed" in actions, actions


def test_technician_saves_supervisor_signs_and_the_record_says_who(team_db):
    at = AppTest.from_file(APP, default_timeout=90)
    _run(at)
    _sign_in(at, "tina")
    assert at.session_state["qc_user"].username == "tina"
    side = "\n".join(str(c.value) for c in at.sidebar.caption)
    assert "Tina Marsh" in side and "technician" in side
    assert "Audit trail" not in [registry_title for registry_title in at.sidebar.radio(key="qc_page").options]
    _save_shift(at, "2026-11-25 C")
    assert "Saved as analysis #1" in _texts(at)

    # the technician may not sign, and is told who may; no password field is offered
    _go(at, "review")
    refusal = "\n".join(str(w.value) for w in at.warning)
    assert "technician cannot sign" in refusal and "supervisor who did not save" in refusal
    assert "Your password (re-enter it to sign) *" not in [t.label for t in at.text_input]
    _sign_out(at)
    assert at.session_state["qc_user"] is None and at.title[0].value == "Sign in"

    # the supervisor signs: a wrong password is refused and records nothing
    _sign_in(at, "sam")
    _sign(at, "approve", "signals traced to the insert change; parts sorted", "wrong-password")
    assert "Not signed" in _texts(at)
    with HistoryStore(team_db) as s:
        assert s.reviews_for(1) == []
    _go(at, "review")
    meaning = _texts(at)
    at.radio(key="rs_decision").set_value("approve")
    _run(at)
    assert ("By signing you approve release of lot **L-4471** (Ra, shift 2026-11-25 C, analysis #1) on the "
            "evidence shown on this page") in _texts(at), meaning
    _sign(at, "approve", "signals traced to the insert change; parts sorted", PASSWORDS["sam"])
    assert "Review #1 recorded" in _texts(at) and "signed by Sam Reyes (sam)" in _texts(at)
    assert "Electronically signed by **Sam Reyes** (sam), meaning *approved*" in _texts(at)

    with HistoryStore(team_db) as s:
        (rec,) = s.list_analyses()
        (rv,) = s.reviews_for(rec.id)
        assert (rec.saved_by_username, rec.operator) == ("tina", "Tina Marsh")
        assert (rv.signed, rv.signer_username, rv.signer_full_name, rv.meaning) == (True, "sam", "Sam Reyes", "approved")
        assert rv.signed_at_utc and rv.analysis_sha256 and len(rv.analysis_sha256) == 64
        events = s.audit_events()
        csv = s.audit_csv()
    actions = [e.action for e in events]
    for expected in ("sign_in", "sign_in_failed", "analysis_saved", "review_signed"):
        assert expected in actions, (expected, actions)

    # history: the chain holds and says so
    _go(at, "history")
    assert "Record intact" in "\n".join(str(x.value) for x in at.success)

    # the audit trail: readable by the supervisor, downloadable, no password or hash in it
    _go(at, "audit")
    assert at.title[0].value == "Audit trail"
    assert len(at.dataframe[0].value) == len(events)
    for pw in PASSWORDS.values():
        assert pw not in csv
    assert "$argon2" not in csv
    _no_secret(at)

    # a direct UPDATE in the database file (a rejected review would become an approval, here
    # the other way round) is named on the History page
    con = sqlite3.connect(team_db)
    con.execute("UPDATE review SET decision = 'reject' WHERE id = 1")
    con.commit()
    con.close()
    _go(at, "history")
    errors = "\n".join(str(e.value) for e in at.error)
    assert "Record NOT intact" in errors and "review 1" in errors, errors


def test_the_person_who_saved_may_not_sign_and_an_administrator_may_not_sign(team_db):
    at = AppTest.from_file(APP, default_timeout=90)
    _run(at)
    _sign_in(at, "kim")  # a supervisor saves a shift herself
    _save_shift(at, "2026-11-26 A", lot="L-4472")
    _go(at, "review")
    refusal = "\n".join(str(w.value) for w in at.warning)
    assert "You saved this shift" in refusal and "different supervisor" in refusal
    # the store refuses too, whatever the page offers (the page is not the only guard)
    with HistoryStore(team_db) as s:
        kim = next(u for u in s.list_users() if u.username == "kim")
        from qcnorm.errors import PermissionDenied
        with pytest.raises(PermissionDenied, match="different supervisor"):
            s.save_review(1, "approve", "ok", signer=kim, password=PASSWORDS["kim"])
    _sign_out(at)

    _sign_in(at, "ada")
    options = at.sidebar.radio(key="qc_page").options
    assert "Accounts" in options and "Audit trail" in options
    _go(at, "review")
    refusal = "\n".join(str(w.value) for w in at.warning)
    assert "administrator" in refusal and "does not sign releases" in refusal
    # accounts panel: add a technician, then disable the account
    _go(at, "accounts")
    at.text_input(key="qc_acc_username").set_value("lee")
    at.text_input(key="qc_acc_full_name").set_value("Lee Park")
    at.selectbox(key="qc_acc_role").set_value("technician")
    _field(at, "First password").set_value("lee-first-pass-1")
    _field(at, "First password again").set_value("lee-first-pass-1")
    _button(at, "Add account").click()
    _run(at)
    assert "Account added" in _texts(at)
    assert "lee-first-pass-1" not in _texts(at) + repr({k: at.session_state[k] for k in at.session_state})
    at.selectbox(key="qc_acc_pick").set_value("lee")
    _run(at)
    _button(at, "Disable").click()
    _run(at)
    with HistoryStore(team_db) as s:
        lee = next(u for u in s.list_users() if u.username == "lee")
    assert (lee.full_name, lee.role, lee.active) == ("Lee Park", "technician", False)


def test_single_user_mode_says_so_on_every_page(tmp_path, monkeypatch):
    monkeypatch.setenv("QCNORM_DB", str(tmp_path / "solo.sqlite3"))
    at = AppTest.from_file(APP, default_timeout=90)
    _run(at)
    options = at.sidebar.radio(key="qc_page").options
    assert "Sign in" not in options and "Accounts" not in options
    assert at.title[0].value == "Load"  # make run opens straight on the demo data
    for page in ("load", "overview", "shape", "stability", "capability", "release", "review", "history", "audit"):
        _go(at, page)
        notes = "\n".join(str(i.value) for i in at.info)
        assert "Single-user mode" in notes and "not electronic signatures" in notes, page


def test_lockout_after_repeated_wrong_passwords_and_an_administrator_unlocks(team_db):
    from qcnorm.store import MAX_FAILURES

    at = AppTest.from_file(APP, default_timeout=90)
    _run(at)
    for _ in range(MAX_FAILURES):
        _sign_in(at, "tina", "guess-again")
    _sign_in(at, "tina")  # the right password, but the account is locked now
    assert at.session_state["qc_user"] is None
    assert "locked" in "\n".join(str(e.value) for e in at.error).lower()
    _sign_in(at, "ada")
    _go(at, "accounts")
    at.selectbox(key="qc_acc_pick").set_value("tina")
    _run(at)
    _button(at, "Unlock").click()
    _run(at)
    assert "unlock done" in _texts(at)
    _sign_out(at)
    _sign_in(at, "tina")
    assert at.session_state["qc_user"].username == "tina"
    with HistoryStore(team_db) as s:
        actions = [e.action for e in s.audit_events()]
    assert "lockout" in actions and any("unlock" in a for a in actions), actions
