"""The audit trail: append-only, sealed in the chain, readable and exportable as CSV.

Events: sign-ins, failed sign-ins, refused sign-ins (locked, disabled), lockouts,
account changes, settings, characteristic / analysis / baseline saves, review
signatures and schema upgrades. An event names the actor (username, or the
single-user label with the login name), the action, the record acted on and plain
words. A password or a password hash is never part of an event: the callers pass only
names, roles and ids, and an unknown username typed at sign-in is not recorded (it
may be a password typed in the wrong box).
"""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Mapping
from datetime import datetime
from typing import Any

import sqlalchemy as sa
from sqlalchemy.engine import Connection

from ..errors import ConfigError
from . import chain
from ._common import _now
from .base import StoreBase
from .records import AuditEvent
from .schema import audit_t

__all__ = ["AuditRoom", "AUDIT_COLUMNS"]

AUDIT_COLUMNS = ("id", "seq", "at_utc", "actor", "actor_id", "action", "target", "target_id", "detail")


def _cell(value: Any) -> Any:
    """A CSV cell; text that a spreadsheet would run as a formula gets a leading quote."""
    if value is None:
        return ""
    if isinstance(value, str) and value[:1] in ("=", "+", "-", "@", "\t", "\r"):
        return "'" + value
    return value


class AuditRoom(StoreBase):
    """Writing and reading audit events."""

    def _audit(
        self, conn: Connection, who: Mapping[str, Any], action: str, detail: str, *,
        target: str | None = None, target_id: int | None = None, state: Mapping[str, Any] | None = None,
    ) -> tuple[int, int, str]:
        """Append one sealed event inside the caller's transaction; (id, seq, hash)."""
        actor = who.get("username") or "unknown"
        if who.get("id") is None and who.get("label"):
            actor = f"{actor} ({who['label']})"
        return chain.append(conn, audit_t, {
            "at_utc": _now(), "actor": str(actor)[:200], "actor_id": who.get("id"), "action": action,
            "target": target, "target_id": target_id, "detail": detail,
            "state_json": None if state is None else json.dumps(dict(state), sort_keys=True, ensure_ascii=False),
        }, postgres=self._is_pg)

    def audit_events(self, limit: int | None = None, since: str | datetime | None = None) -> list[AuditEvent]:
        """Audit events, oldest first; ``since`` (UTC, ISO text or datetime) keeps later ones,
        ``limit`` keeps the newest ``limit`` of them."""
        q = sa.select(audit_t).order_by(audit_t.c.chain_seq.desc())
        if since is not None:
            if isinstance(since, datetime):
                if since.tzinfo is None:
                    raise ConfigError("The 'since' parameter of HistoryStore.audit_events must be an aware datetime (UTC).")
                since = since.isoformat(timespec="microseconds")
            q = q.where(audit_t.c.at_utc >= str(since))
        if limit is not None:
            if isinstance(limit, bool) or not isinstance(limit, int) or limit < 0:
                raise ConfigError(f"The 'limit' parameter of HistoryStore.audit_events must be a whole number ≥ 0. Got {limit!r} instead.")
            q = q.limit(limit)
        with self._reading("read the audit trail") as conn:
            rows = conn.execute(q).all()
        return [
            AuditEvent(id=r.id, seq=int(r.chain_seq or 0), at_utc=r.at_utc, actor=r.actor, actor_id=r.actor_id,
                       action=r.action, target=r.target, target_id=r.target_id, detail=r.detail)
            for r in reversed(rows)
        ]

    def audit_csv(self, limit: int | None = None, since: str | datetime | None = None) -> str:
        """The audit trail as CSV text (header + one line per event, oldest first)."""
        buf = io.StringIO()
        writer = csv.writer(buf, lineterminator="\n")
        writer.writerow(AUDIT_COLUMNS)
        for e in self.audit_events(limit=limit, since=since):
            writer.writerow([_cell(getattr(e, c)) for c in AUDIT_COLUMNS])
        return buf.getvalue()
