"""Alembic environment of the catalogue database (run from code, see partsel.catalogue.db).

The caller passes an open SQLAlchemy connection in ``config.attributes["connection"]``; there is
no alembic.ini. Batch mode is on so that later revisions can alter SQLite tables.
"""

from __future__ import annotations

from alembic import context

from partsel.catalogue.tables import metadata

connection = context.config.attributes.get("connection")
if connection is None:
    raise RuntimeError("partsel migrations run with a connection from partsel.catalogue.db")

context.configure(connection=connection, target_metadata=metadata, render_as_batch=True)
with context.begin_transaction():
    context.run_migrations()
