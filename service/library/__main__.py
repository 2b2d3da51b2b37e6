"""python -m service.library upgrade | current | head | transfer

upgrade: bring the configured database (SHOCKPATH_DATABASE_URL, else the SQLite file at
SHOCKPATH_LIBRARY_PATH) to the newest schema; current: print its schema revision; head: the
newest revision this code knows.

transfer: when a key is rotated out, give its saved scenarios to the key that replaces it.
Reads two lines on standard input, the old key then the new one (never on the command line,
where other users of the machine could read them; an empty first line: the scenarios saved
while no keys were configured), and prints how many scenarios moved. The
library keeps only hashes of keys, so without this the old key's scenarios stay out of reach
of the new one. Run it once both keys are configured, before the old one is removed.
"""

from __future__ import annotations

import os
import sys

from .migrate import current_revision, head_revision, upgrade
from .records import owner_hash
from .store import DEFAULT_LIBRARY_PATH, Library, _make_engine, database_url


def _url() -> str:
    return database_url(
        os.environ.get("SHOCKPATH_DATABASE_URL", ""),
        os.environ.get("SHOCKPATH_LIBRARY_PATH", DEFAULT_LIBRARY_PATH),
    )


def _transfer(lines: list[str]) -> int:
    while lines and not lines[-1].strip():
        lines = lines[:-1]
    keys = [line.strip() for line in lines]
    # An empty old key names the keyless owner (records saved while no keys were configured).
    if len(keys) != 2 or not keys[1]:
        print("transfer: give the old key and the new key, one per line, on standard input", file=sys.stderr)
        return 2
    library = Library(_url(), max_records=0, max_revisions=0)
    try:
        library.start()
        moved = library.transfer(owner_hash(keys[0]), owner_hash(keys[1]))
    finally:
        library.close()
    print(f"{moved} scenario(s) moved to the new key")
    return 0


def main(argv: list[str]) -> int:
    command = argv[0] if argv else ""
    if command not in {"upgrade", "current", "head", "transfer"}:
        print(__doc__, file=sys.stderr)
        return 2
    if command == "head":
        print(head_revision())
        return 0
    if command == "transfer":
        return _transfer(sys.stdin.read().splitlines())
    engine = _make_engine(_url())
    try:
        if command == "upgrade":
            upgrade(engine)
        print(current_revision(engine))
    finally:
        engine.dispose()
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
