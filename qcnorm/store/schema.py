"""The tables of the current schema (SQLAlchemy Core) and the schema version.

Reading and writing code uses these definitions; the migrations in
``migrations/versions/`` are frozen copies of each step and never import this module's
tables (a later change here must not alter an old migration).

Sealed tables (``CHAINED_TABLES``) carry ``chain_seq`` (the record's place in the one
global chain) and ``record_hash`` (see ``chain.py``). ``chain_head`` holds a single
row: the last sequence number and hash, locked by every writer.
"""

from __future__ import annotations

import sqlalchemy as sa

__all__ = [
    "SCHEMA_VERSION", "metadata", "schema_version_t", "characteristic_t", "baseline_t",
    "analysis_t", "review_t", "user_t", "audit_t", "chain_head_t", "CHAINED_TABLES",
    "QCNORM_TABLES",
]

#: The schema version this qcnorm writes (one Alembic revision per version).
SCHEMA_VERSION = 3

metadata = sa.MetaData()


def _seal_columns() -> list[sa.Column]:
    return [
        sa.Column("chain_seq", sa.BigInteger, unique=True),
        sa.Column("record_hash", sa.String(64)),
    ]


schema_version_t = sa.Table(
    "schema_version", metadata,
    sa.Column("version", sa.Integer, primary_key=True, autoincrement=False),
    sa.Column("applied_at", sa.String(40), nullable=False),
    sa.Column("qcnorm_version", sa.String(40), nullable=False),
)

characteristic_t = sa.Table(
    "characteristic", metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("name", sa.String(200), nullable=False),
    sa.Column("revision", sa.Integer, nullable=False),
    sa.Column("units", sa.String(60)),
    sa.Column("lsl", sa.Double), sa.Column("usl", sa.Double), sa.Column("target", sa.Double),
    sa.Column("required_index", sa.Double, nullable=False),
    sa.Column("created_at", sa.String(40), nullable=False),
    sa.Column("created_by", sa.String(200), nullable=False),
    sa.Column("created_by_id", sa.Integer),  # version 3
    *_seal_columns(),
    sa.UniqueConstraint("name", "revision", name="uq_characteristic_name_revision"),
)

baseline_t = sa.Table(
    "baseline", metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("characteristic_id", sa.Integer, sa.ForeignKey("characteristic.id"), nullable=False),
    sa.Column("created_at", sa.String(40), nullable=False),
    sa.Column("created_by", sa.String(200), nullable=False),
    sa.Column("reason", sa.Text, nullable=False),
    sa.Column("transform_name", sa.String(60)),
    sa.Column("chart_type", sa.String(60)),
    sa.Column("center", sa.Double), sa.Column("sigma", sa.Double),
    sa.Column("baseline_json", sa.Text, nullable=False),
    sa.Column("n", sa.Integer, nullable=False),
    sa.Column("values_json", sa.Text, nullable=False),
    sa.Column("subgroups_json", sa.Text),
    sa.Column("data_sha256", sa.String(64), nullable=False),
    sa.Column("created_by_id", sa.Integer),  # version 3
    *_seal_columns(),
)

analysis_t = sa.Table(
    "analysis", metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("characteristic_id", sa.Integer, sa.ForeignKey("characteristic.id"), nullable=False),
    sa.Column("created_at", sa.String(40), nullable=False),
    sa.Column("operator", sa.String(200), nullable=False),
    sa.Column("shift", sa.String(200), nullable=False),
    sa.Column("lot", sa.String(200), nullable=False),
    sa.Column("note", sa.Text, nullable=False),
    sa.Column("n", sa.Integer, nullable=False),
    sa.Column("n_values", sa.Integer, nullable=False),
    sa.Column("values_json", sa.Text, nullable=False),
    sa.Column("subgroups_json", sa.Text),
    sa.Column("data_sha256", sa.String(64), nullable=False),
    sa.Column("analysis_json", sa.Text, nullable=False),
    sa.Column("qcnorm_version", sa.String(40), nullable=False),
    sa.Column("baseline_id", sa.Integer, sa.ForeignKey("baseline.id")),
    sa.Column("supersedes", sa.Integer, sa.ForeignKey("analysis.id")),
    sa.Column("transform_name", sa.String(60)),
    sa.Column("cpk", sa.Double), sa.Column("ppk", sa.Double),
    sa.Column("verdict", sa.String(200)),
    sa.Column("in_control", sa.Boolean),
    sa.Column("n_violations", sa.Integer),  # version 2
    sa.Column("saved_by_id", sa.Integer),  # version 3 from here
    sa.Column("saved_by_username", sa.String(200)),
    sa.Column("saved_by_full_name", sa.String(200)),
    *_seal_columns(),
)

review_t = sa.Table(
    "review", metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("analysis_id", sa.Integer, sa.ForeignKey("analysis.id"), nullable=False),
    sa.Column("decision", sa.String(20), nullable=False),
    sa.Column("reviewer", sa.String(200), nullable=False),
    sa.Column("comment", sa.Text, nullable=False),
    sa.Column("created_at", sa.String(40), nullable=False),
    sa.Column("supersedes", sa.Integer, sa.ForeignKey("review.id")),
    sa.Column("signer_id", sa.Integer),  # version 3 from here
    sa.Column("signer_username", sa.String(200)),
    sa.Column("signer_full_name", sa.String(200)),
    sa.Column("meaning", sa.String(20)),
    sa.Column("signed_at_utc", sa.String(40)),
    sa.Column("analysis_sha256", sa.String(64)),
    sa.Column("signed", sa.Boolean),
    *_seal_columns(),
)

user_t = sa.Table(
    "user_account", metadata,
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

audit_t = sa.Table(
    "audit_event", metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("at_utc", sa.String(40), nullable=False),
    sa.Column("actor", sa.String(200), nullable=False),
    sa.Column("actor_id", sa.Integer),
    sa.Column("action", sa.String(40), nullable=False),
    sa.Column("target", sa.String(40)),
    sa.Column("target_id", sa.Integer),
    sa.Column("detail", sa.Text, nullable=False),
    sa.Column("state_json", sa.Text),
    *_seal_columns(),
)

chain_head_t = sa.Table(
    "chain_head", metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=False),
    sa.Column("seq", sa.BigInteger, nullable=False),
    sa.Column("head_hash", sa.String(64), nullable=False),
)

#: Tables whose rows are sealed in the chain, with the word used in messages.
CHAINED_TABLES: dict[str, sa.Table] = {
    "characteristic": characteristic_t,
    "baseline": baseline_t,
    "analysis": analysis_t,
    "review": review_t,
    "audit event": audit_t,
}

#: Every table qcnorm owns (a database holding some of them without schema_version is foreign).
QCNORM_TABLES = ("characteristic", "baseline", "analysis", "review", "user_account", "audit_event", "chain_head")
