"""The `request` of an answer: the request with its defaults written out, which re-runs as it is
to the same answer (same scenario_id, so the same ETag)."""

from __future__ import annotations

import pytest

from service import bands, simulate, simulate_many
from service.examples import example_request, examples

DEMOS = examples()
PATHS_DEMOS = [n for n, e in DEMOS.items() if e.get("endpoint", "/v1/paths") == "/v1/paths"]
BANDS_DEMOS = [n for n, e in DEMOS.items() if e.get("endpoint") == "/v1/bands"]


def _small(request: dict) -> dict:
    return {**request, "draws": 200}


@pytest.mark.parametrize("name", PATHS_DEMOS)
def test_a_demo_answer_carries_a_request_that_reruns_to_the_same_answer(name):
    body = simulate(DEMOS[name]["request"])
    again = simulate(body["request"])
    assert again["scenario_id"] == body["scenario_id"]
    assert again["paths"] == body["paths"]
    assert again["request"] == body["request"]  # normalising twice changes nothing


def test_defaults_are_written_out_and_whole_numbers_read_as_the_schema_reads_them():
    request = DEMOS[PATHS_DEMOS[0]]["request"]
    lean = {k: v for k, v in request.items() if k != "welfare"}
    lean["horizon"] = float(lean["horizon"])
    body = simulate(lean)
    normal = body["request"]
    assert normal["welfare"] == {"rationing": "efficient", "discount_rate": 0.0}
    assert normal["horizon"] == request["horizon"] and isinstance(normal["horizon"], int)
    assert normal["market"]["form"] in ("linear", "constant_elasticity")
    assert "payments_per_period" in normal["market"] and "inflation" in normal["market"]
    for policy in normal["policies"]:
        assert policy["start"] >= 1
    assert "request" not in simulate(normal)["request"]


def test_the_batch_answers_carry_each_scenarios_request_and_problems_none():
    good = DEMOS[PATHS_DEMOS[0]]["request"]
    bad = {**good, "horizon": 0}
    first, second = simulate_many([good, bad])
    assert simulate(first["request"])["scenario_id"] == first["scenario_id"]
    assert "request" not in second and second["status"] == 422


@pytest.mark.parametrize("name", BANDS_DEMOS)
def test_a_bands_answer_carries_its_request_with_draws_seed_and_percentiles(name):
    body = bands(_small(DEMOS[name]["request"]))
    normal = body["request"]
    sent = DEMOS[name]["request"]
    assert normal["draws"] == 200 and normal["seed"] == sent.get("seed", 0)
    assert normal["percentiles"] == [float(q) for q in sent.get("percentiles", [5, 50, 95])]
    assert bands(normal)["scenario_id"] == body["scenario_id"]
    # the distributions stay distributions
    assert any(isinstance(v, dict) for v in normal["market"]["demand"].values() if v is not None)


@pytest.mark.parametrize("past", [0, 7])
def test_a_policy_ending_at_or_after_the_horizon_is_the_policy_without_an_end(past):
    """It lasts to the horizon either way: the same scenario, so one id (one ETag) and one
    answer byte for byte, `request` included; an end inside the horizon stays a new scenario."""
    request = DEMOS["quillbrook-rent-freeze"]["request"]
    plain = simulate(request)
    ending = {**request, "policies": [dict(p) for p in request["policies"]]}
    ending["policies"][2]["end"] = request["horizon"] + past
    assert "end" not in request["policies"][2]
    assert simulate(ending) == plain
    uncertain = DEMOS[BANDS_DEMOS[0]]["request"]
    ending = {
        **uncertain,
        "policies": [dict(p, end=uncertain["horizon"] + past) for p in uncertain["policies"]],
    }
    assert bands(_small(ending)) == bands(_small(uncertain))
    inside = {**request, "policies": [dict(p) for p in request["policies"]]}
    inside["policies"][2]["end"] = request["horizon"] - 1
    answer = simulate(inside)
    assert answer["scenario_id"] != plain["scenario_id"]
    assert answer["request"]["policies"][2]["end"] == request["horizon"] - 1


def test_maps_written_in_any_order_give_one_answer_byte_for_byte():
    """A scenario's id ignores the order of its shifter maps, so its answer must too (one id, one
    strong ETag, one cached answer): with three shocked shifters on one curve, floating-point
    sums in the written order changed the last bits of most numbers (179 of 200 random
    scenarios, found by a caller's trial), and the answer echoed the maps as written."""
    import copy

    import numpy as np
    import orjson

    from service import simulate

    rng = np.random.default_rng(5)
    for form in ("linear", "constant_elasticity"):
        request = example_request("quillbrook-rent-freeze")
        request["market"]["form"] = form
        request["market"]["demand"]["shifters"] = {
            "income": float(rng.uniform(0.3, 1.2)),
            "households": float(rng.uniform(0.5, 1.2)),
            "jobs": float(rng.uniform(0.1, 0.9)),
        }
        request["shocks"] = [
            {"shifter": "income", "profile": "growth", "rate": float(rng.uniform(0.005, 0.04))},
            {"shifter": "households", "profile": "growth", "rate": float(rng.uniform(0.005, 0.03))},
            {"shifter": "jobs", "profile": "step", "change": float(rng.uniform(-0.1, 0.1))},
        ]
        reordered = copy.deepcopy(request)
        reordered["market"]["demand"]["shifters"] = dict(
            reversed(request["market"]["demand"]["shifters"].items())
        )
        one, other = simulate(request), simulate(reordered)
        dump = lambda body: orjson.dumps(body, option=orjson.OPT_SERIALIZE_NUMPY)  # noqa: E731
        assert dump(one) == dump(other)
        assert list(one["request"]["market"]["demand"]["shifters"]) == ["households", "income", "jobs"]
        assert list(one["reduced_form"]) == ["households", "income", "jobs"]


def test_a_bands_request_written_in_any_order_draws_alike_and_its_echo_reruns_to_it():
    """Two uncertain shifters on one curve: their draws' columns follow the order of the names,
    as the echoed request writes them, so both spellings have one id and one answer, and the
    echo re-runs to that answer (a review found the echo gave the other order's answer)."""
    import copy

    import orjson

    request = example_request("quillbrook-uncertain-elasticities")
    request["draws"] = 300
    shifters = request["market"]["demand"]["shifters"]
    shifters["households"] = {"distribution": "uniform", "low": 0.8, "high": 1.2}
    assert list(shifters) == ["income", "households"]  # not in name order
    reordered = copy.deepcopy(request)
    reordered["market"]["demand"]["shifters"] = dict(reversed(shifters.items()))
    one, other = bands(request), bands(reordered)
    dump = lambda body: orjson.dumps(body, option=orjson.OPT_SERIALIZE_NUMPY)  # noqa: E731
    assert dump(one) == dump(other)
    assert dump(bands(one["request"])) == dump(one)
    pointers = [item["pointer"] for item in one["uncertain_inputs"]]
    assert pointers.index("/market/demand/shifters/households") < pointers.index(
        "/market/demand/shifters/income"
    )
