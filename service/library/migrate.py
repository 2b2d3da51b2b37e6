"""The library's schema migrations (Alembic): run by create_app at start-up and by
`python -m service.library upgrade`.

Migrations run in one transaction. On PostgreSQL a transaction-scoped advisory lock lets
one replica migrate while the others wait (and then find nothing to do); on SQLite the
transaction itself takes the write lock (BEGIN IMMEDIATE, see store.py).
"""

from __future__ import annotations

from pathlib import Path

from alembic import command
from alembic.config import Config
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import Engine, text

__all__ = ["MIGRATIONS", "current_revision", "head_revision", "upgrade"]

MIGRATIONS = Path(__file__).resolve().parent / "migrations"
#: The advisory lock key the replicas migrate under ("shockpath" in a 64-bit integer).
_LOCK_KEY = int.from_bytes(b"shockpth", "big") >> 1


def _config() -> Config:
    config = Config()
    config.set_main_option("script_location", str(MIGRATIONS).replace("%", "%%"))
    return config


def upgrade(engine: Engine, target: str = "head") -> None:
    """Bring the database's schema to `target` (the newest by default)."""
    config = _config()
    with engine.begin() as connection:
        if connection.dialect.name == "postgresql":
            connection.execute(text("SELECT pg_advisory_xact_lock(:key)"), {"key": _LOCK_KEY})
        config.attributes["connection"] = connection
        command.upgrade(config, target)


def current_revision(engine: Engine) -> str | None:
    with engine.connect() as connection:
        return MigrationContext.configure(connection).get_current_revision()


def head_revision() -> str | None:
    return ScriptDirectory.from_config(_config()).get_current_head()
