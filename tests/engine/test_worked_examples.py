"""The worked examples the README quotes (its "Homes as buildings" and "The full cost of a rule"
paragraphs): every figure there comes from running the demo, and this keeps them true."""

from __future__ import annotations

from pathlib import Path

import pytest

from service import simulate
from service.examples import example_request

README = (Path(__file__).resolve().parents[2] / "README.md").read_text()


def _by_name(body: dict) -> tuple[dict, dict]:
    return {p["name"]: p for p in body["paths"]}, {s["name"]: s for s in body["summary"]}


def _quoted(text: str) -> None:
    assert text in README, f"the README no longer says {text!r}"


def test_tollbrae_the_numbers_the_readme_quotes():
    """MODEL.md 16-18 on the Tollbrae demo: free path, a strict cap and an exempt, decontrolled cap."""
    paths, summary = _by_name(simulate(example_request("tollbrae-decontrol-and-exempt-building")))
    free = paths["free market"]
    strict, strict_total = paths["strict 2% cap on every home"], summary["strict 2% cap on every home"]
    name = "2% cap, new homes exempt, rents reset between tenants"
    exempt, exempt_total = paths[name], summary[name]
    growth = max(b / a - 1 for a, b in zip(free["quantity"], free["quantity"][1:], strict=False))
    assert round(free["consumer_price"][-1]) == 1638 and round(free["quantity"][-1]) == 59562
    assert round(100 * growth, 2) == 1.65
    assert round(strict["consumer_price"][-1]) == 1097 and round(strict["quantity"][-1]) == 44445
    assert round(strict_total["final_homes_below_free_path"]) == 15117
    assert round(strict_total["total_converted_homes"]) == 2993
    assert round(strict_total["discounted_deadweight_loss"] / 1e6, 1) == 90.5
    assert round(exempt["covered_price"][-1]) == 1403 and round(exempt["uncovered_price"][-1]) == 1656
    assert exempt["uncovered_price"][-1] > free["consumer_price"][-1]  # Fallis & Smith (1984)
    assert round(exempt["uncovered_quantity"][-1]) == 12942
    assert round(exempt_total["final_homes_below_free_path"]) == 293
    assert round(exempt_total["total_converted_homes"]) == 1673
    assert exempt_total["discounted_deadweight_loss"] == 0.0
    for text in (
        "1,638",
        "59,562",
        "1.65 %",
        "44,445",
        "15,117",
        "2,993",
        "90.5 million",
        "1,403",
        "1,656",
        "12,942",
        "293 homes",
        "1,673 converted",
    ):
        _quoted(text)


def test_essvane_the_full_cost_the_readme_quotes():
    """MODEL.md 19-20 on the Essvane demo: a five-year freeze's renters against the free path."""
    body = simulate(example_request("essvane-freeze-under-inflation"))
    _, summary = _by_name(body)
    freeze = summary["freeze for 5 years"]
    totals = freeze["vs_free_path_totals"]
    during = totals["renters"] - totals["renters_after_end"]
    assert round(during / 1e6) == 1040
    assert round(-totals["renters_after_end"] / 1e6) == 616
    assert round(-100 * totals["renters_after_end"] / during) == 59
    assert round(totals["extra_rent_after_end"] / 1e6) == 604
    assert round(freeze["peak_homes_below_free_path"]) == 7764
    assert round(freeze["final_homes_below_free_path"]) == 58
    assert round(freeze["discounted_deadweight_loss"] / 1e6, 1) == 37.6
    assert round(freeze["other_form"]["discounted_deadweight_loss"] / 1e6, 1) == 45.0
    assert any("freeze for 5 years' discounted deadweight loss" in c for c in body["cautions"])
    for text in (
        "1,040 million",
        "616 million",
        "59 %",
        "604 million",
        "7,764",
        "58 still",
        "37.6 million",
        "45.0 million",
    ):
        _quoted(text)


@pytest.mark.parametrize("name", ["tollbrae-decontrol-and-exempt-building", "essvane-freeze-under-inflation"])
def test_the_demo_answers_its_other_form_request(name):
    """MODEL.md 20: other_form is the same request sent in the other form (same figures)."""
    request = example_request(name)
    body = simulate(request)
    other = dict(request, market=dict(request["market"], form="constant_elasticity"))
    there = simulate(other)
    for here, s in zip(body["summary"], there["summary"], strict=True):
        for key in ("discounted_deadweight_loss", "final_consumer_price", "peak_shortage"):
            assert here["other_form"][key] == pytest.approx(s[key], rel=1e-12, abs=1e-6), (s["name"], key)
