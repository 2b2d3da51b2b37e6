"""The page draws more than elasticities: the inputs that the bands schemas accept as
distributions (inflation, the adjustment's rate, depreciation and conversion, a growth cap's
vacancy decontrol) get the same "known or uncertain?" choice, and drawing them makes the request
a bands request (MODEL.md 17-18 for conversion and vacancy decontrol)."""

from __future__ import annotations

import pytest

from .pages import run_scenario
from .test_page import _load, _request, base_url  # noqa: F401 (base_url is a fixture)

pytestmark = pytest.mark.slow


def test_conversion_and_vacancy_decontrol_drawn_in_the_form_give_bands(page, base_url):  # noqa: F811
    _load(page, base_url, "tollbrae-decontrol-and-exempt-building")
    assert page.get_attribute("#results", "data-endpoint") in (None, "/v1/paths")
    page.select_option("select[data-action='uncertain:/adjustment/conversion']", "uniform")
    page.select_option("select[data-action='uncertain:/policies/2/vacancy_decontrol']", "triangular")
    request = _request(page)
    # Centred on the demo's values (kappa 0.02, tau 0.1) with the page's default spread of 30 %.
    assert request["adjustment"]["conversion"] == {"distribution": "uniform", "low": 0.014, "high": 0.026}
    assert request["policies"][2]["vacancy_decontrol"] == {
        "distribution": "triangular",
        "low": 0.07,
        "mode": 0.1,
        "high": 0.13,
    }
    # Each part of a drawn input is labelled in words (not "conversion: low").
    low = page.locator("input[data-pointer='/adjustment/conversion/low']").get_attribute("id")
    assert page.text_content(f"label[for='{low}']").endswith(", lowest draw")
    # A ceiling without decontrol offers no draw for it (the field is empty, not a number).
    assert page.locator("select[data-action='uncertain:/policies/1/vacancy_decontrol']").count() == 0
    assert page.is_visible("#uncertainty-fieldset")
    page.fill("input[data-pointer='/draws']", "200")
    run_scenario(page)
    assert page.get_attribute("#results", "data-endpoint") == "/v1/bands"
    assert page.locator("#summary td .range").count() > 0
    answer = page.evaluate("fetch(document.querySelector('#download-json').href).then(r => r.json())")
    # Every banded figure shows its range in its row, the nested ones (renters against the free
    # path, who gains) under their answer names; the other curve form's figures have no band.
    banded = {
        "vs_free_path_totals.renters": "vs_free_path_renters",
        "vs_free_path_totals.renters_discounted": "vs_free_path_renters_discounted",
        "distribution_totals.government": "total_government",
        "discounted_deadweight_loss": "discounted_deadweight_loss",
    }
    for row, flat in banded.items():
        assert flat in answer["bands"][1]["summary"], flat
        assert page.locator(f"#summary tr[data-figure='{row}'] td .range").count() > 0, row
    assert page.locator("#summary tr[data-figure='other_form.peak_shortage'] td .range").count() == 0
    drawn = {item["pointer"] for item in answer["uncertain_inputs"]}
    assert {"/adjustment/conversion", "/policies/2/vacancy_decontrol"} <= drawn


def test_a_drawn_fraction_stays_at_most_one_and_known_again_returns_the_central_value(page, base_url):  # noqa: F811
    _load(page, base_url, "tollbrae-decontrol-and-exempt-building")
    pointer = "/policies/2/vacancy_decontrol"
    page.fill(f"input[data-pointer='{pointer}']", "0.9")
    page.select_option(f"select[data-action='uncertain:{pointer}']", "uniform")
    drawn = _request(page)["policies"][2]["vacancy_decontrol"]
    assert drawn == {"distribution": "uniform", "low": 0.63, "high": 1}  # 0.9 + 30 % capped at 1
    page.select_option(f"select[data-action='uncertain:{pointer}']", "")
    assert _request(page)["policies"][2]["vacancy_decontrol"] == pytest.approx(0.815)


def test_each_known_or_uncertain_choice_names_its_field_on_screen(page, base_url):  # noqa: F811
    """In a narrow window the grid can put the choice under another field (at 800 px the demand
    elasticity's sat below Inflation): its visible label says which input it is about."""
    page.set_viewport_size({"width": 800, "height": 900})
    _load(page, base_url, "quillbrook-rent-freeze")
    select = page.locator("select[data-action='uncertain:/market/demand/price_elasticity']")
    label = page.text_content(f"label[for='{select.get_attribute('id')}']")
    words = page.text_content(
        "label[for='"
        + page.locator("input[data-pointer='/market/demand/price_elasticity']").get_attribute("id")
        + "']"
    )
    assert label.startswith(words.split(" (")[0]) and label.endswith("known or uncertain?"), (label, words)
    # Screen readers get the same name from the label itself.
    assert (
        page.evaluate(
            "s => document.querySelector(s).labels[0].textContent",
            "select[data-action='uncertain:/market/demand/price_elasticity']",
        )
        == label
    )
