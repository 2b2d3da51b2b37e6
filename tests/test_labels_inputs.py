"""The inputs in plain words (service.labels.input_rows: the workbook's Inputs sheet): a policy's
field is worded by the policy's kind where its meaning differs by kind."""

from __future__ import annotations

from service import labels

UNITS = {"currency": "EUR", "quantity": "homes", "unit": "home", "price_interval": "month", "period": "year"}


def _words(policies: list[dict]) -> dict[str, str]:
    request = {"market": {"price": 1000, "quantity": 50000}, "policies": policies}
    return {pointer: words for pointer, words, _ in labels.input_rows(request, UNITS)}


def test_a_permit_cap_counts_homes_a_floor_is_the_lowest_rent_and_a_ceiling_a_rent_limit():
    words = _words(
        [
            {"name": "permits", "kind": "quantity_cap", "level": 48000},
            {"name": "floor", "kind": "price_floor", "level": 1100},
            {"name": "limit", "kind": "price_ceiling", "level": 1200},
        ]
    )
    assert words["/policies/0/level"] == "Most homes let (quantity cap, e.g. a permit cap) [homes]"
    assert words["/policies/1/level"] == "Lowest rent allowed (price floor) [EUR per home per month]"
    assert words["/policies/2/level"].startswith("Rent limit (ceiling level) [EUR per home per month")
