"""The scenario library's store: records and their revisions in a SQL database (SQLAlchemy 2).

SQLite in a file by default, PostgreSQL when a URL is configured; the same code for both.
Every write is one transaction, so a worker killed mid-write leaves nothing of it: SQLite
rolls back its journal, PostgreSQL aborts the transaction of a closed connection. A change
of an existing record compares the revision the caller read (its ETag) inside the
transaction that writes the next one, with the row locked (SELECT ... FOR UPDATE on
PostgreSQL; on SQLite every transaction takes the write lock first, BEGIN IMMEDIATE), so two
writers from any workers or replicas cannot both succeed from the same revision: one gets
412. Statements are built with SQLAlchemy's expression language; values travel as bound
parameters, never inside SQL text.

Who sees what: `owner` is a hash of the caller's key (records.owner_hash). A record is
visible to its owner, and to everyone when shared; a record the caller may not see answers
exactly as one that does not exist (404), so ids cannot be probed. Only the owner changes or
deletes a record; another key reading a shared record gets 403 on a change.

A database that cannot be reached is a 503 problem with Retry-After (ProblemError); the
migrations are retried on the next library request, at most every RETRY_SECONDS.
"""

from __future__ import annotations

import base64
import contextlib
import logging
import os
import secrets
import threading
import time
from collections.abc import Callable, Iterator
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import orjson
from sqlalchemy import Engine, and_, create_engine, event, func, or_, select, update
from sqlalchemy import delete as sql_delete
from sqlalchemy.engine import URL, make_url
from sqlalchemy.exc import DBAPIError, IntegrityError, InterfaceError, OperationalError
from sqlalchemy.exc import TimeoutError as PoolTimeout
from sqlalchemy.orm import Session

from ..problems import ProblemError, problem
from .migrate import upgrade
from .models import Owner, Record, Revision, Tag
from .records import Written

__all__ = ["DEFAULT_LIBRARY_PATH", "Library", "database_url"]

log = logging.getLogger("shockpath.library")

#: The SQLite file of an install without a database URL (relative: to the working directory).
DEFAULT_LIBRARY_PATH = "shockpath-library.sqlite3"
#: Seconds between attempts to reach (and migrate) a database that was down.
RETRY_SECONDS = 2.0
_UNREACHABLE = (OperationalError, InterfaceError, PoolTimeout, OSError)


def database_url(database_url: str, library_path: str) -> str:
    """The configured URL (postgresql:// means psycopg 3, the driver installed), or the SQLite
    file at `library_path` (relative: to the working dir)."""
    if database_url.startswith("postgresql://"):
        return "postgresql+psycopg://" + database_url.removeprefix("postgresql://")
    if database_url:
        return database_url
    path = Path(library_path).expanduser().resolve()
    return URL.create("sqlite", database=str(path)).render_as_string()


def _unavailable() -> ProblemError:
    document = problem(
        503,
        "Service Unavailable",
        "The scenario library's database cannot be reached; the compute endpoints still answer. "
        "Try again shortly.",
        "library-unavailable",
    )
    return ProblemError(document, {"Retry-After": "5"})


def _not_found() -> ProblemError:
    return ProblemError(problem(404, "Not Found", "No such scenario.", "no-such-scenario"))


def _limit(detail: str, code: str) -> ProblemError:
    return ProblemError(
        problem(422, "Library limit reached", detail, code, errors=[{"pointer": "", "message": detail}])
    )


def _stamp(moment: datetime) -> str:
    """RFC 3339 in UTC (SQLite returns naive datetimes: they were written in UTC)."""
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=UTC)
    return moment.astimezone(UTC).isoformat(timespec="microseconds").replace("+00:00", "Z")


def etag(record_id: str, revision: int) -> str:
    """The strong tag of one revision of a record (its If-Match value, quoted)."""
    return f"{record_id}.{revision}"


def _encode_cursor(seq: int) -> str:
    return base64.urlsafe_b64encode(f"s{seq}".encode()).decode().rstrip("=")


def decode_cursor(cursor: str) -> int | None:
    """The position a cursor names, or None when it is not one of ours."""
    try:
        text = base64.urlsafe_b64decode(cursor + "=" * (-len(cursor) % 4)).decode()
    except (ValueError, UnicodeDecodeError):
        return None
    if len(text) < 2 or text[0] != "s" or not text[1:].isdigit() or len(text) > 20:
        return None
    return int(text[1:])


def _sqlite_engine(url: str) -> Engine:
    database = make_url(url).database
    if database and database != ":memory:":
        Path(database).parent.mkdir(parents=True, exist_ok=True)
    engine = create_engine(url, connect_args={"timeout": 30})

    @event.listens_for(engine, "connect")
    def _connect(dbapi_connection, _record):
        dbapi_connection.isolation_level = None  # transactions are begun below, not by pysqlite
        cursor = dbapi_connection.cursor()
        cursor.execute("PRAGMA journal_mode=WAL")  # readers do not wait for the writer
        cursor.execute("PRAGMA synchronous=FULL")
        cursor.execute("PRAGMA foreign_keys=ON")
        cursor.execute("PRAGMA busy_timeout=30000")
        cursor.close()

    @event.listens_for(engine, "begin")
    def _begin(connection):
        # Take the write lock at the start: a transaction that read and then writes cannot
        # be refused half-way (SQLITE_BUSY) by another process's write.
        connection.exec_driver_sql("BEGIN IMMEDIATE")

    return engine


def _make_engine(url: str) -> Engine:
    if url.startswith("sqlite"):
        return _sqlite_engine(url)
    return create_engine(
        url,
        pool_pre_ping=True,
        pool_size=2,
        max_overflow=4,
        pool_timeout=5,
        connect_args={"connect_timeout": 3},
    )


class Library:
    """The records of one database. Safe to share between threads; each process (a forked
    gunicorn worker) makes its own engine and connection pool on first use."""

    def __init__(self, url: str, max_records: int, max_revisions: int, write_delay: float = 0.0) -> None:
        self.url = url
        self.max_records = max_records
        self.max_revisions = max_revisions
        #: Seconds to wait inside each write before it commits (tests kill a worker there).
        self.write_delay = write_delay
        self._engine: Engine | None = None
        self._pid = 0
        self._migrated = False
        self._last_attempt = float("-inf")
        self._lock = threading.Lock()

    # --- the database -------------------------------------------------------------------

    @property
    def dialect(self) -> str:
        return make_url(self.url).get_backend_name()

    def engine(self) -> Engine:
        with self._lock:
            if self._engine is None or self._pid != os.getpid():
                self._engine = _make_engine(self.url)
                self._pid = os.getpid()
            return self._engine

    def start(self) -> bool:
        """Run the migrations (at start-up); False, logged, when the database is down: the
        app starts anyway and the library answers 503 until the database is back."""
        try:
            self._migrate()
        except ProblemError:
            log.warning("scenario library: database unreachable at start-up; will retry on use")
            return False
        finally:
            self.close()  # a preloading gunicorn master forks after this: no pooled connections
        return True

    def close(self) -> None:
        with self._lock:
            if self._engine is not None:
                self._engine.dispose()
                self._engine = None

    def _migrate(self) -> None:
        self._last_attempt = time.monotonic()
        try:
            upgrade(self.engine())
        except (*_UNREACHABLE, DBAPIError) as error:
            log.warning("scenario library: migration failed: %s", type(error).__name__)
            raise _unavailable() from None
        self._migrated = True

    def _ready(self) -> None:
        if self._migrated:
            return
        if time.monotonic() - self._last_attempt < RETRY_SECONDS:
            raise _unavailable()
        self._migrate()

    @contextlib.contextmanager
    def _transaction(self) -> Iterator[Session]:
        """One transaction; a database that cannot be reached becomes a 503 problem."""
        self._ready()
        try:
            with Session(self.engine(), expire_on_commit=False) as session, session.begin():
                yield session
        except ProblemError:
            raise
        except IntegrityError:
            raise
        except DBAPIError as error:
            if isinstance(error, (OperationalError, InterfaceError)) or error.connection_invalidated:
                log.warning("scenario library: database error %s", type(error.orig).__name__)
                raise _unavailable() from None
            raise
        except (PoolTimeout, OSError):
            raise _unavailable() from None

    def _pause(self, session: Session) -> None:
        if self.write_delay:
            session.flush()
            time.sleep(self.write_delay)

    # --- reading -------------------------------------------------------------------------

    @staticmethod
    def _visible(owner: str):
        return or_(Record.owner == owner, Record.shared.is_(True))

    def _record(self, session: Session, owner: str, record_id: str, lock: bool = False) -> Record:
        query = select(Record).where(Record.id == record_id, self._visible(owner))
        if lock:
            query = query.with_for_update()
        record = session.scalars(query).one_or_none()
        if record is None:
            raise _not_found()
        return record

    def get(self, owner: str, record_id: str, revision: int | None = None) -> dict[str, Any]:
        """One revision (the latest by default) of a record the owner may see."""
        with self._transaction() as session:
            record = self._record(session, owner, record_id)
            number = record.revision if revision is None else revision
            row = session.get(Revision, (record.seq, number))
            if row is None:
                raise ProblemError(
                    problem(404, "Not Found", f"The scenario has no revision {number}.", "no-such-revision")
                )
            return _body(record, row, owner, with_request=True)

    def list(
        self,
        owner: str,
        name: str = "",
        tags: tuple[str, ...] = (),
        cursor: int | None = None,
        limit: int = 20,
    ) -> dict[str, Any]:
        """Newest first; the owner's records and the shared ones; `name` a substring (any case),
        every tag in `tags`; a page of `limit` and the cursor of the next page."""
        query = (
            select(Record, Revision)
            .join(Revision, and_(Revision.record_seq == Record.seq, Revision.revision == Record.revision))
            .where(self._visible(owner))
        )
        if name:
            query = query.where(Record.name.icontains(name, autoescape=True))
        for tag in tags:
            query = query.where(Record.seq.in_(select(Tag.record_seq).where(Tag.tag == tag)))
        if cursor is not None:
            query = query.where(Record.seq < cursor)
        query = query.order_by(Record.seq.desc()).limit(limit + 1)
        with self._transaction() as session:
            rows = session.execute(query).all()
        page = rows[:limit]
        return {
            "scenarios": [_body(record, row, owner, with_request=False) for record, row in page],
            "next_cursor": _encode_cursor(page[-1][0].seq) if len(rows) > limit else None,
        }

    # --- writing -------------------------------------------------------------------------

    def create(self, owner: str, written: Written) -> dict[str, Any]:
        """A new record at revision 1; 422 when the owner already has max_records."""
        for attempt in range(3):
            try:
                with self._transaction() as session:
                    self._count_one_more(session, owner)
                    now = datetime.now(UTC)
                    record = Record(
                        id=secrets.token_urlsafe(16),
                        owner=owner,
                        shared=written.shared,
                        revision=1,
                        name=written.name,
                        created_at=now,
                    )
                    session.add(record)
                    session.flush()
                    row = self._add_revision(session, record, written, 1, now)
                    self._pause(session)
                    return _body(record, row, owner, with_request=True)
            except IntegrityError:
                # Two first records of one owner at once (its counter row) or an id collision
                # (2^-128): the transaction rolled back; try again.
                if attempt == 2:
                    raise _unavailable() from None
        raise AssertionError("unreachable")

    def _count_one_more(self, session: Session, owner: str) -> None:
        counted = session.execute(
            update(Owner)
            .where(Owner.owner == owner, Owner.records < self.max_records)
            .values(records=Owner.records + 1)
        ).rowcount
        if counted:
            return
        if session.get(Owner, owner) is not None:
            raise _limit(
                f"This key already keeps {self.max_records} scenarios, the most allowed: delete some first.",
                "library-full",
            )
        session.add(Owner(owner=owner, records=1))
        session.flush()

    def _add_revision(
        self, session: Session, record: Record, written: Written, number: int, now: datetime
    ) -> Revision:
        row = Revision(
            record_seq=record.seq,
            revision=number,
            name=written.name,
            notes=written.notes,
            tags=orjson.dumps(list(written.tags)).decode(),
            units=written.units,
            shared=written.shared,
            kind=written.kind,
            request=written.request,
            scenario_id=written.scenario_id,
            model_version=written.model_version,
            created_at=now,
        )
        session.add(row)
        session.execute(sql_delete(Tag).where(Tag.record_seq == record.seq))
        session.add_all([Tag(record_seq=record.seq, tag=t) for t in written.tags])
        session.flush()
        return row

    def _owned(self, session: Session, owner: str, record_id: str, matches: Callable[[str], bool]) -> Record:
        record = self._record(session, owner, record_id, lock=True)
        if record.owner != owner:
            raise ProblemError(
                problem(403, "Forbidden", "This scenario is shared with you; only its owner may change it.")
            )
        if not matches(etag(record.id, record.revision)):
            raise ProblemError(
                problem(
                    412,
                    "Precondition Failed",
                    f"The scenario has changed since you read it (it is at revision {record.revision}): "
                    "read it again, then send its new ETag in If-Match.",
                    "stale-revision",
                ),
                {"ETag": f'"{etag(record.id, record.revision)}"'},
            )
        return record

    def update(
        self, owner: str, record_id: str, written: Written, matches: Callable[[str], bool]
    ) -> dict[str, Any]:
        """The next revision, if `matches` accepts the current revision's tag (else 412)."""
        with self._transaction() as session:
            record = self._owned(session, owner, record_id, matches)
            if record.revision >= self.max_revisions:
                raise _limit(
                    f"This scenario has {record.revision} revisions, the most allowed: save a new one.",
                    "too-many-revisions",
                )
            number = record.revision + 1
            swapped = session.execute(
                update(Record)
                .where(Record.seq == record.seq, Record.revision == record.revision)
                .values(revision=number, name=written.name, shared=written.shared)
                .execution_options(synchronize_session=False)
            ).rowcount
            if swapped != 1:  # cannot happen under the row lock; refuse rather than lose a write
                raise ProblemError(problem(412, "Precondition Failed", "The scenario changed meanwhile."))
            record.revision, record.name, record.shared = number, written.name, written.shared
            row = self._add_revision(session, record, written, number, datetime.now(UTC))
            self._pause(session)
            return _body(record, row, owner, with_request=True)

    def delete(self, owner: str, record_id: str, matches: Callable[[str], bool]) -> None:
        """The record and every revision of it."""
        with self._transaction() as session:
            record = self._owned(session, owner, record_id, matches)
            session.execute(sql_delete(Tag).where(Tag.record_seq == record.seq))
            session.execute(sql_delete(Revision).where(Revision.record_seq == record.seq))
            session.execute(sql_delete(Record).where(Record.seq == record.seq))
            session.execute(update(Owner).where(Owner.owner == owner).values(records=Owner.records - 1))
            self._pause(session)

    def transfer(self, from_owner: str, to_owner: str) -> int:
        """Give every record of `from_owner` to `to_owner` (a key rotated out: its records stay
        with the key that replaces it); the number moved. One transaction: all or nothing, and
        the owners' counts move with the records (the new owner may then hold more than
        max_records: nothing stored is dropped, it only cannot save more until it deletes)."""
        if from_owner == to_owner:
            return 0
        with self._transaction() as session:
            moved = session.execute(
                update(Record).where(Record.owner == from_owner).values(owner=to_owner)
            ).rowcount
            if moved:
                session.execute(sql_delete(Owner).where(Owner.owner == from_owner))
                counted = session.execute(
                    update(Owner).where(Owner.owner == to_owner).values(records=Owner.records + moved)
                ).rowcount
                if not counted:
                    session.add(Owner(owner=to_owner, records=moved))
            return moved

    def count(self) -> dict[str, int]:
        """Rows per table (tests check that nothing half-written is left)."""
        with self._transaction() as session:
            return {
                model.__tablename__: session.scalar(select(func.count()).select_from(model))
                for model in (Owner, Record, Revision, Tag)
            }


def _body(record: Record, row: Revision, owner: str, with_request: bool) -> dict[str, Any]:
    base = f"/v1/scenarios/{record.id}"
    latest = row.revision == record.revision
    body: dict[str, Any] = {
        "id": record.id,
        "revision": row.revision,
        "latest_revision": record.revision,
        "name": row.name,
        "notes": row.notes,
        "tags": orjson.loads(row.tags),
        "units": orjson.loads(row.units or "{}"),
        "shared": row.shared,
        "mine": record.owner == owner,
        "kind": row.kind,
        "scenario_id": row.scenario_id,
        "model_version": row.model_version,
        "created_at": _stamp(record.created_at),
        "revised_at": _stamp(row.created_at),
        "links": {
            "self": base if latest else f"{base}?revision={row.revision}",
            "compute": f"{base}/{row.kind}" if latest else f"{base}/{row.kind}?revision={row.revision}",
            "page": f"/?scenario={record.id}",
        },
    }
    if with_request:
        body["request"] = orjson.loads(row.request)
    return body
