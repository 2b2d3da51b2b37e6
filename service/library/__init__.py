"""The scenario library: named, tagged, revised and shared requests in a SQL database.

The Python-API layer (no Flask): `records` checks and normalises what is stored, `store`
keeps it (SQLAlchemy 2; SQLite by default, PostgreSQL by URL), `migrate` runs the Alembic
migrations in `migrations/`. `python -m service.library upgrade` migrates from the command
line. The HTTP operations are in service/http/library.py.
"""

from __future__ import annotations

from .records import Written, kind_of, owner_hash, validate_write
from .store import Library, database_url, decode_cursor, etag

__all__ = [
    "Library",
    "Written",
    "database_url",
    "decode_cursor",
    "etag",
    "kind_of",
    "owner_hash",
    "validate_write",
]
