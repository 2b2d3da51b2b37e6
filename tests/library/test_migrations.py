"""The migrations build exactly the tables the models describe, run by create_app at start-up
and by `python -m service.library upgrade`; running them again changes nothing."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext
from sqlalchemy import create_engine

from service.library import database_url
from service.library.migrate import head_revision, upgrade
from service.library.models import Base

ROOT = Path(__file__).resolve().parents[2]


#: Each PostgreSQL case starts from a database without tables (see conftest.database).
FROM_NOTHING = True


def _url(database: dict[str, str]) -> str:
    return database_url(database.get("database_url", ""), database.get("library_path", ""))


def test_the_migrations_build_exactly_the_models_tables(database):
    engine = create_engine(_url(database))
    try:
        upgrade(engine)
        upgrade(engine)  # a second run finds nothing to do
        with engine.connect() as connection:
            context = MigrationContext.configure(connection)
            assert context.get_current_revision() == head_revision()
            assert compare_metadata(context, Base.metadata) == []
    finally:
        engine.dispose()


#: The library's command line (`python -m service.library`), run from the checkout.
COMMAND = [sys.executable, "-m", "service.library"]


def _command_env(database: dict[str, str]) -> dict[str, str]:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    env.pop("SHOCKPATH_DATABASE_URL", None)
    env.update({f"SHOCKPATH_{k.upper()}": v for k, v in database.items()})
    return env


def test_the_upgrade_command_migrates_the_configured_database(database):
    env = _command_env(database)
    upgraded = subprocess.run(
        [*COMMAND, "upgrade"], cwd=ROOT, env=env, capture_output=True, text=True, check=True
    )
    assert upgraded.stdout.strip() == head_revision()
    current = subprocess.run(
        [*COMMAND, "current"], cwd=ROOT, env=env, capture_output=True, text=True, check=True
    )
    assert current.stdout.strip() == head_revision()


def test_an_unknown_command_is_a_usage_error_naming_the_commands(tmp_path):
    """Refused before any database is opened (so once, not once per database)."""
    env = _command_env({"library_path": str(tmp_path / "never-opened.sqlite3")})
    usage = subprocess.run([*COMMAND, "sideways"], cwd=ROOT, env=env, capture_output=True, text=True)
    assert usage.returncode == 2 and "upgrade" in usage.stderr
    assert not (tmp_path / "never-opened.sqlite3").exists()


def test_the_app_migrates_at_start_up(make_client, database):
    from .conftest import tables

    make_client()
    assert {
        "scenario_records",
        "scenario_revisions",
        "scenario_tags",
        "library_owners",
        "alembic_version",
    } <= (tables(_url(database)))
