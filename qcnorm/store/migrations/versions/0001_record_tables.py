"""Schema version 1: the four record tables (frozen; never edit once released).

Revision ID: 0001
Revises:
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0001"
down_revision = None
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "characteristic",
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
    op.create_table(
        "baseline",
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
    op.create_table(
        "analysis",
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
    op.create_table(
        "review",
        sa.Column("id", sa.Integer, primary_key=True),
        sa.Column("analysis_id", sa.Integer, sa.ForeignKey("analysis.id"), nullable=False),
        sa.Column("decision", sa.String(20), nullable=False),
        sa.Column("reviewer", sa.String(200), nullable=False),
        sa.Column("comment", sa.Text, nullable=False),
        sa.Column("created_at", sa.String(40), nullable=False),
        sa.Column("supersedes", sa.Integer, sa.ForeignKey("review.id")),
    )


def downgrade() -> None:
    raise NotImplementedError("qcnorm schema steps are forward-only (records are append-only)")
