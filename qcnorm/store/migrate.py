"""Schema upgrades: Alembic revisions run programmatically when a store is opened.

Each schema version is one Alembic revision (``migrations/versions/000N_*.py``;
revision id ``"000N"``) applied in its own transaction, in order. The
``schema_version`` table keeps one row per applied version (what qcnorm reads and
what older qcnorm releases wrote); Alembic's ``alembic_version`` table names the
revision. A database written before Alembic (schema_version 1 or 2, no
``alembic_version``) is *adopted*: it is stamped with the revision of its version and
upgraded from there. No alembic.ini is needed: the script location is this package.

On PostgreSQL each step holds a transaction-level advisory lock so that two
processes opening the same new database do not both upgrade it.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import sqlalchemy as sa
from sqlalchemy.engine import Connection

from ..errors import StoreError
from ._common import _now
from .schema import QCNORM_TABLES, SCHEMA_VERSION, schema_version_t

if TYPE_CHECKING:
    from .base import StoreBase

__all__ = ["MIGRATIONS_DIR", "revision_of", "read_version", "upgrade"]

MIGRATIONS_DIR = Path(__file__).resolve().parent / "migrations"
_PG_MIGRATION_LOCK = 7_424_611  # any constant; serialises schema upgrades on PostgreSQL


def revision_of(version: int) -> str:
    """The Alembic revision id of a schema version."""
    return f"{version:04d}"


def read_version(conn: Connection) -> int:
    """The schema version of a database (0 = empty); refuses foreign tables."""
    names = set(sa.inspect(conn).get_table_names())
    if "schema_version" not in names:
        clash = sorted(names & set(QCNORM_TABLES))
        if clash:
            raise StoreError(
                f"The database already has table(s) {', '.join(clash)} but no schema_version table: "
                "it was not written by qcnorm or is damaged. Point QCNORM_DB at another database."
            )
        return 0
    found = conn.execute(sa.select(sa.func.max(schema_version_t.c.version))).scalar()
    return int(found or 0)


def _alembic_config(conn: Connection):  # noqa: ANN202 - alembic.config.Config
    from alembic.config import Config

    cfg = Config()
    cfg.set_main_option("script_location", str(MIGRATIONS_DIR))
    cfg.attributes["connection"] = conn
    return cfg


def _run_step(conn: Connection, current: int, version: int) -> None:
    """Bring the database from ``current`` to ``version`` (Alembic upgrade in ``conn``)."""
    from alembic import command
    from alembic.runtime.migration import MigrationContext

    cfg = _alembic_config(conn)
    if current > 0 and MigrationContext.configure(conn).get_current_revision() is None:
        command.stamp(cfg, revision_of(current))  # adopt a database written before Alembic
    command.upgrade(cfg, revision_of(version))


def upgrade(store: StoreBase, upto: int = SCHEMA_VERSION) -> None:
    """Apply every missing version up to ``upto``, one transaction each."""
    from .._version import __version__

    with store._reading("open the history database") as conn:
        current = read_version(conn)
    refuse_newer(store, current)
    for version in range(current + 1, upto + 1):
        with store._transaction(f"upgrade the schema to version {version}", chained=False) as conn:
            if store._is_pg:
                conn.execute(sa.select(sa.func.pg_advisory_xact_lock(_PG_MIGRATION_LOCK)))
            now = read_version(conn)  # another process may have upgraded meanwhile
            refuse_newer(store, now)
            if now >= version:
                continue
            if now == 0:
                schema_version_t.create(conn, checkfirst=True)
            _run_step(conn, now, version)
            conn.execute(schema_version_t.insert().values(version=version, applied_at=_now(), qcnorm_version=__version__))


def refuse_newer(store: StoreBase, version: int) -> None:
    if version > SCHEMA_VERSION:
        from .._version import __version__

        raise StoreError(
            f"The history database {store.url} has schema version {version}, written by a newer "
            f"qcnorm; this qcnorm ({__version__}) reads up to version {SCHEMA_VERSION}. "
            "Upgrade qcnorm to open it (nothing was changed)."
        )
