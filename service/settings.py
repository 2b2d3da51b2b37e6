"""Settings: defaults, then SHOCKPATH_* environment variables, then the factory's mapping.

Validated once at start-up: a bad value stops the app with a message naming the variable.
Every setting is listed, with its default, in the README's configuration table.
"""

from __future__ import annotations

import dataclasses
import os
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from . import limits

__all__ = ["Settings", "SettingsError", "load_settings"]

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

    def as_log_dict(self) -> dict[str, Any]:
        return dataclasses.asdict(self)


_LEVELS = {"CRITICAL", "ERROR", "WARNING", "INFO", "DEBUG"}


def _parse(name: str, raw: Any, default: Any) -> Any:
    if isinstance(default, bool):
        if isinstance(raw, bool):
            return raw
        text = str(raw).strip().lower()
        if text in {"1", "true", "yes", "on"}:
            return True
        if text in {"0", "false", "no", "off"}:
            return False
        raise SettingsError(f"{PREFIX}{name.upper()} must be true or false, not {raw!r}")
    if isinstance(default, int):
        try:
            value = int(raw)
        except (TypeError, ValueError):
            raise SettingsError(f"{PREFIX}{name.upper()} must be a whole number, not {raw!r}") from None
        if value <= 0:
            raise SettingsError(f"{PREFIX}{name.upper()} must be positive, not {value}")
        return value
    return str(raw)


def load_settings(
    config: Mapping[str, Any] | None = None, environ: Mapping[str, str] | None = None
) -> Settings:
    """Defaults < environment < `config` (keys are field names, any case)."""
    environ = os.environ if environ is None else environ
    values: dict[str, Any] = {}
    for f in dataclasses.fields(Settings):
        default = f.default
        raw = environ.get(PREFIX + f.name.upper())
        if config is not None:
            for key in (f.name, f.name.upper(), PREFIX + f.name.upper()):
                if key in config:
                    raw = config[key]
        values[f.name] = default if raw is None else _parse(f.name, raw, default)
    if str(values["log_level"]).upper() not in _LEVELS:
        raise SettingsError(
            f"{PREFIX}LOG_LEVEL must be one of {sorted(_LEVELS)}, not {values['log_level']!r}"
        )
    values["log_level"] = str(values["log_level"]).upper()
    return Settings(**values)
