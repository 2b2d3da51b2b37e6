"""Each caution of MODEL.md sections 9 and 20 is present exactly when its condition holds,
called directly through scenario_cautions with the facts the answer assembly passes."""

from __future__ import annotations

import re

import numpy as np
import pytest

from service.engine.cautions import (
    FORM_GAP,
    GENERAL_CAUTION,
    INELASTIC_DEMAND,
    MISALLOCATION_SHARE,
    _percent,
    form_gaps,
    misallocation_shares,
    scenario_cautions,
)
from service.engine.kernel import SERIES_NAMES, SUMMARY_NAMES
from service.engine.results import PolicySummary

#: A scenario with none of the conditions: a free market and a tax, efficient rationing.
QUIET = {
    "form": "linear",
    "ceiling_binds": False,
    "random_rationing": False,
    "never_binding": [],
    "other_form": {"free": {}},  # the other form has an answer, and no figure differs
}

#: Words that mark each caution (and only it).
MARKS = {
    "other form": "Solved with the",
    "no other answer": "has no answer for",
    "lower bound": "efficient rationing (units go",
    "random ceiling": "ration units at random",
    "shortage": "not a count of households without a home",
    "misallocation": "top of the demand curve",
    "uncontrolled rents": "Fallis & Smith 1984",
    "conversion": "upper bound",
    "inelastic demand": "far closer to zero than published estimates",
    "large loss": "larger than a quarter of all the rent",
    "cap below stock": "A quantity cap below the homes standing",
    "high conversion": "more than three times the largest",
    "no distribution": "is not reported under random rationing",
    "inflation": "nominal rules",
    "stock": "homes not built stay missing",
    "unused short run": "is not used",
    "held to horizon": "Still in force at the end of the horizon",
    "unlet homes removed": "Without a depreciation rate",
    "lossless ceiling": "no value lost within each year",
    "more homes": "More homes than the market without the rule",
    "unbound changed": "although it never binds",
    "lifted": "return the moment it ends",
    "never binds": "Never binds",
    "control left out": "upkeep and quality",
}


#: Every condition of a caution at once (but random rationing, a lifted ceiling and the
#: other form, which tests add where they need them).
EVERY_CONDITION = {
    "ceiling_binds": True,
    "shortage": True,
    "partial_binds": True,
    "exempt_binds": True,
    "conversion": True,
    "conversion_rate": 0.5,
    "inflation": True,
    "stock": True,
    "never_binding": ["cap"],
    "short_run_elasticity": 0.2,
    "impact_elasticity": 0.45,
    "held_to_horizon": {"cap": 1234.0},
    "unlet_homes_removed": True,
    "lossless_ceilings": ["exempt cap"],
    "more_homes": {"exempt cap": (259.0, 10)},
    "unbound_changed": ["loose cap"],
    "demand_elasticity": -0.01,
    "large_losses": {"freeze": 2.4},
    "caps_below_stock": {"permits": (9500.0, 10000.0)},
}


def _present(cautions: list[str]) -> set[str]:
    return {name for name, words in MARKS.items() if any(words in c for c in cautions)}


def _cautions(**changes) -> list[str]:
    return scenario_cautions(**{**QUIET, **changes})


def test_a_quiet_scenario_gets_only_the_general_cautions():
    cautions = _cautions()
    assert _present(cautions) == set()
    assert cautions[-1] == GENERAL_CAUTION
    assert "owner-occupied market" in cautions[-2] and "linked markets" in cautions[-2]


@pytest.mark.parametrize(
    ("changes", "expected"),
    [
        ({"ceiling_binds": True}, {"lower bound", "control left out"}),
        (
            {"ceiling_binds": True, "random_rationing": True},
            {"random ceiling", "no distribution", "control left out"},
        ),
        ({"random_rationing": True}, {"no distribution"}),
        ({"shortage": True}, {"shortage"}),
        ({"partial_binds": True}, {"uncontrolled rents"}),
        ({"exempt_binds": True}, {"uncontrolled rents"}),
        ({"conversion": True}, {"conversion"}),
        ({"conversion": True, "conversion_rate": 0.5}, {"conversion", "high conversion"}),
        ({"conversion": True, "conversion_rate": 0.1}, {"conversion"}),
        ({"conversion_rate": 0.5}, set()),  # no home converted: nothing to overstate
        ({"inflation": True}, {"inflation"}),
        ({"stock": True}, {"stock"}),
        ({"never_binding": ["cap"]}, {"never binds"}),
        ({"lifted_ceilings": ["freeze"]}, {"lifted"}),
        ({"lifted_ceilings": ["freeze"], "stock": True}, {"stock"}),
        (
            {"stock": True, "short_run_elasticity": 0.2, "impact_elasticity": 0.45},
            {"stock", "unused short run"},
        ),
        ({"stock": True, "short_run_elasticity": 0.2, "impact_elasticity": 0.2}, {"stock"}),
        ({"short_run_elasticity": 0.2, "impact_elasticity": 0.45}, set()),
        ({"held_to_horizon": {"cap": 12.0}}, set()),  # without a stock the homes return at once
        ({"held_to_horizon": {"cap": 12.0}, "stock": True}, {"stock", "held to horizon"}),
        ({"held_to_horizon": {}, "stock": True}, {"stock"}),
        ({"unlet_homes_removed": True}, set()),
        ({"unlet_homes_removed": True, "stock": True}, {"stock", "unlet homes removed"}),
        ({"lossless_ceilings": ["cap"]}, set()),
        ({"lossless_ceilings": ["cap"], "stock": True}, {"stock", "lossless ceiling"}),
        ({"more_homes": {"cap": (12.0, 3)}}, set()),
        ({"more_homes": {"cap": (12.0, 3)}, "stock": True}, {"stock", "more homes"}),
        ({"large_losses": {"freeze": 0.3}}, {"large loss"}),
        ({"caps_below_stock": {"permits": (9500.0, 10000.0)}, "stock": True}, {"stock", "cap below stock"}),
        ({"caps_below_stock": {"permits": (9500.0, 10000.0)}}, set()),
        ({"demand_elasticity": -0.01}, {"inelastic demand"}),
        ({"demand_elasticity": -1e-12}, {"inelastic demand"}),
        ({"demand_elasticity": -INELASTIC_DEMAND}, set()),
        ({"demand_elasticity": -0.3}, set()),
        ({"unbound_changed": ["cap"]}, set()),
        ({"unbound_changed": ["cap"], "stock": True}, {"stock", "unbound changed"}),
    ],
)
def test_each_caution_appears_exactly_when_its_condition_holds(changes, expected):
    assert _present(_cautions(**changes)) == expected


def test_cautions_are_written_for_a_council_reader_without_the_answers_field_names():
    """Cautions are read aloud in council briefings: plain words, no series or field names of
    the answer (vs_free_path, price_index, ...) and no request syntax."""
    every = _cautions(
        **EVERY_CONDITION, other_form={"cap": {"discounted_deadweight_loss": (10.0, 20.0)}, "tax": None}
    ) + _cautions(lifted_ceilings=["freeze"], random_rationing=True)
    assert len(every) >= 12
    field_names = set(SERIES_NAMES) | set(SUMMARY_NAMES) | set(PolicySummary._fields)
    field_names |= {"vs_free_path", "price_index"}
    for caution in every:
        words = set(re.findall(r"[a-z]+(?:_[a-z]+)+", caution))
        assert not words & field_names, (words & field_names, caution)
        assert "{" not in caution and '"' not in caution, caution


def test_the_shortage_caution_says_what_a_shortage_counts():
    (text,) = [c for c in _cautions(shortage=True) if MARKS["shortage"] in c]
    assert "more space" in text and "would form" in text


def test_the_caution_on_a_lifted_ceiling_names_it_and_points_to_the_stock_schedule():
    (text,) = [c for c in _cautions(lifted_ceilings=["freeze 5 years", "cap"]) if MARKS["lifted"] in c]
    assert "'freeze 5 years', 'cap'" in text and "stock schedule" in text


def test_the_unused_short_run_caution_gives_both_elasticities():
    cautions = _cautions(stock=True, short_run_elasticity=0.2, impact_elasticity=0.45)
    (text,) = [c for c in cautions if MARKS["unused short run"] in c]
    assert "0.45" in text and "0.2" in text


# --- random rationing's misallocation: a quarter of the rent bill (MODEL.md 20) ----------------------


@pytest.mark.parametrize(
    ("share", "random", "present"),
    [
        (MISALLOCATION_SHARE + 1e-9, True, True),
        (0.8, True, True),
        (MISALLOCATION_SHARE, True, False),  # "above a quarter": a quarter itself is not
        (0.1, True, False),
        (0.8, False, False),  # no misallocation without random rationing
    ],
)
def test_a_misallocation_loss_above_a_quarter_of_the_rent_bill_is_cautioned(share, random, present):
    cautions = _cautions(
        random_rationing=random,
        ceiling_binds=True,
        misallocation_shares={"freeze": (share, 4), "cap": (0.01, 2)},
    )
    assert ("misallocation" in _present(cautions)) == present
    if present:
        (text,) = [c for c in cautions if MARKS["misallocation"] in c]
        assert "'freeze'" in text and "period 4" in text and "'cap'" not in text


# --- the other curve form replaces the shock-size caution (MODEL.md 20) ----------------------------


def test_two_forms_differ_when_they_differ_by_more_than_a_tenth_of_the_larger():
    here, there, expected = np.array(
        [
            (1.0e6, 1.6e6, True),  # 37.5 % of the larger
            (500.0, 560.0, True),  # 10.7 %
            (-500.0, -560.0, True),  # signs do not matter
            (2.0e6, 2.2e6, False),  # 9.1 %: agree
            (1100.0, 1000.0, False),  # exactly 10 % of the larger: agree
            (100.0, 100.0 * (1 + FORM_GAP) - 1e-6, False),  # just inside
            (0.0, 0.0, False),
            (0.0, 1.0, True),  # all of the larger
        ]
    ).T
    assert form_gaps(here, there, np.zeros_like(here)).tolist() == expected.astype(bool).tolist()


def test_two_values_within_rounding_of_zero_against_their_scale_agree():
    """NEGLIGIBLE of the figure's scale (the rent bill, the base rent, the base homes): a loss
    of 3e-9 against 4e-8 in a market whose rent bill is 1e9 is rounding, not a 90 % gap."""
    here, there = np.array([3e-9, 3e-9]), np.array([4e-8, 4e-8])
    assert form_gaps(here, there, np.array([1e9, 1.0])).tolist() == [False, True]


def test_non_finite_figures_never_differ():
    here = np.array([np.inf, np.nan, np.inf, 1.0])
    there = np.array([np.inf, 1.0, 1.0, np.nan])
    assert not form_gaps(here, there, np.ones(4)).any()


def test_the_other_form_names_each_policy_and_figure_that_differs():
    other_form = {
        "free": {},
        "freeze": {"discounted_deadweight_loss": (1.0e6, 1.6e6), "peak_shortage": (500.0, 560.0)},
        "cap": {},
    }
    cautions = _cautions(other_form=other_form)
    assert _present(cautions) == {"other form"}
    (text,) = [c for c in cautions if MARKS["other form"] in c]
    assert "constant-elasticity" in text
    assert "'freeze' discounted deadweight loss (1 million here, 1.6 million there)" in text
    assert "'freeze' peak shortage (500 here, 560 there)" in text
    assert "'cap'" not in text and "'free'" not in text and "final consumer price" not in text


def test_the_answers_name_the_figures_their_two_forms_give_visibly_apart():
    """Through the whole engine, on every demo: the caution names exactly the figures whose
    summary other_form values differ by more than FORM_GAP of the larger, unless both are within
    NEGLIGIBLE of the figure's scale (MODEL.md 20: the base rent bill over the horizon for money,
    the base rent for prices, the base homes for quantities)."""
    from service import simulate
    from service.engine.cautions import NEGLIGIBLE, OTHER_FORM_FIGURES
    from service.examples import example_request, examples

    named_and_not = {True: 0, False: 0}
    for name, example in examples().items():
        if example.get("endpoint", "/v1/paths") != "/v1/paths":
            continue
        body = simulate(example_request(name))
        market, horizon = body["request"]["market"], body["request"]["horizon"]
        scale = {
            "discounted_deadweight_loss": market["price"]
            * market["quantity"]
            * market["payments_per_period"]
            * (horizon + 1),
            "final_consumer_price": market["price"],
            "peak_shortage": market["quantity"],
        }
        text = " ".join(c for c in body["cautions"] if MARKS["other form"] in c)
        for summary in body["summary"]:
            if summary["other_form"] is None:
                continue
            for key, words in OTHER_FORM_FIGURES.items():
                here, there = summary[key], summary["other_form"][key]
                larger = max(abs(here), abs(there))
                named = f"'{summary['name']}' {words} (" in text
                differs = abs(here - there) > FORM_GAP * larger and larger > NEGLIGIBLE * scale[key]
                assert named == differs, (name, key)
                named_and_not[named] += 1
    assert named_and_not[True] > 0 and named_and_not[False] > 0, named_and_not


def test_the_other_form_without_an_answer_is_named():
    cautions = _cautions(form="constant_elasticity", other_form={"free": None, "levy": None})
    assert _present(cautions) == {"no other answer"}
    (text,) = [c for c in cautions if MARKS["no other answer"] in c]
    assert "The linear form has no answer for 'free', 'levy'" in text


def test_a_request_the_other_form_refuses_says_why_rather_than_naming_every_policy():
    # MODEL.md 11: the constant-elasticity form refuses a ceiling under random rationing with
    # |eta| <= 1, so a linear request of that kind has no other-form answer for any policy.
    refused = {"free": None, "ceiling": None}
    cautions = _cautions(random_rationing=True, other_form=refused, other_form_refused=True)
    (text,) = [c for c in cautions if "constant-elasticity curves instead" in c]
    assert "given out at random" in text and "between -1 and 0" in text
    assert not any(MARKS["no other answer"] in c for c in cautions)


def test_the_vouchers_demo_is_told_why_the_other_form_has_no_answer():
    from service import simulate
    from service.examples import example_request

    request = example_request("ostrand-vale-vouchers")
    assert request["welfare"]["rationing"] == "random"
    assert request["market"]["demand"]["price_elasticity"] > -1
    cautions = simulate(request)["cautions"]
    assert any("given out at random" in c for c in cautions)
    assert not any(MARKS["no other answer"] in c for c in cautions)


def test_forms_that_agree_give_no_form_caution():
    assert _present(_cautions(other_form={"p": {}, "q": {}})) == set()


def test_every_caution_under_efficient_rationing_avoids_the_words_random_rationing():
    """tests/engine/test_distribution.py relies on it: only random rationing talks about it."""
    cautions = _cautions(**EVERY_CONDITION, misallocation_shares={"freeze": (0.9, 1)})
    assert not any("random rationing" in c for c in cautions)


# --- the facts from the arrays of one scenario ------------------------------------------------------


def test_misallocation_shares_are_the_largest_loss_over_the_rent_bill_and_its_period():
    price = np.array([[1000.0, 1000.0, 900.0], [1000.0, 1000.0, 1000.0]])
    quantity = np.array([[100.0, 90.0, 80.0], [100.0, 100.0, 100.0]])
    loss = np.array([[0.0, 0.3 * 12 * 1000 * 90, 0.2 * 12 * 900 * 80], [0.0, 0.0, 0.0]])
    shares = misallocation_shares(["freeze", "free"], loss, price, quantity, 12.0)
    assert shares == {"freeze": (pytest.approx(0.3, rel=1e-15), 1)}


def test_under_partial_control_the_shortage_is_said_not_to_be_a_queue_for_homes():
    (whole,) = [c for c in _cautions(shortage=True) if MARKS["shortage"] in c]
    (partial,) = [c for c in _cautions(shortage=True, partial_binds=True) if MARKS["shortage"] in c]
    assert "not a queue for homes" in partial and "not a queue" not in whole


def test_the_rules_held_to_the_horizon_are_named_with_the_homes_they_leave_missing():
    cautions = _cautions(stock=True, held_to_horizon={"2% cap": 26213.4, "1% cap": 11187.0})
    (text,) = [c for c in cautions if MARKS["held to horizon"] in c]
    assert "'2% cap' (26,213 homes fewer), '1% cap' (11,187 homes fewer)" in text


# --- the facts, from computed answers ---------------------------------------------------------


def _stock_market(adjustment: dict, policies: list[dict], horizon: int = 6) -> dict:
    """A linear market (P0 100, Q0 1,000, eta -0.5, eps 0.2 -> 1.0) under the stock schedule
    whose demand falls 10 % in period 1 (a floor at P0 then binds) or grows 3 % a period."""
    return {
        "market": {
            "price": 100.0,
            "quantity": 1000.0,
            "demand": {"price_elasticity": -0.5, "shifters": {"income": 1.0}},
            "supply": {"short_run_elasticity": 0.2, "long_run_elasticity": 1.0},
        },
        "shocks": [{"shifter": "income", "profile": "step", "change": -0.1}],
        "horizon": horizon,
        "adjustment": {"schedule": "stock", **adjustment},
        "policies": [{"name": "free market", "kind": "none"}, *policies],
    }


def test_a_floor_under_the_stock_schedule_without_depreciation_is_cautioned_that_unlet_homes_go():
    from service import simulate

    floor = [{"name": "floor", "kind": "price_floor", "level": 100.0, "end": 2}]
    without = simulate(_stock_market({}, floor))
    assert without["paths"][1]["vacant_homes"][1] == 0.0  # offered, not let, and gone (MODEL.md 16)
    assert _present(without["cautions"]) >= {"unlet homes removed"}
    durable = simulate(_stock_market({"depreciation": 0.01}, floor))
    assert durable["paths"][1]["vacant_homes"][1] > 0.0
    assert "unlet homes removed" not in _present(durable["cautions"])


def test_a_cap_held_to_the_horizon_names_its_missing_homes_and_one_lifted_before_does_not():
    from service import simulate

    request = _stock_market(
        {"depreciation": 0.01},
        [
            {"name": "cap to the end", "kind": "price_ceiling", "growth": 0.0},
            {"name": "cap for 2 years", "kind": "price_ceiling", "growth": 0.0, "end": 2},
        ],
        horizon=8,
    )
    request["shocks"] = [{"shifter": "income", "profile": "growth", "rate": 0.03}]
    body = simulate(request)
    held, lifted = body["summary"][1], body["summary"][2]
    assert held["final_homes_below_free_path"] > 1.0 and held["binding_periods"] > 0
    assert lifted["binding_periods"] > 0  # it bound too, and ended before the horizon
    (text,) = [c for c in body["cautions"] if MARKS["held to horizon"] in c]
    assert "'cap to the end'" in text and "'cap for 2 years'" not in text
    missing = held["final_homes_below_free_path"]
    assert f"{missing:,.0f} homes fewer" in text or f"{missing:,.4g} homes fewer" in text


def test_the_tollbrae_exempt_cap_shows_no_within_year_loss_and_says_where_its_cost_is():
    """The economist's and the analyst's reading of the Tollbrae demo: a binding cap with new
    homes exempt and rents reset between tenants has a deadweight loss of 0 (its controlled homes
    are held at their bounds); the caution names it and no other policy."""
    from service import simulate
    from service.examples import example_request

    body = simulate(example_request("tollbrae-decontrol-and-exempt-building"))
    exempt = body["summary"][2]
    assert exempt["binding_periods"] > 0 and exempt["total_deadweight_loss"] == 0.0
    (text,) = [c for c in body["cautions"] if MARKS["lossless ceiling"] in c]
    assert text.startswith(f"'{exempt['name']}' binds and yet shows")
    assert body["summary"][1]["name"] not in text  # the strict cap has a loss of its own


def test_a_conversion_rate_far_above_published_ones_is_named_with_its_value():
    """Tollbrae's conversion rate of 0.02 is in the published range (MODEL.md 18: a few
    hundredths, from memory); the same request at 0.5 converts far more homes and is told so."""
    from service import simulate
    from service.examples import example_request

    request = example_request("tollbrae-decontrol-and-exempt-building")
    usual = simulate(request)
    request["adjustment"]["conversion"] = 0.5
    fast = simulate(request)
    assert MARKS["conversion"] in " ".join(usual["cautions"])
    assert not any(MARKS["high conversion"] in c for c in usual["cautions"])
    (text,) = [c for c in fast["cautions"] if MARKS["high conversion"] in c]
    assert "0.5," in text
    converted = [s["total_converted_homes"] for s in fast["summary"] if s["total_converted_homes"]]
    assert converted and max(converted) > max(s["total_converted_homes"] or 0.0 for s in usual["summary"])


def _shrinking_market(policy: dict) -> dict:
    """A boom then a bust under the stock schedule with depreciation: the market shrinks in
    its last years (an economist's trial case)."""
    return {
        "market": {
            "price": 1000,
            "quantity": 10000,
            "payments_per_period": 12,
            "form": "linear",
            "demand": {"price_elasticity": -0.5, "shifters": {"inc": 1.0}},
            "supply": {"short_run_elasticity": 0.3, "long_run_elasticity": 1.0, "shifters": {}},
        },
        "shocks": [
            {
                "shifter": "inc",
                "profile": "path",
                "values": [0.05, 0.1, 0.15, 0.2, 0.2, 0, -0.05, -0.05, -0.05, -0.05],
            }
        ],
        "adjustment": {"schedule": "stock", "depreciation": 0.03},
        "horizon": 10,
        "policies": [{"name": "free", "kind": "none"}, policy],
        "welfare": {"rationing": "efficient", "discount_rate": 0},
    }


def test_a_ceiling_that_never_binds_but_keeps_more_homes_is_not_said_to_equal_the_free_market():
    """MODEL.md 17: the groups exist from the rule's start whether or not it binds, and each has
    its own depreciation floor; with new homes exempt, in a shrinking market the two floors
    together keep more homes than the market's one (derived). The answer must not say such a
    ceiling equals the free market, and names the most extra homes and their period."""
    from service import simulate

    exempt = simulate(
        _shrinking_market({"name": "loose", "kind": "price_ceiling", "level": 1e5, "new_homes": "exempt"})
    )
    assert exempt["summary"][1]["binding_periods"] == 0
    below = np.array(exempt["paths"][1]["homes_below_free_path"])
    # More homes than the free path, a feature of the groups' floors: the figure MODEL.md 17 quotes.
    assert round(-below.min()) == 259 and int(below.argmin()) == 10
    assert not any(MARKS["never binds"] in c for c in exempt["cautions"])
    (text,) = [c for c in exempt["cautions"] if MARKS["more homes"] in c]
    assert f"'loose' (up to 259 homes more, in period {int(below.argmin())})" in text  # whole homes
    # New homes covered, the whole market controlled: no groups to diverge, and it says so.
    covered = simulate(_shrinking_market({"name": "loose", "kind": "price_ceiling", "level": 1e5}))
    assert np.array(covered["paths"][1]["homes_below_free_path"]).tolist() == [0.0] * 11
    assert any(c.startswith(MARKS["never binds"]) and "'loose'" in c for c in covered["cautions"])
    assert not any(MARKS["more homes"] in c for c in covered["cautions"])


def test_homes_standing_empty_under_a_floor_at_the_horizon_are_not_called_missing():
    """MODEL.md 16: with a depreciation rate, homes offered and not let stand empty and are let
    again when the floor ends; the caution on rules held to the horizon counts only homes that
    are not standing (below the free path less vacant)."""
    from service import simulate

    request = _shrinking_market({"name": "floor", "kind": "price_floor", "level": 1300})
    request["shocks"] = [{"shifter": "inc", "profile": "step", "change": -0.3}]
    request["adjustment"]["depreciation"] = 0.02
    body = simulate(request)
    summary = body["summary"][1]
    # Every home the floor leaves unlet still stands: the free path's homes are all there.
    assert summary["final_homes_below_free_path"] > 1000.0
    assert summary["final_vacant_homes"] == pytest.approx(summary["final_homes_below_free_path"], rel=1e-12)
    assert not any(MARKS["held to horizon"] in c for c in body["cautions"])


def test_demand_near_vertical_is_named_where_its_losses_explode():
    """A linear freeze with eta = -1e-12 has an answer (a discounted loss near 1e20, the model's
    number for demand that barely responds): the answer names the elasticity as far from
    published estimates; at a published value (-0.4) it does not."""
    from service import simulate

    from .builders import validation_base

    request = validation_base()
    request["policies"].append({"name": "freeze", "kind": "price_ceiling", "level": "base"})
    request["shocks"] = [{"shifter": "income", "profile": "step", "change": 0.1, "start": 1}]
    request["market"]["demand"]["price_elasticity"] = -1e-12
    body = simulate(request)
    (text,) = [c for c in body["cautions"] if MARKS["inelastic demand"] in c]
    assert "-1e-12" in text
    assert body["summary"][1]["discounted_deadweight_loss"] > 1e15
    request["market"]["demand"]["price_elasticity"] = -0.4
    assert not any(MARKS["inelastic demand"] in c for c in simulate(request)["cautions"])


@pytest.mark.parametrize(
    ("figure", "words"),
    [
        (314_215_561.0, "314.2 million"),
        (-2_619_224_116.0, "-2.619 billion"),
        (1.5e12, "1.5 trillion"),
        (12_345.6, "12,346"),
        (1_180.456, "1,180"),
        (12.3456, "12.35"),
        (9_999.6, "10,000"),  # rounds up to the next form, not 1e+04
        (999_950_000.0, "1 billion"),  # not 1000 million
        (999_940_000.0, "999.9 million"),
    ],
)
def test_figures_in_cautions_carry_the_precision_of_an_estimate(figure, words):
    from service.engine.cautions import _figure

    assert _figure(figure) == words


def test_shares_in_cautions_are_said_as_a_reader_says_them():
    from service.engine.cautions import _percent

    assert [_percent(x) for x in (FORM_GAP, 0.375, 0.25, 0.00123)] == ["10 %", "37.5 %", "25 %", "0.123 %"]
    assert _percent(75.0) == "7,500 %"  # a misallocation share under near-vertical demand: no 7.5e+03


def test_homes_in_cautions_are_whole():
    held = _cautions(stock=True, held_to_horizon={"cap": 292.5, "tiny": 0.3})
    (text,) = [c for c in held if MARKS["held to horizon"] in c]
    assert "'cap' (293 homes fewer)" in text and "'tiny' (0.3 homes fewer)" in text  # halves up
    # Under a build limit that binds on the free path too, missing homes may never come back (a
    # reviewing economist's case: 1,287 homes still missing 7 years after a freeze ended).
    assert "some never are" in text


def _economist_market(**changes):
    """A linear market of 10,000 homes at 1,000 a month (k = 12), eta = -0.5 (a reviewing
    economist's base)."""
    request = {
        "market": {
            "price": 1000.0,
            "quantity": 10000,
            "payments_per_period": 12,
            "form": "linear",
            "demand": {"price_elasticity": -0.5, "shifters": {"income": 1.0}},
            "supply": {"short_run_elasticity": 0.2, "long_run_elasticity": 0.2, "shifters": {"cost": -1.0}},
        },
        "shocks": [],
        "horizon": 5,
        "policies": [{"name": "free", "kind": "none"}],
    }
    request.update(changes)
    return request


def test_a_loss_larger_than_a_quarter_of_the_rent_bill_is_named():
    """Constant-elasticity demand with |eta| < 1 values the last homes without bound: a ceiling
    at half the rent with eta = -0.5 and eps = 2 lost 2.4 times the whole rent bill with no
    caution (a reviewing economist's case). Named with its share; a mild cap is not."""
    from service import simulate

    request = _economist_market(horizon=1)
    request["market"].update(form="constant_elasticity")
    request["market"]["supply"].update(short_run_elasticity=2.0, long_run_elasticity=2.0)
    request["policies"] += [
        {"name": "half rent", "kind": "price_ceiling", "level": 500.0},
        {"name": "mild", "kind": "price_ceiling", "level": 990.0},
    ]
    request["shocks"] = [{"shifter": "income", "profile": "step", "change": 0.02}]
    body = simulate(request)
    market = request["market"]
    bill = market["price"] * market["quantity"] * market["payments_per_period"] * (request["horizon"] + 1)
    share = body["summary"][1]["total_deadweight_loss"] / bill
    assert share > 1.0
    (text,) = [c for c in body["cautions"] if MARKS["large loss"] in c]
    assert f"'half rent' ({_percent(share)})" in text and "'mild'" not in text


def test_the_other_form_refusing_a_request_names_the_policies_that_make_it():
    """With eta = -100 the linear form has no answer for a floor at 1,300, and so refuses the
    whole request: the caution names the floor, not every policy (a reviewing economist saw
    'no answer for 'free', 'freeze', 'tax', ...')."""
    from service import simulate

    request = _economist_market()
    request["market"].update(form="constant_elasticity")
    request["market"]["demand"]["price_elasticity"] = -100.0
    request["policies"] += [
        {"name": "tax", "kind": "unit_tax", "amount": 50.0},
        {"name": "floor", "kind": "price_floor", "level": 1300.0},
    ]
    body = simulate(request)
    assert all(s["other_form"] is None for s in body["summary"])
    (text,) = [c for c in body["cautions"] if "linear form" in c]
    assert "refuses this request: there 'floor' leaves zero or negative quantity" in text
    assert "'free'" not in text and "'tax'" not in text


def test_a_quantity_cap_below_the_standing_homes_is_named_under_stock():
    """Under stock a quantity cap limits the homes let: at 9,500 of 10,000 standing homes, 400
    stood empty in year 1 with only the general stock caution (a reviewing economist's case)."""
    from service import simulate

    request = _economist_market(horizon=8)
    request["adjustment"] = {"schedule": "stock", "depreciation": 0.01}
    request["shocks"] = [{"shifter": "income", "profile": "growth", "rate": 0.02}]
    request["policies"] += [
        {"name": "permits", "kind": "quantity_cap", "level": 9500.0, "end": 4},
        {"name": "loose", "kind": "quantity_cap", "level": 12000.0},
    ]
    body = simulate(request)
    assert max(body["paths"][1]["vacant_homes"]) > 0
    (text,) = [c for c in body["cautions"] if MARKS["cap below stock"] in c]
    assert "'permits' (9,500 homes against 10,000 homes standing)" in text and "'loose'" not in text
    request["adjustment"] = {"schedule": "linear", "periods": 3}
    assert not any(MARKS["cap below stock"] in c for c in simulate(request)["cautions"])


def test_random_rationing_says_each_year_is_handed_out_afresh():
    """Glaeser & Luttmer (2003) allocate a controlled stock once; the model does so every year,
    which sitting tenants do not see (a reviewing economist's point): the caution says so."""
    (text,) = [
        c for c in _cautions(ceiling_binds=True, random_rationing=True) if MARKS["random ceiling"] in c
    ]
    assert "handed out afresh" in text and "sitting tenants keep their homes" in text
