"""Settings: defaults, then SHOCKPATH_* environment variables, then the factory's mapping.

Validated once at start-up: a bad value stops the app with a message naming the variable.
Every setting is listed, with its default, in deploy/OPERATIONS.md (Settings).
"""

from __future__ import annotations

import dataclasses
import os
import re
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .. import limits
from ..library.store import DEFAULT_LIBRARY_PATH

__all__ = ["Settings", "SettingsError", "load_settings", "redact_url"]

PREFIX = "SHOCKPATH_"


class SettingsError(ValueError):
    """Invalid configuration; the message names the variable."""


@dataclass(frozen=True)
class Settings:
    #: Largest accepted request body, bytes (413 above it).
    max_body_bytes: int = limits.MAX_BODY_BYTES
    #: Python logging level name.
    log_level: str = "INFO"
    #: Threads that solve blocks of draws of one /v1/bands request side by side.
    band_threads: int = 2
    #: Bearer keys for /v1 (comma-separated); none = no authentication.
    api_keys: tuple[str, ...] = ()
    #: A file with one key per line (a mounted secret); its keys add to api_keys.
    api_keys_file: str = ""
    #: Whether /metrics also needs a key when keys are configured.
    metrics_require_key: bool = False
    #: Bytes of answers each worker keeps for repeated requests: rendered /v1/paths answers and
    #: /v1/bands answers as JSON (read by their CSV forms, workbook and band chart); 0: none.
    cache_bytes: int = 64 * 1024 * 1024
    #: Serve POST /benchmark/echo (parse and echo a JSON body): the benchmarks' floor.
    benchmark_echo: bool = False
    #: Origins (scheme://host[:port], comma-separated, or *) whose pages may call the API; none = no CORS.
    cors_origins: tuple[str, ...] = ()
    #: SQLAlchemy URL of the scenario library's database (postgresql+psycopg://...); none = SQLite.
    database_url: str = ""
    #: The SQLite file of the scenario library when no database_url is set (relative: to the working dir).
    library_path: str = DEFAULT_LIBRARY_PATH
    #: Records each owner may keep in the scenario library.
    library_max_records: int = limits.MAX_RECORDS_PER_OWNER
    #: Revisions each scenario record may reach.
    library_max_revisions: int = limits.MAX_REVISIONS_PER_RECORD
    #: Fault injection for tests: milliseconds each library write waits before it commits.
    library_write_delay_ms: int = 0

    def as_log_dict(self) -> dict[str, Any]:
        """The effective settings, keys redacted."""
        out = dataclasses.asdict(self)
        out["api_keys"] = f"{len(self.api_keys)} configured"
        out["database_url"] = redact_url(self.database_url)
        return out


def redact_url(url: str) -> str:
    """A database URL with its password replaced by ***, for logs."""
    return re.sub(r"(://[^:/@]*:)[^@]*@", r"\1***@", url)


#: Whole-number settings for which 0 means "none".
_ZERO_ALLOWED = {"cache_bytes", "library_write_delay_ms"}

_LEVELS = {"CRITICAL", "ERROR", "WARNING", "INFO", "DEBUG"}

#: An origin as a browser sends it: scheme, host and optional port; no path, no trailing slash.
_ORIGIN = re.compile(r"^https?://[A-Za-z0-9.-]+(:[0-9]{1,5})?$|^https?://\[[0-9A-Fa-f:.]+\](:[0-9]{1,5})?$")


def _variable(name: str) -> str:
    return PREFIX + name.upper()


def _parse(name: str, raw: Any, default: Any) -> Any:
    if isinstance(default, bool):
        if isinstance(raw, bool):
            return raw
        text = str(raw).strip().lower()
        if text in {"1", "true", "yes", "on"}:
            return True
        if text in {"0", "false", "no", "off"}:
            return False
        raise SettingsError(f"{_variable(name)} must be true or false, not {raw!r}")
    if isinstance(default, int):
        try:
            value = int(raw)
        except (TypeError, ValueError):
            raise SettingsError(f"{_variable(name)} must be a whole number, not {raw!r}") from None
        if value < 0 or (value == 0 and name not in _ZERO_ALLOWED):
            raise SettingsError(f"{_variable(name)} must be positive, not {value}")
        return value
    if isinstance(default, tuple):
        items = raw if isinstance(raw, (list, tuple)) else str(raw).split(",")
        return tuple(k.strip() for k in items if str(k).strip())
    return str(raw)


def _keys_from_file(path: str) -> tuple[str, ...]:
    try:
        text = Path(path).read_text(encoding="utf-8")
    except OSError as error:
        raise SettingsError(
            f"{_variable('api_keys_file')}: cannot read {path!r} ({error.strerror})"
        ) from None
    return tuple(line.strip() for line in text.splitlines() if line.strip() and not line.startswith("#"))


def load_settings(
    config: Mapping[str, Any] | None = None, environ: Mapping[str, str] | None = None
) -> Settings:
    """Defaults < environment < `config` (keys are field names, any case)."""
    environ = os.environ if environ is None else environ
    values: dict[str, Any] = {}
    for f in dataclasses.fields(Settings):
        default = f.default
        raw = environ.get(_variable(f.name))
        if config is not None:
            for key in (f.name, f.name.upper(), _variable(f.name)):
                if key in config:
                    raw = config[key]
        values[f.name] = default if raw is None else _parse(f.name, raw, default)
    level = str(values["log_level"]).upper()
    if level not in _LEVELS:
        raise SettingsError(
            f"{_variable('log_level')} must be one of {sorted(_LEVELS)}, not {values['log_level']!r}"
        )
    values["log_level"] = level
    if values["api_keys_file"]:
        values["api_keys"] = values["api_keys"] + _keys_from_file(values["api_keys_file"])
    bad = [o for o in values["cors_origins"] if o != "*" and not _ORIGIN.match(o)]
    if bad:
        raise SettingsError(
            f"{_variable('cors_origins')}: {bad[0]!r} is not an origin (scheme://host[:port], no path) or *"
        )
    url = values["database_url"]
    if url and not re.match(r"^(postgresql(\+psycopg)?|sqlite)://", url):
        raise SettingsError(
            f"{_variable('database_url')} must be a postgresql+psycopg://... or sqlite:///... URL"
        )
    short = [k for k in values["api_keys"] if len(k) < 16]
    if short:
        raise SettingsError(f"{_variable('api_keys')}: every key must have at least 16 characters")
    return Settings(**values)
