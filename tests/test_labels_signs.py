"""Figures that come out negative as often as positive say in their label which sign means what:
a council reader must not read "Extra rent paid: -2.6 billion" as rent paid."""

from __future__ import annotations

import pytest

from service import labels, simulate
from service.examples import example_request

SIGN_WORDS = ("(+)", "(-)")


def _free_path_names():
    names = [k for k in labels.SERIES if k.startswith("vs_free_path.")]
    names += [k for k in labels.TOTALS if k.startswith(("vs_free_path_totals.", "vs_free_path_"))]
    return names


@pytest.mark.parametrize("name", _free_path_names())
def test_renters_and_extra_rent_against_the_free_path_say_which_sign_is_which(name):
    words = labels.label(name, totals=name in labels.TOTALS)
    assert all(sign in words for sign in SIGN_WORDS), words


def test_extra_rent_is_negative_where_a_cap_holds_rents_below_the_free_path():
    # The figures the labels describe: Tollbrae's strict cap saves renters rent (a negative
    # extra rent) while they gain against the free path.
    body = simulate(example_request("tollbrae-decontrol-and-exempt-building"))
    totals = body["summary"][1]["vs_free_path_totals"]
    assert totals["extra_rent"] < 0 < totals["renters"]
