"""RFC 6901 JSON Pointers: one escaping rule, and marshmallow's nested error messages turned
into [{"pointer", "message"}] (the `errors` of a 422 problem document)."""

from __future__ import annotations

from typing import Any

__all__ = ["escape", "field_errors", "pointer_order"]


def escape(token: Any) -> str:
    """One reference token of a JSON Pointer: "~" as "~0", "/" as "~1" (RFC 6901, section 3)."""
    return str(token).replace("~", "~0").replace("/", "~1")


def field_errors(messages: Any, prefix: str = "") -> list[dict[str, str]]:
    """Flatten marshmallow's nested error messages into [{"pointer", "message"}], sorted in
    the request's order (pointer_order), then by message."""
    out: list[dict[str, str]] = []
    if isinstance(messages, dict) and messages and set(messages) <= {"key", "value"}:
        # marshmallow's Dict nests a member's errors under "key" (its name) and "value":
        # both belong to the member itself. (No schema here has fields named key or value.)
        for value in messages.values():
            out.extend(field_errors(value, prefix))
    elif isinstance(messages, dict):
        for key, value in messages.items():
            pointer = prefix if key == "_schema" else f"{prefix}/{escape(key)}"
            out.extend(field_errors(value, pointer))
    elif isinstance(messages, (list, tuple)):
        for item in messages:
            if isinstance(item, (dict, list, tuple)):
                out.extend(field_errors(item, prefix))
            else:
                out.append({"pointer": prefix, "message": str(item)})
    else:
        out.append({"pointer": prefix, "message": str(messages)})
    return sorted(out, key=lambda e: (pointer_order(e["pointer"]), e["message"]))


def pointer_order(pointer: str) -> tuple[tuple[int, int | str], ...]:
    """A sort key for JSON Pointers, segment by segment: array indices compared as numbers,
    so that a list's errors come in the list's order (/values/2 before /values/10, where
    string order puts 10 first); member names in string order, after indices."""
    return tuple(
        (0, int(token)) if token.isascii() and token.isdigit() else (1, token)
        for token in pointer.split("/")[1:]
    )
