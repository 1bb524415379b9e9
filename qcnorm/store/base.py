"""The store's engine: connecting, transactions, plain-words errors, schema upgrade on open."""

from __future__ import annotations

import contextlib
import os
from collections.abc import Iterator
from typing import Any

import numpy as np
import sqlalchemy as sa
from sqlalchemy import event
from sqlalchemy.engine import Connection, Engine

from ..errors import ConfigError, StoreError
from . import chain, migrate
from . import _common
from ._common import _as_url, _plain_reason, default_db_url

__all__ = ["StoreBase"]

_PG_CONNECT_TIMEOUT_S = 10


class StoreBase:
    """Connection handling shared by every room of :class:`~qcnorm.store.HistoryStore`."""

    def __init__(self, url: str | os.PathLike[str] | None = None) -> None:
        raw = default_db_url() if url is None else _as_url(url)
        try:
            parsed = sa.engine.make_url(raw)
        except Exception:  # noqa: BLE001 - any parse failure is a bad URL
            raise ConfigError(
                f"The history database URL {raw!r} cannot be read. Use an SQLAlchemy URL such as "
                "'sqlite:///C:/qc/history.sqlite3' or 'postgresql+psycopg://user@host:5432/db', "
                "or a plain file path."
            ) from None
        self._url = parsed
        self._closed = False
        self._engine = self._make_engine(parsed)
        self._is_sqlite = self._engine.dialect.name == "sqlite"
        self._is_pg = self._engine.dialect.name == "postgresql"
        self._writer = self._engine.execution_options(qcnorm_write=True)
        try:
            migrate.upgrade(self)
        except BaseException:
            self._engine.dispose()
            raise

    # ---- engine and transactions
    def _make_engine(self, url: sa.URL) -> Engine:
        kwargs: dict[str, Any] = {}
        backend = url.get_backend_name()
        if backend == "sqlite":
            kwargs["connect_args"] = {"timeout": _common.SQLITE_BUSY_TIMEOUT_S, "check_same_thread": False}
            if url.database in (None, "", ":memory:"):
                kwargs["poolclass"] = sa.pool.StaticPool
        elif backend == "postgresql" and "connect_timeout" not in url.query:
            kwargs["connect_args"] = {"connect_timeout": _PG_CONNECT_TIMEOUT_S}
        try:
            engine = sa.create_engine(url, **kwargs)
        except Exception as exc:  # noqa: BLE001 - missing driver, bad options
            raise StoreError(
                f"Cannot use the history database {self.url}: {exc}. "
                "Check the URL; PostgreSQL needs 'postgresql+psycopg://' and the psycopg package."
            ) from None
        if backend == "sqlite":
            busy_ms = int(_common.SQLITE_BUSY_TIMEOUT_S * 1000)

            @event.listens_for(engine, "connect")
            def _on_connect(dbapi_conn: Any, _record: Any) -> None:
                # Take transaction control away from pysqlite so that BEGIN is ours
                # (transactional DDL, BEGIN IMMEDIATE for writers).
                dbapi_conn.isolation_level = None
                cur = dbapi_conn.cursor()
                try:
                    cur.execute(f"PRAGMA busy_timeout = {busy_ms}")
                    cur.execute("PRAGMA foreign_keys = ON")
                    if url.database not in (None, "", ":memory:"):
                        cur.execute("PRAGMA journal_mode = WAL")
                finally:
                    cur.close()

            @event.listens_for(engine, "begin")
            def _on_begin(conn: Connection) -> None:
                write = conn.get_execution_options().get("qcnorm_write", False)
                conn.exec_driver_sql("BEGIN IMMEDIATE" if write else "BEGIN")

        return engine

    @property
    def url(self) -> str:
        """The database URL with any password masked."""
        return self._url.render_as_string(hide_password=True)

    @contextlib.contextmanager
    def _errors(self, action: str) -> Iterator[None]:
        dbapi = getattr(self._engine.dialect, "loaded_dbapi", None)
        dbapi_error: type[BaseException] = getattr(dbapi, "Error", sa.exc.SQLAlchemyError)
        try:
            yield
        except (sa.exc.SQLAlchemyError, dbapi_error) as exc:
            what, next_step = _plain_reason(exc)
            raise StoreError(
                f"Could not {action} (history database {self.url}): {what}. "
                f"Next step: {next_step}."
            ) from None

    @contextlib.contextmanager
    def _transaction(self, action: str, *, chained: bool = True) -> Iterator[Connection]:
        """One write transaction; errors become StoreError.

        Writers are serialised: SQLite starts with BEGIN IMMEDIATE; on PostgreSQL a
        chained transaction first locks the chain head row (``chain.lock_head``).
        """
        self._check_open()
        with self._errors(action), self._writer.begin() as conn:
            if chained and self._is_pg:
                chain.lock_head(conn, postgres=True)
            yield conn

    @contextlib.contextmanager
    def _reading(self, action: str) -> Iterator[Connection]:
        self._check_open()
        with self._errors(action), self._engine.begin() as conn:
            yield conn

    def _check_open(self) -> None:
        if self._closed:
            raise StoreError(f"The history store {self.url} was closed. Open a new HistoryStore.")

    def close(self) -> None:
        """Release every connection. The store cannot be used afterwards."""
        if not self._closed:
            self._closed = True
            self._engine.dispose()

    def __enter__(self) -> StoreBase:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"HistoryStore({self.url!r})"

    @property
    def schema_version(self) -> int:
        """The schema version of the open database."""
        with self._reading("read the schema version") as conn:
            return migrate.read_version(conn)

    @staticmethod
    def _id(value: Any) -> int:
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
            raise ConfigError(f"A record id must be a whole number. Got {value!r} instead.")
        return int(value)
