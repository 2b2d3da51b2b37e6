"""Alembic's environment: migrations run on the connection migrate.upgrade passes in."""

from alembic import context

from service.library.models import Base

connection = context.config.attributes["connection"]
context.configure(connection=connection, target_metadata=Base.metadata, render_as_batch=True)
with context.begin_transaction():
    context.run_migrations()
