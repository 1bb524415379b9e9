"""Alembic environment for qcnorm's history store.

qcnorm runs migrations itself when a store is opened (``qcnorm/store/migrate.py``):
it passes an open connection, inside its own transaction, as
``config.attributes["connection"]``. There is no alembic.ini and no offline mode.
"""

from __future__ import annotations

from alembic import context

connection = context.config.attributes.get("connection")
if connection is None:  # pragma: no cover - only reachable by calling the alembic CLI by hand
    raise SystemExit("qcnorm migrations run from qcnorm.store.HistoryStore, not the alembic command line.")

context.configure(connection=connection, target_metadata=None, transaction_per_migration=False)
with context.begin_transaction():
    context.run_migrations()
