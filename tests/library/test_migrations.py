"""The migrations build exactly the tables the models describe, run by create_app at start-up
and by `python -m service.library upgrade`; running them again changes nothing."""

from __future__ import annotations

import os
import subprocess
import sys
from datetime import UTC, datetime
from pathlib import Path

from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext
from sqlalchemy import MetaData, create_engine, insert, select

from service.examples import example_request
from service.library import database_url, owner_hash, validate_write
from service.library.migrate import current_revision, head_revision, upgrade
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


def _insert_a_0001_record(engine) -> None:
    """One record as the library wrote it at migration 0001 (no units), with its tag and its
    owner's count: the keyless owner's, so the app below may read it."""
    written = validate_write(
        {
            "name": "Before units",
            "tags": ["old"],
            "request": dict(example_request("quillbrook-rent-freeze"), horizon=3),
        }
    )
    now = datetime(2026, 3, 2, 9, 15, tzinfo=UTC)
    owner = owner_hash("")
    with engine.begin() as connection:
        tables = MetaData()
        tables.reflect(connection)
        assert "units" not in tables.tables["scenario_revisions"].c  # the shape of 0001
        connection.execute(insert(tables.tables["library_owners"]).values(owner=owner, records=1))
        (seq,) = connection.execute(
            insert(tables.tables["scenario_records"]).values(
                id="before-units-0123456789",
                owner=owner,
                shared=False,
                revision=1,
                name=written.name,
                created_at=now,
            )
        ).inserted_primary_key
        connection.execute(
            insert(tables.tables["scenario_revisions"]).values(
                record_seq=seq,
                revision=1,
                name=written.name,
                notes="kept as it was",
                tags='["old"]',
                shared=False,
                kind=written.kind,
                request=written.request,
                scenario_id=written.scenario_id,
                model_version=written.model_version,
                created_at=now,
            )
        )
        connection.execute(insert(tables.tables["scenario_tags"]).values(record_seq=seq, tag="old"))


def test_upgrading_a_0001_database_keeps_its_records_and_reads_their_units_as_none(database, make_client):
    engine = create_engine(_url(database))
    try:
        upgrade(engine, "0001")
        assert current_revision(engine) == "0001"
        _insert_a_0001_record(engine)
        with engine.connect() as connection:
            before = connection.exec_driver_sql(
                "SELECT record_seq, revision, name, notes, tags, request, scenario_id FROM scenario_revisions"
            ).all()
        upgrade(engine)
        assert current_revision(engine) == head_revision() != "0001"
        with engine.connect() as connection:
            tables = MetaData()
            tables.reflect(connection)
            revisions = tables.tables["scenario_revisions"]
            after = connection.execute(
                select(
                    revisions.c.record_seq,
                    revisions.c.revision,
                    revisions.c.name,
                    revisions.c.notes,
                    revisions.c.tags,
                    revisions.c.request,
                    revisions.c.scenario_id,
                )
            ).all()
            units = connection.execute(select(revisions.c.units)).scalars().all()
        assert after == before and units == ["{}"]
    finally:
        engine.dispose()
    client = make_client()  # the app finds the schema at head and reads the old record
    record = client.get("/v1/scenarios/before-units-0123456789").get_json()
    assert record["units"] == {}
    assert (record["name"], record["notes"], record["tags"]) == ("Before units", "kept as it was", ["old"])
    assert client.get("/v1/scenarios?tag=old").get_json()["scenarios"][0]["units"] == {}
    assert client.get("/v1/scenarios/before-units-0123456789/paths").status_code == 200
    # Its next revision keeps the units it is saved with; the first still reads none.
    body = {"name": "Before units", "units": {"period": "year"}, "request": record["request"]}
    revised = client.put(
        "/v1/scenarios/before-units-0123456789",
        json=body,
        headers={"If-Match": '"before-units-0123456789.1"'},
    )
    assert revised.status_code == 200 and revised.get_json()["units"] == {"period": "year"}
    assert client.get("/v1/scenarios/before-units-0123456789?revision=1").get_json()["units"] == {}
