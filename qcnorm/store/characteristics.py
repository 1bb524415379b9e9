"""Characteristics: name, units, spec limits, target, required index; append-only revisions."""

from __future__ import annotations

from typing import Any

import sqlalchemy as sa
from sqlalchemy.engine import Connection

from .._validation import check_optional_float
from ..errors import ConfigError, StoreError
from . import chain
from ._common import _now, _optional_text, _required_text
from .records import CharacteristicRecord, User
from .schema import characteristic_t
from .users import UsersRoom

__all__ = ["CharacteristicsRoom"]


def _by(who: dict[str, Any]) -> str:
    """The name written in a ``created_by`` / ``operator`` style column for the actor."""
    if who.get("id") is None:
        return f"{who['username']} ({who.get('full_name') or who.get('label')})"
    return str(who["full_name"])


class CharacteristicsRoom(UsersRoom):
    """Saving and reading characteristics."""

    def _char_row(self, conn: Connection, name: str) -> Any:
        return conn.execute(
            sa.select(characteristic_t)
            .where(characteristic_t.c.name == name)
            .order_by(characteristic_t.c.revision.desc())
            .limit(1)
        ).first()

    def _char_row_or_raise(self, conn: Connection, name: Any, func: str) -> Any:
        if not isinstance(name, str) or not name.strip():
            raise ConfigError(f"The 'characteristic' parameter of {func} must be a characteristic name. Got {name!r} instead.")
        row = self._char_row(conn, name.strip())
        if row is None:
            known = conn.execute(
                sa.select(characteristic_t.c.name).distinct().order_by(characteristic_t.c.name).limit(20)
            ).scalars().all()
            listing = ", ".join(repr(k) for k in known) if known else "none yet"
            raise StoreError(
                f"No characteristic named {name!r} in the history database {self.url} "
                f"(saved: {listing}). Save it first with save_characteristic, or check the spelling."
            )
        return row

    @staticmethod
    def _char_record(row: Any) -> CharacteristicRecord:
        return CharacteristicRecord(
            id=row.id, name=row.name, revision=row.revision, units=row.units, lsl=row.lsl, usl=row.usl,
            target=row.target, required_index=row.required_index, created_at=row.created_at,
            created_by=row.created_by,
        )

    def save_characteristic(
        self,
        name: str,
        *,
        units: str | None = None,
        lsl: float | None = None,
        usl: float | None = None,
        target: float | None = None,
        required_index: float = 1.33,
        created_by: str = "",
        actor: User | None = None,
    ) -> int:
        """Save a characteristic; a new revision only when something changed.

        Returns the id of the saved revision, or of the latest one when units, spec
        limits, target and required index are all unchanged. In team mode ``actor``
        (a technician or supervisor) is required and ``created_by`` defaults to the
        actor's full name.
        """
        func = "HistoryStore.save_characteristic"
        name = _required_text(name, "name", func)
        units_s = _optional_text(units, "units", func) or None
        lsl_f = check_optional_float(lsl, "lsl", func)
        usl_f = check_optional_float(usl, "usl", func)
        target_f = check_optional_float(target, "target", func)
        req = check_optional_float(required_index, "required_index", func)
        if req is None or req <= 0:
            raise ConfigError(f"The 'required_index' parameter of {func} must be a positive number such as 1.33. Got {required_index!r} instead.")
        if lsl_f is not None and usl_f is not None and not lsl_f < usl_f:
            raise ConfigError(f"The spec limits of {name!r} must satisfy lsl < usl. Got lsl={lsl_f:g}, usl={usl_f:g} instead. Swap or correct them.")
        who = _optional_text(created_by, "created_by", func)
        wanted = (units_s, lsl_f, usl_f, target_f, req)
        with self._transaction(f"save characteristic {name!r}") as conn:
            actor_ = self._who(conn, actor, "save_characteristic", func)
            row = self._char_row(conn, name)
            if row is not None and (row.units, row.lsl, row.usl, row.target, row.required_index) == wanted:
                return int(row.id)
            revision = 1 if row is None else row.revision + 1
            cid, _, _ = chain.append(conn, characteristic_t, dict(
                name=name, revision=revision, units=units_s, lsl=lsl_f, usl=usl_f, target=target_f,
                required_index=req, created_at=_now(), created_by=who or _by(actor_),
                created_by_id=actor_["id"],
            ), postgres=self._is_pg)
            self._audit(conn, actor_, "characteristic_saved", f"Characteristic {name!r} revision {revision} saved.",
                        target="characteristic", target_id=cid)
            return cid

    def get_characteristic(self, name: str) -> CharacteristicRecord | None:
        """The latest revision of a characteristic, or None if it was never saved."""
        with self._reading(f"read characteristic {name!r}") as conn:
            row = self._char_row(conn, str(name).strip())
        return None if row is None else self._char_record(row)

    def list_characteristics(self) -> list[CharacteristicRecord]:
        """The latest revision of every characteristic, by name."""
        latest = (
            sa.select(characteristic_t.c.name, sa.func.max(characteristic_t.c.revision).label("rev"))
            .group_by(characteristic_t.c.name)
            .subquery()
        )
        q = (
            sa.select(characteristic_t)
            .join(latest, sa.and_(characteristic_t.c.name == latest.c.name, characteristic_t.c.revision == latest.c.rev))
            .order_by(characteristic_t.c.name)
        )
        with self._reading("list characteristics") as conn:
            return [self._char_record(r) for r in conn.execute(q)]

