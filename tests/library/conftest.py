"""The scenario library's fixtures: every test runs against SQLite (a fresh file) and against
PostgreSQL.

PostgreSQL is the server at SHOCKPATH_TEST_DATABASE_URL (a database the tests may empty);
.ci/run installs and starts one and sets it. Without the variable the PostgreSQL cases skip,
except where SHOCKPATH_REQUIRE_POSTGRES=1 (CI): there they fail, so they cannot silently
not run.
"""

from __future__ import annotations

import functools
import os
import socket
from collections.abc import Callable

import pytest
from sqlalchemy import MetaData, create_engine, inspect

from service import create_app
from service.library import database_url

KEY_A = "key-of-analyst-a-0123456789"
KEY_B = "key-of-analyst-b-9876543210"


def postgres_url() -> str | None:
    """The test database's URL; under pytest-xdist, with a schema of the worker's own first on
    the search path (created here), so that workers running side by side never see each
    other's tables."""
    url = os.environ.get("SHOCKPATH_TEST_DATABASE_URL")
    if not url:
        if os.environ.get("SHOCKPATH_REQUIRE_POSTGRES"):
            pytest.fail("SHOCKPATH_TEST_DATABASE_URL must name a PostgreSQL database here (CI)")
        pytest.skip("SHOCKPATH_TEST_DATABASE_URL is not set (no PostgreSQL to test against)")
    worker = os.environ.get("PYTEST_XDIST_WORKER", "")
    if not worker:
        return url
    return _worker_schema(url, f"shockpath_test_{worker}")


@functools.cache
def _worker_schema(url: str, schema: str) -> str:
    """`url` with `schema` (created if missing) first on its search path."""
    engine = create_engine(database_url(url, ""))
    try:
        with engine.begin() as connection:
            connection.exec_driver_sql(f'CREATE SCHEMA IF NOT EXISTS "{schema}"')
    finally:
        engine.dispose()
    separator = "&" if "?" in url else "?"
    return f"{url}{separator}options=-csearch_path%3D{schema}"


def empty_postgres(url: str) -> None:
    """Drop every table (the library's and Alembic's), so the app migrates from nothing."""
    engine = create_engine(database_url(url, ""))
    try:
        with engine.begin() as connection:
            metadata = MetaData()
            metadata.reflect(connection)
            metadata.drop_all(connection)
    finally:
        engine.dispose()


def clear_postgres(url: str) -> None:
    """Empty every table of a database whose schema is the migrations' head (and restart its
    sequences): the state a test would find after migrating from nothing, reached in a few
    milliseconds. Any other schema is dropped instead (`empty_postgres`)."""
    from service.library.migrate import head_revision
    from service.library.models import Base

    engine = create_engine(database_url(url, ""))
    try:
        with engine.begin() as connection:
            found = set(inspect(connection).get_table_names())
            wanted = set(Base.metadata.tables)
            at_head = "alembic_version" in found and connection.exec_driver_sql(
                "SELECT version_num FROM alembic_version"
            ).scalars().all() == [head_revision()]
            if at_head and found == wanted | {"alembic_version"}:
                names = ", ".join(f'"{name}"' for name in sorted(wanted))
                connection.exec_driver_sql(f"TRUNCATE {names} RESTART IDENTITY CASCADE")
                return
    finally:
        engine.dispose()
    empty_postgres(url)


@pytest.fixture(params=["sqlite", "postgres"])
def database(request, tmp_path) -> dict[str, str]:
    """Settings naming an empty database of each kind: SQLite a new file (the schema migrated
    from nothing by the app, every test); PostgreSQL with no rows, its schema kept from an
    earlier test where it is the migrations' head, or with no tables at all in a module that
    sets FROM_NOTHING (the migrations' own tests)."""
    if request.param == "sqlite":
        return {"library_path": str(tmp_path / "library.sqlite3")}
    url = postgres_url()
    if getattr(request.module, "FROM_NOTHING", False):
        empty_postgres(url)
    else:
        clear_postgres(url)
    return {"database_url": url}


@pytest.fixture()
def make_client(database, checker) -> Callable[..., object]:
    """make_client(**settings): a test client of an app on `database`, responses checked
    against the OpenAPI document."""
    apps = []

    def make(**settings):
        app = create_app({"TESTING": True, **database, **settings})
        apps.append(app)
        return checker.wrap(app.test_client())

    yield make
    for app in apps:
        app.extensions["shockpath.library"].close()


@pytest.fixture()
def library_client(make_client):
    return make_client()


def closed_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def tables(url: str) -> set[str]:
    engine = create_engine(url)
    try:
        return set(inspect(engine).get_table_names())
    finally:
        engine.dispose()


def bearer(key: str) -> dict[str, str]:
    return {"Authorization": f"Bearer {key}"}
