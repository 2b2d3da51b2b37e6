"""A record keeps the display units the analyst typed (currency, what homes are counted as,
the rent interval, the period), each revision its own, so that whoever opens it reads its
charts in the same words; on SQLite and on PostgreSQL."""

from __future__ import annotations

import pytest

from service import limits

from .test_records import FREEZE, put, save, short

TYPED = {
    "currency": "pounds",
    "quantity": "homes",
    "unit": "home",
    "price_interval": "month",
    "period": "year",
}


def test_a_record_saved_with_units_gives_them_back_everywhere_it_is_read(library_client):
    saved = save(library_client, units=TYPED).get_json()
    assert saved["units"] == TYPED
    read = library_client.get(saved["links"]["self"]).get_json()
    assert read["units"] == TYPED
    (listed,) = library_client.get("/v1/scenarios").get_json()["scenarios"]
    assert listed["units"] == TYPED


def test_each_revision_keeps_the_units_it_was_saved_with(library_client):
    first = save(library_client, units={"currency": "pounds", "period": "year"}).get_json()
    second = put(library_client, first, units={"currency": "euros", "period": "quarter"}).get_json()
    assert second["revision"] == 2 and second["units"] == {"currency": "euros", "period": "quarter"}
    third = put(library_client, second).get_json()  # a PUT replaces all: no units sent, none kept
    assert third["revision"] == 3 and third["units"] == {}
    base = f"/v1/scenarios/{first['id']}"
    by_revision = {n: library_client.get(f"{base}?revision={n}").get_json()["units"] for n in (1, 2, 3)}
    assert by_revision == {
        1: {"currency": "pounds", "period": "year"},
        2: {"currency": "euros", "period": "quarter"},
        3: {},
    }
    assert library_client.get("/v1/scenarios").get_json()["scenarios"][0]["units"] == {}


def test_a_record_saved_without_units_reads_an_empty_object(library_client):
    record = save(library_client).get_json()
    assert record["units"] == {}
    assert library_client.get(record["links"]["self"]).get_json()["units"] == {}


def test_units_are_trimmed_and_empty_ones_left_out(library_client):
    record = save(library_client, units={"currency": "  pounds ", "unit": "", "period": "   "}).get_json()
    assert record["units"] == {"currency": "pounds"}


def test_units_change_neither_the_request_nor_its_answer(library_client):
    plain = save(library_client, name="plain").get_json()
    labelled = save(library_client, name="labelled", units=TYPED).get_json()
    assert labelled["request"] == plain["request"]
    assert labelled["scenario_id"] == plain["scenario_id"]


LONG_UNIT = "m" * (limits.MAX_SCENARIO_UNIT_LENGTH + 1)


@pytest.mark.parametrize(
    ("units", "pointer"),
    [
        ({"colour": "blue"}, "/units/colour"),
        ({"currency": LONG_UNIT}, "/units/currency"),
        ({"period": "year\u0007"}, "/units/period"),
        ({"unit": "line\nbreak"}, "/units/unit"),
        ({"price_interval": 12}, "/units/price_interval"),
        ({"quantity": None}, "/units/quantity"),
        ("pounds", "/units"),
        (["pounds"], "/units"),
        (None, "/units"),
    ],
)
def test_a_bad_unit_is_422_at_its_pointer_and_nothing_is_stored(library_client, units, pointer):
    body = {"name": "x", "request": short(FREEZE), "units": units}
    response = library_client.post("/v1/scenarios", json=body)
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"
    assert [e["pointer"] for e in response.get_json()["errors"]] == [pointer]
    assert library_client.get("/v1/scenarios").get_json()["scenarios"] == []


def test_a_bad_unit_in_a_change_keeps_the_revision_before_it(library_client):
    record = save(library_client, units=TYPED).get_json()
    refused = put(library_client, record, units={**TYPED, "period": LONG_UNIT})
    assert refused.status_code == 422
    assert [e["pointer"] for e in refused.get_json()["errors"]] == ["/units/period"]
    kept = library_client.get(record["links"]["self"]).get_json()
    assert kept["revision"] == 1 and kept["units"] == TYPED


def test_a_unit_of_the_longest_length_is_kept_whole(library_client):
    longest = "m" * limits.MAX_SCENARIO_UNIT_LENGTH
    assert save(library_client, units={"currency": longest}).get_json()["units"] == {"currency": longest}
