"""Accounts, roles, electronic signatures, the audit trail and the record chain of the
history store, on SQLite and PostgreSQL (the PostgreSQL fixture and skip policy are
those of tests/test_store.py and conftest.py).

External references: hashes are recomputed here with ``hashlib.sha256`` (FIPS 180-4)
over the byte layouts documented in qcnorm/store (data fingerprint, analysis hash);
the previous schema comes from the frozen pre-Alembic DDL in tests/store_legacy.py;
password hashes are checked to be Argon2id encodings (RFC 9106, "$argon2id$" prefix as
argon2-cffi writes them); the lockout rule (5 consecutive failures, 15 minutes) is the
project's stated policy.
"""

from __future__ import annotations

import getpass
import hashlib
import io
import json
import logging
import threading
from datetime import datetime, timedelta, timezone

import pytest
import sqlalchemy as sa

import qcnorm.store._common as store_common
from qcnorm.cli import main
from qcnorm.errors import AuthError, ConfigError, PermissionDenied, StoreError
from qcnorm.store import (
    ROLES, SCHEMA_VERSION, SINGLE_USER_LABEL, HistoryStore, User, data_sha256, local_user_label, may,
)
from store_legacy import create_legacy
from test_store import ANALYSIS, VALUES, db_url, pg_admin  # noqa: F401  (fixtures)

PW = {"boss": "admin-pass-1", "kim": "tech-pass-11", "sam": "super-pass-1", "ria": "super-pass-2"}
CHAR = "bore diameter"


@pytest.fixture
def team(db_url: str):
    """A team-mode store: administrator boss, technician kim, supervisors sam and ria."""
    with HistoryStore(db_url) as s:
        boss = s.add_user("boss", "Bea Oswald", "administrator", PW["boss"])
        users = {"boss": boss}
        for name, full, role in (("kim", "Kim Lee", "technician"), ("sam", "Sam Okafor", "supervisor"),
                                 ("ria", "Ria Patel", "supervisor")):
            users[name] = s.add_user(name, full, role, PW[name], actor=boss)
        s.save_characteristic(CHAR, units="mm", lsl=9.9, usl=10.1, actor=users["kim"])
        yield s, users


def _save(s: HistoryStore, who: User | None, **kw) -> int:
    return s.save_analysis(CHAR, analysis=ANALYSIS, values=VALUES, qcnorm_version="0.1.0", saved_by=who, **kw)


def _sql(db_url: str, statement: str, **params) -> None:
    eng = sa.create_engine(db_url)
    try:
        with eng.begin() as conn:
            conn.execute(sa.text(statement), params)
    finally:
        eng.dispose()


# --------------------------------------------------------------------------- modes
def test_single_user_mode_is_explicit(db_url: str):
    with HistoryStore(db_url) as s:
        assert not s.accounts_enabled and s.list_users() == []
        s.save_characteristic(CHAR, lsl=9.9, usl=10.1)
        aid = _save(s, None)
        rid = s.save_review(aid, "approve", "looks fine", reviewer="Sam")
        rec = s.get_analysis(aid)
        login = getpass.getuser()
        assert (rec.saved_by_id, rec.saved_by_username, rec.saved_by_full_name) == (None, login, SINGLE_USER_LABEL)
        rv = s.reviews_for(aid)[0]
        assert rv.id == rid and rv.signed is False and rv.signer_full_name == SINGLE_USER_LABEL
        assert rv.reviewer == "Sam" and rv.meaning == "approved"
        assert "not an electronic signature" in SINGLE_USER_LABEL
        assert local_user_label() == f"{login} — {SINGLE_USER_LABEL}"
        assert s.verify_chain().ok


def test_first_run_path_then_an_administrator_is_required(db_url: str):
    with HistoryStore(db_url) as s:
        boss = s.add_user("Boss", "Bea Oswald", "administrator", PW["boss"])
        assert boss == User(id=boss.id, username="boss", full_name="Bea Oswald", role="administrator", active=True)
        assert s.accounts_enabled
        with pytest.raises(PermissionDenied, match="Only an administrator may add accounts"):
            s.add_user("kim", "Kim Lee", "technician", PW["kim"])
        kim = s.add_user("kim", "Kim Lee", "technician", PW["kim"], actor=boss)
        with pytest.raises(PermissionDenied, match=r"Kim Lee \(kim, technician\) may not manage accounts.*administrator"):
            s.add_user("zed", "Zed", "technician", "zed-pass-12", actor=kim)
        with pytest.raises(ConfigError, match="already exists"):
            s.add_user("kim", "Kim Other", "technician", "other-pass-1", actor=boss)
        with pytest.raises(ConfigError, match="at least 8 characters"):
            s.add_user("zed", "Zed", "technician", "short", actor=boss)
        with pytest.raises(ConfigError, match="role"):
            s.add_user("zed", "Zed", "operator", "zed-pass-12", actor=boss)
        assert [u.username for u in s.list_users()] == ["boss", "kim"]
        assert ROLES == ("technician", "supervisor", "administrator")


# --------------------------------------------------------------------------- roles
def test_role_checks_on_every_write_path(team):
    s, u = team
    aid = _save(s, u["kim"])
    calls = {
        "save_characteristic": lambda who: s.save_characteristic("runout", usl=0.05, actor=who),
        "save_analysis": lambda who: _save(s, who),
        "save_baseline": lambda who: s.save_baseline(CHAR, baseline={"center": 10.0, "sigma": 0.01}, values=VALUES,
                                                     reason="Phase I", actor=who),
        "sign_review": lambda who: s.save_review(aid, "hold", "wait", signer=who,
                                                 password=PW[who.username] if who else None),
        "manage_accounts": lambda who: s.set_role("ria", "supervisor", actor=who),
    }
    allowed = {"save_characteristic": {"kim", "sam", "ria"}, "save_analysis": {"kim", "sam", "ria"},
               "save_baseline": {"sam", "ria"}, "sign_review": {"sam", "ria"}, "manage_accounts": {"boss"}}
    for duty, call in calls.items():
        with pytest.raises(PermissionDenied, match="Sign in first"):
            call(None)
        for name in ("kim", "sam", "boss"):
            if name in allowed[duty]:
                call(u[name])
                assert may(u[name], duty)
            else:
                with pytest.raises(PermissionDenied, match=r"may not .*that needs an? (supervisor|technician|administrator)"):
                    call(u[name])
                assert not may(u[name], duty)
    # the role is read from the database, not from the User object handed in
    forged = User(id=u["kim"].id, username="kim", full_name="Kim Lee", role="supervisor", active=True)
    with pytest.raises(PermissionDenied, match="technician"):
        s.save_baseline(CHAR, baseline={"center": 10.0}, values=VALUES, reason="x", actor=forged)
    with pytest.raises(PermissionDenied, match="A typed reviewer name is not accepted"):
        s.save_review(aid, "approve", reviewer="Sam")
    assert s.verify_chain().ok


def test_same_person_refusal_and_administrator_signing(team):
    s, u = team
    aid = _save(s, u["sam"])
    with pytest.raises(PermissionDenied, match=r"Sam Okafor \(sam\) saved analysis .*a different supervisor must sign"):
        s.save_review(aid, "approve", "", signer=u["sam"], password=PW["sam"])
    with pytest.raises(PermissionDenied, match=r"administrator\) may not sign.*unless an administrator turns on"):
        s.save_review(aid, "approve", "", signer=u["boss"], password=PW["boss"])
    with pytest.raises(PermissionDenied, match="may not change store settings"):
        s.allow_administrator_signing(True, actor=u["sam"])
    s.allow_administrator_signing(True, actor=u["boss"])
    assert s.administrator_may_sign
    s.save_review(aid, "hold", "second look", signer=u["boss"], password=PW["boss"])
    s.allow_administrator_signing(False, actor=u["boss"])
    with pytest.raises(PermissionDenied):
        s.save_review(aid, "approve", "", signer=u["boss"], password=PW["boss"])
    assert s.reviews_for(aid)[-1].signer_username == "boss"


def test_signature_binds_signer_meaning_time_and_analysis_hash(team):
    s, u = team
    aid = _save(s, u["kim"], lot="L-17")
    before = datetime.now(timezone.utc)
    rid = s.save_review(aid, "reject", "Cpk below requirement", signer=u["sam"], password=PW["sam"])
    rv = s.reviews_for(aid)[0]
    assert rv.id == rid and rv.signed is True
    assert (rv.signer_id, rv.signer_username, rv.signer_full_name, rv.reviewer) == (u["sam"].id, "sam", "Sam Okafor", "Sam Okafor")
    assert (rv.decision, rv.meaning) == ("reject", "rejected")
    signed_at = datetime.fromisoformat(rv.signed_at_utc)
    assert signed_at.utcoffset() == timedelta(0) and before <= signed_at <= datetime.now(timezone.utc)
    # independent recomputation (hashlib, FIPS 180-4) over the documented bytes
    data_sha = hashlib.sha256("\n".join(repr(float(v)) for v in VALUES).encode()).hexdigest()
    text = json.dumps(ANALYSIS, sort_keys=True, separators=(",", ":"), ensure_ascii=False) + "\n" + data_sha
    assert rv.analysis_sha256 == hashlib.sha256(text.encode()).hexdigest()
    rec = s.get_analysis(aid)
    assert rec.latest_review == rv and rec.saved_by_username == "kim" and rec.data_sha256 == data_sha
    assert s.save_review(aid, "approved", "re-measured", signer=u["ria"], password=PW["ria"], supersedes=rid)
    assert [r.meaning for r in s.reviews_for(aid)] == ["rejected", "approved"]
    assert rv.to_dict()["signed"] is True


# --------------------------------------------------------------------------- sign-in
def test_wrong_password_and_lockout(team, monkeypatch):
    s, u = team
    assert s.authenticate("KIM", PW["kim"]) == u["kim"]
    with pytest.raises(AuthError, match=r"^Wrong username or password\.$"):
        s.authenticate("kim", "nope-nope")
    with pytest.raises(AuthError, match=r"^Wrong username or password\.$"):
        s.authenticate("nobody", PW["kim"])
    s.authenticate("kim", PW["kim"])  # a success resets the count
    for _ in range(4):
        with pytest.raises(AuthError, match="Wrong"):
            s.authenticate("kim", "nope-nope")
    with pytest.raises(AuthError, match="now locked for 15 minutes"):
        s.authenticate("kim", "nope-nope")
    with pytest.raises(AuthError, match=r"locked after 5 wrong passwords, until \d\d:\d\d UTC.*administrator"):
        s.authenticate("kim", PW["kim"])  # the right password does not open a locked account
    later = datetime.now(timezone.utc) + timedelta(minutes=16)
    monkeypatch.setattr(store_common, "now_utc", lambda: later)
    assert s.authenticate("kim", PW["kim"]) == u["kim"]
    monkeypatch.undo()
    for _ in range(5):
        with pytest.raises(AuthError):
            s.authenticate("kim", "nope-nope")
    with pytest.raises(PermissionDenied):
        s.unlock("kim", actor=u["sam"])
    s.unlock("kim", actor=u["boss"])
    assert s.authenticate("kim", PW["kim"]) == u["kim"]
    actions = [e.action for e in s.audit_events()]
    assert actions.count("lockout") == 2 and "account_unlocked" in actions and actions.count("sign_in_failed") >= 12


def test_wrong_password_at_signing_counts_and_records_nothing(team):
    s, u = team
    aid = _save(s, u["kim"])
    with pytest.raises(AuthError, match="Wrong username or password"):
        s.save_review(aid, "approve", "", signer=u["sam"], password="not-sams")
    with pytest.raises(AuthError, match="Re-enter your password"):
        s.save_review(aid, "approve", "", signer=u["sam"], password="")
    assert s.reviews_for(aid) == []
    assert s.audit_events(limit=1)[0].action == "sign_in_failed"
    assert "signature" in s.audit_events(limit=1)[0].detail


def test_disabled_account_and_last_administrator(team):
    s, u = team
    s.set_active("kim", False, actor=u["boss"])
    with pytest.raises(AuthError, match="disabled"):
        s.authenticate("kim", PW["kim"])
    with pytest.raises(PermissionDenied, match="disabled"):
        _save(s, u["kim"])  # a session opened before the account was disabled
    with pytest.raises(PermissionDenied, match="last active administrator"):
        s.set_active("boss", False, actor=u["boss"])
    with pytest.raises(PermissionDenied, match="last active administrator"):
        s.set_role("boss", "supervisor", actor=u["boss"])
    s.set_active("kim", True, actor=u["boss"])
    s.set_password("kim", "new-tech-pass", actor=u["kim"])  # the holder may change their own
    assert s.authenticate("kim", "new-tech-pass").username == "kim"
    with pytest.raises(PermissionDenied):
        s.set_password("sam", "hijacked-pass", actor=u["kim"])
    assert s.verify_chain().ok


# --------------------------------------------------------------------------- tamper evidence
TAMPER = {
    "reject turned into approval": ("UPDATE review SET decision = 'approve', meaning = 'approved' WHERE id = :rid",
                                    "review {rid}", "was changed after it was written"),
    "stored Cpk raised": ("UPDATE analysis SET analysis_json = REPLACE(analysis_json, '\"cpk\": 1.41', '\"cpk\": 2.41'), "
                          "cpk = 2.41 WHERE id = :aid", "analysis {aid}", "was changed after it was written"),
    "review deleted": ("DELETE FROM review WHERE id = :rid", "the record after audit event", "is missing"),
    "newest records deleted": ("DELETE FROM audit_event WHERE chain_seq = (SELECT max(chain_seq) FROM audit_event)",
                               "the record after review {rid}", "newest record"),
    "role raised": ("UPDATE user_account SET role = 'supervisor' WHERE username = 'kim'", "account kim", "outside qcnorm"),
    "row inserted by hand": ("INSERT INTO review (analysis_id, decision, reviewer, comment, created_at) "
                             "VALUES (:aid, 'approve', 'Sam Okafor', '', '2026-12-01T00:00:00+00:00')",
                             "review", "carries no seal"),
}


@pytest.mark.parametrize("case", list(TAMPER))
def test_chain_detects_direct_sql_changes(team, db_url: str, case: str):
    s, u = team
    aid = _save(s, u["kim"], lot="L-9")
    rid = s.save_review(aid, "reject", "out of tolerance", signer=u["sam"], password=PW["sam"])
    good = s.verify_chain()
    assert good.ok and good.first_bad is None and good.checked == good.head_seq > 10
    statement, where, words = TAMPER[case]
    if case == "review deleted":  # delete a review in the middle: a later one follows it
        other = _save(s, u["kim"], lot="L-10")
        s.save_review(other, "hold", "", signer=u["ria"], password=PW["ria"])
    _sql(db_url, statement, rid=rid, aid=aid)
    check = s.verify_chain()
    assert not check.ok
    assert check.first_bad.startswith(where.format(rid=rid, aid=aid)), check
    assert words in check.detail
    if case == "stored Cpk raised":
        assert s.get_analysis(aid).cpk == 2.41  # the edit is real; only the chain shows it
        with pytest.raises(StoreError, match="cannot be signed"):
            s.save_review(aid, "approve", "", signer=u["ria"], password=PW["ria"])


def test_concurrent_writers_keep_one_chain(db_url: str):
    """Four threads, each with its own store (own connections), append at once."""
    with HistoryStore(db_url) as s:
        s.save_characteristic(CHAR, usl=10.1)
    errors: list[BaseException] = []
    start = threading.Barrier(4)

    def writer(k: int) -> None:
        try:
            with HistoryStore(db_url) as w:
                start.wait(30)
                for i in range(15):
                    aid = _save(w, None, lot=f"t{k}-{i}")
                    if i % 3 == 0:
                        w.save_review(aid, "hold", f"thread {k}")
        except BaseException as exc:  # noqa: BLE001 - reported below
            errors.append(exc)

    threads = [threading.Thread(target=writer, args=(k,)) for k in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(300)
    assert errors == []
    with HistoryStore(db_url) as s:
        check = s.verify_chain()
        assert check.ok, check.detail
        assert len(s.list_analyses(CHAR)) == 60
        # schema event + characteristic (2) + 60 analyses (2 each) + 20 reviews (2 each)
        assert check.checked == 1 + 2 + 120 + 40


# --------------------------------------------------------------------------- audit trail
def test_audit_trail_never_holds_a_password_or_hash(team, db_url: str, caplog):
    s, u = team
    caplog.set_level(logging.DEBUG)
    with pytest.raises(AuthError):
        s.authenticate(PW["sam"], PW["sam"])  # a password typed into the username box
    with pytest.raises(AuthError):
        s.authenticate("sam", PW["kim"])
    s.authenticate("sam", PW["sam"])
    aid = _save(s, u["kim"])
    s.save_baseline(CHAR, baseline={"center": 10.0, "sigma": 0.02}, values=VALUES, reason="Phase I", actor=u["sam"])
    s.save_review(aid, "approve", "fine", signer=u["ria"], password=PW["ria"])
    s.set_password("kim", "changed-pass-1", actor=u["boss"])
    s.set_role("kim", "supervisor", actor=u["boss"])
    csv_text = s.audit_csv()
    eng = sa.create_engine(db_url)
    try:
        with eng.connect() as conn:
            hashes = conn.execute(sa.text("SELECT password_hash FROM user_account")).scalars().all()
    finally:
        eng.dispose()
    assert all(h.startswith("$argon2id$") for h in hashes)  # Argon2id encoding (RFC 9106)
    secrets = [*PW.values(), "changed-pass-1", *hashes, "$argon2"]
    everything = csv_text + "\n".join(r.getMessage() for r in caplog.records)
    assert not [p for p in secrets if p in everything]
    header, *lines = csv_text.splitlines()
    assert header == "id,seq,at_utc,actor,actor_id,action,target,target_id,detail"
    actions = [e.action for e in s.audit_events()]
    for action in ("account_added", "sign_in_failed", "sign_in", "analysis_saved", "baseline_frozen",
                   "review_signed", "password_changed", "role_changed", "characteristic_saved"):
        assert action in actions, action
    assert len(lines) == len(actions)
    last_two = s.audit_events(limit=2)
    assert [e.action for e in last_two] == ["password_changed", "role_changed"]
    assert s.audit_events(since=last_two[1].at_utc) == [last_two[1]]
    seqs = [e.seq for e in s.audit_events()]
    assert seqs == sorted(seqs)
    assert "not recorded" in s.audit_events()[[e.action for e in s.audit_events()].index("sign_in_failed")].detail


# --------------------------------------------------------------------------- migration
def test_previous_schema_is_migrated_and_sealed(db_url: str):
    """A version-2 database (pre-Alembic DDL, tests/store_legacy.py) opens, keeps its rows,
    is adopted by Alembic and sealed; a later edit of an old row is detected."""
    vals = [0.5, 0.51, 0.49]
    eng = sa.create_engine(db_url)
    try:
        with eng.begin() as conn:
            create_legacy(conn, 2)
            conn.execute(sa.text(
                "INSERT INTO characteristic (name, revision, units, lsl, usl, target, required_index, created_at, created_by) "
                "VALUES ('gap', 1, 'mm', 0.2, 0.8, NULL, 1.33, '2026-01-05T06:00:00+00:00', 'old')"))
            cid = conn.execute(sa.text("SELECT id FROM characteristic")).scalar_one()
            conn.execute(sa.text(
                "INSERT INTO analysis (characteristic_id, created_at, operator, shift, lot, note, n, n_values, values_json, "
                "subgroups_json, data_sha256, analysis_json, qcnorm_version, in_control, n_violations, cpk) VALUES "
                "(:cid, '2026-01-05T06:00:01+00:00', 'kim', 'A', 'L1', '', 3, 3, :v, NULL, :h, :a, '0.0.9', :ic, 0, 0.9)"),
                {"cid": cid, "v": json.dumps(vals), "h": data_sha256(vals), "a": json.dumps({"capability": {"cpk": 0.9}}),
                 "ic": True})
            aid = conn.execute(sa.text("SELECT id FROM analysis")).scalar_one()
            conn.execute(sa.text("INSERT INTO review (analysis_id, decision, reviewer, comment, created_at) "
                                 "VALUES (:aid, 'reject', 'Sam', 'too low', '2026-01-05T07:00:00+00:00')"), {"aid": aid})
        with HistoryStore(db_url) as s:
            assert s.schema_version == SCHEMA_VERSION == 3
            rec = s.get_analysis(aid)
            assert rec.values.tolist() == vals and rec.cpk == 0.9 and rec.operator == "kim"
            assert rec.latest_review.decision == "reject" and rec.latest_review.reviewer == "Sam"
            assert rec.latest_review.signed is False and rec.saved_by_id is None
            check = s.verify_chain()
            assert check.ok and check.checked == 4  # 3 old rows sealed + the upgrade event
            assert s.audit_events()[0].action == "schema_upgraded" and "3 earlier record(s)" in s.audit_events()[0].detail
            assert not s.accounts_enabled
        with eng.connect() as conn:
            assert conn.execute(sa.text("SELECT version_num FROM alembic_version")).scalar_one() == "0003"
            assert conn.execute(sa.text("SELECT version FROM schema_version ORDER BY version")).scalars().all() == [1, 2, 3]
        _sql(db_url, "UPDATE review SET decision = 'approve' WHERE analysis_id = :aid", aid=aid)
        with HistoryStore(db_url) as s:
            assert s.verify_chain().first_bad.startswith("review")
    finally:
        eng.dispose()


# --------------------------------------------------------------------------- CLI
def _cli(monkeypatch, capsys, args: list[str], stdin: str = "") -> tuple[int, str, str]:
    monkeypatch.setattr("sys.stdin", io.StringIO(stdin))
    rc = main(args)
    out, err = capsys.readouterr()
    return rc, out, err


def test_cli_users_and_store_verify(db_url: str, monkeypatch, capsys):
    db = ["--db", db_url]
    rc, out, _ = _cli(monkeypatch, capsys, ["users", "list", *db])
    assert rc == 0 and "single-user mode" in out
    rc, out, err = _cli(monkeypatch, capsys, ["users", "add", "boss", "--full-name", "Bea Oswald", "--role",
                                              "administrator", "--password-stdin", *db], "admin-pass-1\n")
    assert rc == 0 and "team mode" in out, err
    rc, _, err = _cli(monkeypatch, capsys, ["users", "add", "kim", "--full-name", "Kim Lee", "--role", "technician",
                                            "--password-stdin", *db], "tech-pass-11\n")
    assert rc == 2 and "--as ADMIN" in err
    rc, out, err = _cli(monkeypatch, capsys, ["users", "add", "kim", "--full-name", "Kim Lee", "--role", "technician",
                                              "--as", "boss", "--password-stdin", *db], "admin-pass-1\ntech-pass-11\n")
    assert rc == 0 and "Added kim (Kim Lee) as technician" in out, err
    rc, _, err = _cli(monkeypatch, capsys, ["users", "set-role", "kim", "supervisor", "--as", "boss",
                                            "--password-stdin", *db], "wrong-pass\n")
    assert rc == 2 and "Wrong username or password" in err and "Traceback" not in err
    for cmd in (["set-role", "kim", "supervisor"], ["disable", "kim"], ["enable", "kim"], ["unlock", "kim"]):
        rc, out, err = _cli(monkeypatch, capsys, ["users", *cmd, "--as", "boss", "--password-stdin", *db], "admin-pass-1\n")
        assert rc == 0, err
    rc, out, _ = _cli(monkeypatch, capsys, ["users", "list", *db])
    assert out.splitlines() == ["boss  administrator  active    Bea Oswald", "kim   supervisor     active    Kim Lee"]
    answers = iter(["admin-pass-1", "new-pass-123", "new-pass-124"])
    monkeypatch.setattr(getpass, "getpass", lambda prompt="": next(answers))
    rc, _, err = _cli(monkeypatch, capsys, ["users", "set-password", "kim", "--as", "boss", *db])
    assert rc == 2 and "differ" in err
    rc, out, _ = _cli(monkeypatch, capsys, ["store", "verify", *db])
    assert rc == 0 and "none is missing" in out and "Chain head: record" in out
    _sql(db_url, "UPDATE user_account SET full_name = 'Someone Else' WHERE username = 'kim'")
    rc, out, err = _cli(monkeypatch, capsys, ["store", "verify", *db])
    assert rc == 2 and "First bad record: account kim" in err and "admin-pass-1" not in out + err
