"""The history store's schema before Alembic (versions 1 and 2), kept as a test fixture.

These are the table definitions and steps qcnorm 0.1 ran itself (copied from the
store module before it became a package; do not edit): a test builds a database of the
previous schema with them, on SQLite and PostgreSQL, and checks that opening it with
the current qcnorm migrates it and keeps its rows.
"""

from __future__ import annotations

import json

import sqlalchemy as sa
from sqlalchemy.engine import Connection

_md = sa.MetaData()
schema_version_t = sa.Table(
    "schema_version",
    _md,
    sa.Column("version", sa.Integer, primary_key=True, autoincrement=False),
    sa.Column("applied_at", sa.String(40), nullable=False),
    sa.Column("qcnorm_version", sa.String(40), nullable=False),
)


def create_legacy(conn: Connection, version: int) -> None:
    """Create an empty database of schema ``version`` (1 or 2) as qcnorm 0.1 did."""
    schema_version_t.create(conn)
    for v in range(1, version + 1):
        (migrate_to_1, migrate_to_2)[v - 1](conn)
        conn.execute(schema_version_t.insert().values(version=v, applied_at="2026-01-05T06:00:00+00:00",
                                                      qcnorm_version="0.1.0"))


def migrate_to_1(conn: Connection) -> None:
    """Version 1: the four record tables (frozen; never edit once released)."""
    md = sa.MetaData()
    sa.Table(
        "characteristic", md,
        sa.Column("id", sa.Integer, primary_key=True),
        sa.Column("name", sa.String(200), nullable=False),
        sa.Column("revision", sa.Integer, nullable=False),
        sa.Column("units", sa.String(60)),
        sa.Column("lsl", sa.Double), sa.Column("usl", sa.Double), sa.Column("target", sa.Double),
        sa.Column("required_index", sa.Double, nullable=False),
        sa.Column("created_at", sa.String(40), nullable=False),
        sa.Column("created_by", sa.String(200), nullable=False),
        sa.UniqueConstraint("name", "revision", name="uq_characteristic_name_revision"),
    )
    sa.Table(
        "baseline", md,
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
    )
    sa.Table(
        "analysis", md,
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
    )
    sa.Table(
        "review", md,
        sa.Column("id", sa.Integer, primary_key=True),
        sa.Column("analysis_id", sa.Integer, sa.ForeignKey("analysis.id"), nullable=False),
        sa.Column("decision", sa.String(20), nullable=False),
        sa.Column("reviewer", sa.String(200), nullable=False),
        sa.Column("comment", sa.Text, nullable=False),
        sa.Column("created_at", sa.String(40), nullable=False),
        sa.Column("supersedes", sa.Integer, sa.ForeignKey("review.id")),
    )
    md.create_all(conn)


def migrate_to_2(conn: Connection) -> None:
    """Version 2: ``analysis.n_violations`` (backfilled from the JSON) and lookup indexes."""
    conn.execute(sa.text("ALTER TABLE analysis ADD COLUMN n_violations INTEGER"))
    rows = conn.execute(sa.text("SELECT id, analysis_json FROM analysis")).all()
    for row in rows:
        parsed = json.loads(row.analysis_json)
        vio = parsed.get("control", {}).get("violations")
        if isinstance(vio, list):
            conn.execute(sa.text("UPDATE analysis SET n_violations = :v WHERE id = :i"), {"v": len(vio), "i": row.id})
    for name, table, cols in (
        ("ix_analysis_characteristic", "analysis", "characteristic_id"),
        ("ix_analysis_supersedes", "analysis", "supersedes"),
        ("ix_review_analysis", "review", "analysis_id"),
        ("ix_baseline_characteristic", "baseline", "characteristic_id"),
        ("ix_characteristic_name", "characteristic", "name"),
    ):
        conn.execute(sa.text(f"CREATE INDEX {name} ON {table} ({cols})"))
