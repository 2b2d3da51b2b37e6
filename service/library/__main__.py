"""python -m service.library upgrade | current | head

upgrade: bring the configured database (SHOCKPATH_DATABASE_URL, else the SQLite file at
SHOCKPATH_LIBRARY_PATH) to the newest schema; current: print its schema revision; head: the
newest revision this code knows.
"""

from __future__ import annotations

import os
import sys

from .migrate import current_revision, head_revision, upgrade
from .store import DEFAULT_LIBRARY_PATH, _make_engine, database_url


def main(argv: list[str]) -> int:
    command = argv[0] if argv else ""
    if command not in {"upgrade", "current", "head"}:
        print(__doc__, file=sys.stderr)
        return 2
    if command == "head":
        print(head_revision())
        return 0
    url = database_url(
        os.environ.get("SHOCKPATH_DATABASE_URL", ""),
        os.environ.get("SHOCKPATH_LIBRARY_PATH", DEFAULT_LIBRARY_PATH),
    )
    engine = _make_engine(url)
    try:
        if command == "upgrade":
            upgrade(engine)
        print(current_revision(engine))
    finally:
        engine.dispose()
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
