"""Schema version 3: accounts, signed reviews, the audit trail and the record chain.

Adds ``user_account``, ``audit_event`` and ``chain_head``; who-columns on the record
tables; the signature columns of ``review``; ``chain_seq`` and ``record_hash`` on every
sealed table. Records already in the database are sealed in place (table by table,
by id) and one audit event says so: changes made *before* the upgrade cannot be
detected, changes after it can.

Revision ID: 0003
Revises: 0002
"""

from __future__ import annotations

import json
from datetime import datetime, timezone

import sqlalchemy as sa
from alembic import op

revision = "0003"
down_revision = "0002"
branch_labels = None
depends_on = None

_SEALED = ("characteristic", "baseline", "analysis", "review", "audit_event")


def upgrade() -> None:
    op.create_table(
        "user_account",
        sa.Column("id", sa.Integer, primary_key=True),
        sa.Column("username", sa.String(100), nullable=False, unique=True),
        sa.Column("full_name", sa.String(200), nullable=False),
        sa.Column("role", sa.String(20), nullable=False),
        sa.Column("active", sa.Boolean, nullable=False),
        sa.Column("password_hash", sa.String(200), nullable=False),
        sa.Column("created_at", sa.String(40), nullable=False),
        sa.Column("failed_count", sa.Integer, nullable=False),
        sa.Column("locked_until", sa.String(40)),
        sa.Column("last_event_seq", sa.BigInteger),
        sa.Column("record_hash", sa.String(64)),
    )
    op.create_table(
        "audit_event",
        sa.Column("id", sa.Integer, primary_key=True),
        sa.Column("at_utc", sa.String(40), nullable=False),
        sa.Column("actor", sa.String(200), nullable=False),
        sa.Column("actor_id", sa.Integer),
        sa.Column("action", sa.String(40), nullable=False),
        sa.Column("target", sa.String(40)),
        sa.Column("target_id", sa.Integer),
        sa.Column("detail", sa.Text, nullable=False),
        sa.Column("state_json", sa.Text),
        sa.Column("chain_seq", sa.BigInteger),
        sa.Column("record_hash", sa.String(64)),
    )
    op.create_table(
        "chain_head",
        sa.Column("id", sa.Integer, primary_key=True, autoincrement=False),
        sa.Column("seq", sa.BigInteger, nullable=False),
        sa.Column("head_hash", sa.String(64), nullable=False),
    )
    for table in ("characteristic", "baseline"):
        op.add_column(table, sa.Column("created_by_id", sa.Integer))
    op.add_column("analysis", sa.Column("saved_by_id", sa.Integer))
    op.add_column("analysis", sa.Column("saved_by_username", sa.String(200)))
    op.add_column("analysis", sa.Column("saved_by_full_name", sa.String(200)))
    for name, type_ in (("signer_id", sa.Integer), ("signer_username", sa.String(200)),
                        ("signer_full_name", sa.String(200)), ("meaning", sa.String(20)),
                        ("signed_at_utc", sa.String(40)), ("analysis_sha256", sa.String(64)),
                        ("signed", sa.Boolean)):
        op.add_column("review", sa.Column(name, type_))
    for table in _SEALED[:-1]:
        op.add_column(table, sa.Column("chain_seq", sa.BigInteger))
        op.add_column(table, sa.Column("record_hash", sa.String(64)))
    for table in _SEALED:
        op.create_index(f"ix_{table}_chain_seq", table, ["chain_seq"], unique=True)
    op.create_index("ix_audit_event_at", "audit_event", ["at_utc"])

    conn = op.get_bind()
    from qcnorm.store import chain

    postgres = conn.dialect.name == "postgresql"
    conn.execute(sa.text("INSERT INTO chain_head (id, seq, head_hash) VALUES (1, 0, :h)"), {"h": chain.GENESIS})
    md = sa.MetaData()
    tables = {name: sa.Table(name, md, autoload_with=conn) for name in _SEALED}
    sealed = chain.seal_existing(conn, {k: tables[k] for k in _SEALED[:-1]}, postgres=postgres)
    now = datetime.now(timezone.utc).isoformat(timespec="microseconds")
    chain.append(conn, tables["audit_event"], {
        "at_utc": now, "actor": "qcnorm", "action": "schema_upgraded", "target": "schema", "target_id": 3,
        "detail": f"Schema upgraded to version 3; {sealed} earlier record(s) sealed as found.",
        "state_json": json.dumps({"sealed": sealed}),
    }, postgres=postgres)


def downgrade() -> None:
    raise NotImplementedError("qcnorm schema steps are forward-only (records are append-only)")
