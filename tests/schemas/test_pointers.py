"""service/schemas/pointers.py: RFC 6901 escaping and marshmallow errors as JSON Pointers."""

from __future__ import annotations

import pytest

from service import ProblemError, simulate
from service.schemas.pointers import escape, field_errors

from ..engine.builders import validation_base


def test_tilde_and_slash_are_escaped_as_rfc_6901_says():
    # RFC 6901, section 3: "~" is written "~0" and "/" is written "~1" (in that order).
    assert escape("a/b~c") == "a~1b~0c"
    assert escape("~1") == "~01"


def test_a_shifter_name_with_a_slash_is_escaped_in_the_error_pointer():
    request = validation_base()
    request["market"]["demand"]["shifters"] = {"rate/10y~": "high"}
    with pytest.raises(ProblemError) as info:
        simulate(request)
    assert [e["pointer"] for e in info.value.problem["errors"]] == ["/market/demand/shifters/rate~110y~0"]


def test_schema_errors_point_at_the_object_and_nested_errors_are_sorted():
    messages = {"_schema": ["bad"], "b": {"0": ["x"]}, "a": ["y", "z"]}
    assert field_errors(messages, "/p") == [
        {"pointer": "/p", "message": "bad"},
        {"pointer": "/p/a", "message": "y"},
        {"pointer": "/p/a", "message": "z"},
        {"pointer": "/p/b/0", "message": "x"},
    ]
