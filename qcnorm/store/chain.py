"""Tamper evidence: one hash chain over every appended record.

Design
------
One global chain. Every sealed row (characteristic, baseline, analysis, review and
audit event; see ``schema.CHAINED_TABLES``) gets the next sequence number
``chain_seq`` (1, 2, 3 … with no gaps, across all tables) and

    record_hash = SHA-256( previous record_hash + "\\n" + table name + "\\n" + content )

where ``content`` is the row as canonical JSON: every column except ``record_hash``
whose value is not NULL (so a column added by a later migration does not change old
seals), keys sorted, no spaces, UTF-8; the previous hash of the first record is 64
zeros. ``chain_head`` holds the last sequence number and hash.

:func:`verify` recomputes every seal in sequence order and reports the first record
that does not match (content changed after it was written), a gap in the sequence (a
record deleted), a record without a seal, or a head that is ahead of the last record
(the newest record deleted).

Writers serialise on the chain head: on SQLite every write transaction is
``BEGIN IMMEDIATE``; on PostgreSQL the head row is locked with ``SELECT … FOR
UPDATE`` at the start of every write transaction, so sequence numbers are handed out
in commit order and a rolled-back writer leaves no gap.

What it does not do: someone able to rewrite the database can recompute every hash
after the record they changed. ``python -m qcnorm store verify`` prints the head
(sequence and hash); writing that down outside the database (a logbook, the PDF)
anchors everything up to it.

Accounts are mutable rows (failed sign-ins, lockout), so they are not chain members:
each account change is a sealed audit event holding the account's state (name, role,
active), and the account row carries a hash over its identity columns (including the
password hash) and the seal of that event. :func:`verify` checks both.

References
----------
National Institute of Standards and Technology (2015). Secure Hash Standard (SHS).
FIPS PUB 180-4 (SHA-256, computed with Python's ``hashlib``).
"""

from __future__ import annotations

import hashlib
import heapq
import json
from collections.abc import Iterator, Mapping
from typing import Any

import sqlalchemy as sa
from sqlalchemy.engine import Connection

from .records import ChainCheck
from .schema import CHAINED_TABLES, audit_t, chain_head_t, user_t

__all__ = ["GENESIS", "canonical_content", "seal_hash", "lock_head", "append", "seal_existing", "check_record",
           "verify", "user_hash"]

GENESIS = "0" * 64
_USER_SEALED = ("id", "username", "full_name", "role", "active", "password_hash", "created_at", "last_event_seq")


def canonical_content(row: Mapping[str, Any]) -> str:
    """The row as canonical JSON: non-NULL columns except ``record_hash``, sorted keys
    (a float negative zero is written as 0.0, as some databases return it)."""
    data = {k: (v + 0.0 if type(v) is float else v) for k, v in row.items() if k != "record_hash" and v is not None}
    return json.dumps(data, ensure_ascii=False, sort_keys=True, separators=(",", ":"), default=str)


def _as_stored(table: sa.Table, values: Mapping[str, Any]) -> dict[str, Any]:
    """The Python values the database hands back for ``values`` (by column type)."""
    out: dict[str, Any] = {}
    for name, v in values.items():
        if v is None:
            continue
        t = table.c[name].type
        if isinstance(t, sa.Boolean):
            out[name] = bool(v)
        elif isinstance(t, sa.Float):
            out[name] = float(v)
        elif isinstance(t, sa.Integer):
            out[name] = int(v)
        else:
            out[name] = str(v)
    return out


def seal_hash(prev_hash: str, table_name: str, row: Mapping[str, Any]) -> str:
    """SHA-256 hex of previous hash, table name and canonical content (see module doc)."""
    text = f"{prev_hash}\n{table_name}\n{canonical_content(row)}"
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def lock_head(conn: Connection, *, postgres: bool) -> tuple[int, str]:
    """(last sequence number, last hash), locking the head row on PostgreSQL."""
    q = sa.select(chain_head_t.c.seq, chain_head_t.c.head_hash).where(chain_head_t.c.id == 1)
    if postgres:
        q = q.with_for_update()
    row = conn.execute(q).first()
    if row is None:  # an emptied head table is itself tampering; verify() reports it
        conn.execute(chain_head_t.insert().values(id=1, seq=0, head_hash=GENESIS))
        return 0, GENESIS
    return int(row.seq), str(row.head_hash)


def _seal_row(conn: Connection, table: sa.Table, row_id: int, seq: int, prev: str) -> str:
    conn.execute(table.update().where(table.c.id == row_id).values(chain_seq=seq))
    row = conn.execute(sa.select(table).where(table.c.id == row_id)).mappings().one()
    digest = seal_hash(prev, table.name, row)
    conn.execute(table.update().where(table.c.id == row_id).values(record_hash=digest))
    return digest


def append(conn: Connection, table: sa.Table, values: Mapping[str, Any], *, postgres: bool) -> tuple[int, int, str]:
    """Insert a row and seal it as the next chain record; returns (id, seq, hash).

    Runs inside the caller's write transaction, which holds the chain lock (SQLite:
    BEGIN IMMEDIATE; PostgreSQL: the head row FOR UPDATE), so the next id and
    sequence number are taken in commit order. The seal is computed over the
    values as the database returns them (``_as_stored``); every :func:`verify` in the
    tests re-reads the rows and checks that this holds on SQLite and PostgreSQL.
    """
    # the id is taken here, under the chain lock, so the seal is computed before the insert:
    # PostgreSQL: the next value of the table's serial sequence; SQLite: largest id + 1
    # (what SQLite itself picks for an INTEGER PRIMARY KEY)
    if postgres:
        next_id: Any = sa.func.nextval(sa.func.pg_get_serial_sequence(table.name, "id"))
    else:
        next_id = sa.select(sa.func.coalesce(sa.func.max(table.c.id), 0) + 1).scalar_subquery()
    q = sa.select(chain_head_t.c.seq, chain_head_t.c.head_hash, next_id).where(chain_head_t.c.id == 1)
    head = conn.execute(q.with_for_update(of=chain_head_t) if postgres else q).first()
    if head is None:  # head row deleted outside qcnorm: start again at 0 (verify() reports it)
        seq, prev = lock_head(conn, postgres=postgres)
        row_id = conn.execute(sa.select(next_id)).scalar()
    else:
        seq, prev, row_id = int(head[0]), str(head[1]), head[2]
    row = _as_stored(table, {**values, "id": int(row_id), "chain_seq": seq + 1})
    digest = seal_hash(prev, table.name, row)
    conn.execute(table.insert().values(**row, record_hash=digest))
    conn.execute(chain_head_t.update().where(chain_head_t.c.id == 1).values(seq=seq + 1, head_hash=digest))
    return row["id"], seq + 1, digest


def seal_existing(conn: Connection, tables: Mapping[str, sa.Table], *, postgres: bool) -> int:
    """Seal rows that carry no seal yet (records written before schema version 3).

    Tables in the order given, rows by id; returns how many were sealed.
    """
    seq, prev = lock_head(conn, postgres=postgres)
    count = 0
    for table in tables.values():
        ids = conn.execute(sa.select(table.c.id).where(table.c.chain_seq.is_(None)).order_by(table.c.id)).scalars().all()
        for row_id in ids:
            seq += 1
            prev = _seal_row(conn, table, int(row_id), seq, prev)
            count += 1
    conn.execute(chain_head_t.update().where(chain_head_t.c.id == 1).values(seq=seq, head_hash=prev))
    return count


def user_hash(row: Mapping[str, Any], event_hash: str) -> str:
    """Seal of an account row: its identity columns and the seal of its last change event."""
    data = {k: row.get(k) for k in _USER_SEALED}
    text = f"{event_hash}\nuser_account\n{canonical_content(data)}"
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _sealed_rows(conn: Connection, word: str, table: sa.Table) -> Iterator[tuple[int, str, Mapping[str, Any]]]:
    q = sa.select(table).where(table.c.chain_seq.is_not(None)).order_by(table.c.chain_seq)
    for row in conn.execute(q).mappings():
        yield int(row["chain_seq"]), word, row


def _unsealed(conn: Connection) -> str | None:
    for word, table in CHAINED_TABLES.items():
        rid = conn.execute(sa.select(sa.func.min(table.c.id)).where(table.c.chain_seq.is_(None))).scalar()
        if rid is not None:
            return f"{word} {rid}"
    return None


def verify(conn: Connection) -> ChainCheck:
    """Recompute every seal in sequence order; the first problem found is reported."""
    head = conn.execute(sa.select(chain_head_t.c.seq, chain_head_t.c.head_hash).where(chain_head_t.c.id == 1)).first()
    head_seq, head_hash = (int(head.seq), str(head.head_hash)) if head is not None else (0, GENESIS)

    def bad(checked: int, where: str, detail: str) -> ChainCheck:
        return ChainCheck(ok=False, checked=checked, first_bad=where, detail=detail, head_seq=head_seq, head_hash=head_hash)

    unsealed = _unsealed(conn)
    if unsealed is not None:
        return bad(0, unsealed, f"{unsealed} carries no seal: it was inserted outside qcnorm.")
    streams = [_sealed_rows(conn, word, table) for word, table in CHAINED_TABLES.items()]
    prev, expected, checked, last = GENESIS, 1, 0, None
    for seq, word, row in heapq.merge(*streams, key=lambda t: t[0]):
        name = f"{word} {row['id']}"
        if seq != expected:
            if seq < expected:
                return bad(checked, name, f"{name} has sequence number {seq}, already used: it was copied or renumbered.")
            where = f"the record after {last}" if last else "the first record"
            return bad(checked, where, f"{where} is missing (sequence {expected} expected, {seq} found at {name}): "
                                       "a record was deleted.")
        if seal_hash(prev, CHAINED_TABLES[word].name, row) != row["record_hash"]:
            return bad(checked, name, f"{name} was changed after it was written (its content no longer matches its seal).")
        prev, expected, checked, last = str(row["record_hash"]), expected + 1, checked + 1, name
    if head is None and checked:
        return bad(checked, "chain head", "The chain head row is missing: it was deleted outside qcnorm.")
    if head_seq > checked:
        where = f"the record after {last}" if last else "the first record"
        return bad(checked, where, f"{where} is missing: the chain head says {head_seq} records, "
                                   f"{checked} were found (the newest record(s) deleted).")
    if head_seq < checked or head_hash != prev:
        return bad(checked, "chain head", "The chain head does not match the last record: it was changed outside qcnorm.")
    problem = _check_accounts(conn)
    if problem is not None:
        return bad(checked, problem[0], problem[1])
    return ChainCheck(ok=True, checked=checked, first_bad=None,
                      detail=f"All {checked} sealed records match; none is missing.", head_seq=head_seq, head_hash=head_hash)


def _check_accounts(conn: Connection) -> tuple[str, str] | None:
    for row in conn.execute(sa.select(user_t).order_by(user_t.c.id)).mappings():
        name = f"account {row['username']}"
        event = conn.execute(
            sa.select(audit_t.c.record_hash, audit_t.c.state_json).where(audit_t.c.chain_seq == row["last_event_seq"])
        ).first()
        if event is None or user_hash(row, str(event.record_hash)) != row["record_hash"]:
            return name, f"{name} was changed outside qcnorm (name, role, active flag or password)."
        try:
            state = json.loads(event.state_json or "{}")
        except ValueError:
            state = {}
        now = {"id": row["id"], "username": row["username"], "full_name": row["full_name"],
               "role": row["role"], "active": bool(row["active"])}
        if state != now:
            return name, f"{name} does not match its last recorded change (name, role or active flag edited)."
    return None


def check_record(conn: Connection, table: sa.Table, row_id: int) -> bool:
    """True when one sealed row still matches its seal (its predecessor's hash as stored)."""
    row = conn.execute(sa.select(table).where(table.c.id == row_id)).mappings().first()
    if row is None or row["chain_seq"] is None or row["record_hash"] is None:
        return False
    prev = GENESIS
    if int(row["chain_seq"]) > 1:
        for other in CHAINED_TABLES.values():
            found = conn.execute(sa.select(other.c.record_hash).where(other.c.chain_seq == int(row["chain_seq"]) - 1)).scalar()
            if found is not None:
                prev = str(found)
                break
        else:
            return False
    return seal_hash(prev, table.name, row) == row["record_hash"]
