"""Schema version 2: ``analysis.n_violations`` (backfilled from the JSON) and lookup indexes.

Revision ID: 0002
Revises: 0001
"""

from __future__ import annotations

import json
from collections.abc import Mapping

import sqlalchemy as sa
from alembic import op

revision = "0002"
down_revision = "0001"
branch_labels = None
depends_on = None


def _count(parsed: Mapping) -> int | None:
    """Run-rule violations in an Analysis.to_dict() (the rule the store used in version 2)."""
    control = parsed.get("control")
    control = control if isinstance(control, Mapping) else {}
    raw = control.get("violations", parsed.get("violations"))
    if isinstance(raw, (list, tuple)):
        return len(raw)
    if isinstance(raw, int) and not isinstance(raw, bool):
        return raw
    return None


def upgrade() -> None:
    op.add_column("analysis", sa.Column("n_violations", sa.Integer))
    conn = op.get_bind()
    analysis = sa.table("analysis", sa.column("id", sa.Integer), sa.column("analysis_json", sa.Text),
                        sa.column("n_violations", sa.Integer))
    for row in conn.execute(sa.select(analysis.c.id, analysis.c.analysis_json)).all():
        try:
            parsed = json.loads(row.analysis_json)
        except ValueError:
            continue
        if isinstance(parsed, Mapping) and (vio := _count(parsed)) is not None:
            conn.execute(analysis.update().where(analysis.c.id == row.id).values(n_violations=vio))
    op.create_index("ix_analysis_characteristic", "analysis", ["characteristic_id"])
    op.create_index("ix_analysis_supersedes", "analysis", ["supersedes"])
    op.create_index("ix_review_analysis", "review", ["analysis_id"])
    op.create_index("ix_baseline_characteristic", "baseline", ["characteristic_id"])
    op.create_index("ix_characteristic_name", "characteristic", ["name"])


def downgrade() -> None:
    raise NotImplementedError("qcnorm schema steps are forward-only (records are append-only)")
