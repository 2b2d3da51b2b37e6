"""A hostile-input corpus: each body gets its documented status and, for 422, a pointer at
the field; none gets a 500 or a stack trace. One row per case: (id, body, content type,
status, pointer that must appear among the errors)."""

from __future__ import annotations

import copy
import json

import orjson
import pytest

from service import limits
from service.examples import example_request
from service.limits import MAX_DRAWS

BASE = example_request("contract-example")
UNCERTAIN = example_request("quillbrook-uncertain-elasticities")


def edit(change, base=BASE):
    body = copy.deepcopy(base)
    change(body)
    return json.dumps(body)


def _set(path, value):
    def change(body):
        target = body
        for key in path[:-1]:
            target = target[key]
        target[path[-1]] = value

    return change


def _named_policies(n):
    return lambda b: b.update(policies=[dict(b["policies"][i % 8], name=f"p{i}") for i in range(n)])


JSON = "application/json"
CASES = [
    # malformed JSON and numbers JSON cannot carry
    ("truncated", '{"market": {', JSON, 400, None),
    ("single-quotes", "{'market': 1}", JSON, 400, None),
    ("trailing-comma", '{"horizon": 3,}', JSON, 400, None),
    ("nan", '{"horizon": NaN}', JSON, 400, None),
    ("infinity", '{"horizon": Infinity}', JSON, 400, None),
    ("minus-infinity", '{"horizon": -Infinity}', JSON, 400, None),
    ("huge-exponent", '{"horizon": 1e999}', JSON, 400, None),
    ("deep-nesting", "[" * 3000 + "]" * 3000, JSON, 400, None),
    ("empty-body", "", JSON, 400, None),
    ("not-utf8", b"\xff\xfe{}", JSON, 400, None),
    ("bare-string", '"paths please"', JSON, 422, ""),
    ("array-top", "[1, 2, 3]", JSON, 422, ""),
    ("null-top", "null", JSON, 422, ""),
    # content types
    ("text-plain", "{}", "text/plain", 415, None),
    ("form", "horizon=3", "application/x-www-form-urlencoded", 415, None),
    ("xml", "<horizon>3</horizon>", "application/xml", 415, None),
    # names that would break a workbook, an SVG chart or a CSV row: printable characters only
    ("name-bell", edit(_set(["policies", 1, "name"], "rent\u0007freeze")), JSON, 422, "/policies/1/name"),
    ("name-nul", edit(_set(["policies", 1, "name"], "freeze\u0000")), JSON, 422, "/policies/1/name"),
    (
        "name-noncharacter",
        edit(_set(["policies", 1, "name"], "caf\u00e9 \ufffe")),
        JSON,
        422,
        "/policies/1/name",
    ),
    ("name-line-separator", edit(_set(["policies", 1, "name"], "a\u2028b")), JSON, 422, "/policies/1/name"),
    (
        "shifter-name-control",
        edit(lambda b: b["market"]["demand"]["shifters"].update({"in\u0001come": 0.5})),
        JSON,
        422,
        "/market/demand/shifters/in\u0001come",
    ),
    (
        "shock-shifter-control",
        edit(_set(["shocks", 0, "shifter"], "in\u0001come")),
        JSON,
        422,
        "/shocks/0/shifter",
    ),
    # strings, booleans and nulls where numbers belong
    ("price-string", edit(_set(["market", "price"], "1450")), JSON, 422, "/market/price"),
    ("price-bool", edit(_set(["market", "price"], True)), JSON, 422, "/market/price"),
    ("price-null", edit(_set(["market", "price"], None)), JSON, 422, "/market/price"),
    ("horizon-string", edit(_set(["horizon"], "12")), JSON, 422, "/horizon"),
    ("horizon-bool", edit(_set(["horizon"], True)), JSON, 422, "/horizon"),
    ("horizon-fraction", edit(_set(["horizon"], 12.5)), JSON, 422, "/horizon"),
    (
        "eta-list",
        edit(_set(["market", "demand", "price_elasticity"], [-0.4])),
        JSON,
        422,
        "/market/demand/price_elasticity",
    ),
    (
        "shifter-string",
        edit(_set(["market", "demand", "shifters", "income"], "high")),
        JSON,
        422,
        "/market/demand/shifters/income",
    ),
    # signs and ranges
    ("zero-price", edit(_set(["market", "price"], 0)), JSON, 422, "/market/price"),
    ("negative-price", edit(_set(["market", "price"], -1450)), JSON, 422, "/market/price"),
    ("zero-quantity", edit(_set(["market", "quantity"], 0)), JSON, 422, "/market/quantity"),
    ("negative-quantity", edit(_set(["market", "quantity"], -3)), JSON, 422, "/market/quantity"),
    (
        "positive-eta",
        edit(_set(["market", "demand", "price_elasticity"], 0.45)),
        JSON,
        422,
        "/market/demand/price_elasticity",
    ),
    (
        "zero-eta",
        edit(_set(["market", "demand", "price_elasticity"], 0)),
        JSON,
        422,
        "/market/demand/price_elasticity",
    ),
    (
        "negative-supply",
        edit(_set(["market", "supply", "long_run_elasticity"], -1.8)),
        JSON,
        422,
        "/market/supply/long_run_elasticity",
    ),
    (
        "zero-payments",
        edit(_set(["market", "payments_per_period"], 0)),
        JSON,
        422,
        "/market/payments_per_period",
    ),
    ("unknown-form", edit(_set(["market", "form"], "quadratic")), JSON, 422, "/market/form"),
    ("shock-minus-100", edit(lambda b: b["shocks"][0].update(change=-1.0)), JSON, 422, "/shocks/0/change"),
    ("negative-tax", edit(lambda b: b["policies"][4].update(amount=-40)), JSON, 422, "/policies/4/amount"),
    ("vat-100", edit(lambda b: b["policies"][5].update(rate=1.0)), JSON, 422, "/policies/5/rate"),
    ("floor-zero", edit(lambda b: b["policies"][3].update(level=0)), JSON, 422, "/policies/3/level"),
    ("end-before-start", edit(lambda b: b["policies"][2].update(end=1)), JSON, 422, "/policies/2/end"),
    (
        "negative-discount",
        edit(_set(["welfare", "discount_rate"], -1.5)),
        JSON,
        422,
        "/welfare/discount_rate",
    ),
    # structure
    ("unknown-top-field", edit(_set(["colour"], "blue")), JSON, 422, "/colour"),
    ("unknown-market-field", edit(_set(["market", "vacancy"], 0.05)), JSON, 422, "/market/vacancy"),
    (
        "unknown-policy-field",
        edit(lambda b: b["policies"][1].update(strength=2)),
        JSON,
        422,
        "/policies/1/strength",
    ),
    ("missing-market", edit(lambda b: b.pop("market")), JSON, 422, "/market"),
    ("missing-policies", edit(lambda b: b.pop("policies")), JSON, 422, "/policies"),
    ("empty-policies", edit(_set(["policies"], [])), JSON, 422, "/policies"),
    (
        "duplicate-names",
        edit(lambda b: b["policies"][2].update(name="freeze")),
        JSON,
        422,
        "/policies/2/name",
    ),
    (
        "unknown-kind",
        edit(lambda b: b["policies"].append({"name": "x", "kind": "rent_board"})),
        JSON,
        422,
        "/policies/8/kind",
    ),
    ("policy-not-object", edit(lambda b: b["policies"].append(7)), JSON, 422, "/policies/8"),
    (
        "undeclared-shifter",
        edit(lambda b: b["shocks"][0].update(shifter="weather")),
        JSON,
        422,
        "/shocks/0/shifter",
    ),
    (
        "long-path",
        edit(lambda b: b["shocks"][2].update(values=[0.01] * (limits.MAX_HORIZON + 1))),
        JSON,
        422,
        "/shocks/2/values",
    ),
    (
        "very-long-name",
        edit(lambda b: b["policies"][0].update(name="n" * 10_000)),
        JSON,
        422,
        "/policies/0/name",
    ),
    # limits, at and just over
    ("horizon-at-limit", edit(_set(["horizon"], limits.MAX_HORIZON)), JSON, 200, None),
    ("horizon-over-limit", edit(_set(["horizon"], limits.MAX_HORIZON + 1)), JSON, 422, "/horizon"),
    ("policies-at-limit", edit(_named_policies(limits.MAX_POLICIES)), JSON, 200, None),
    ("policies-over-limit", edit(_named_policies(limits.MAX_POLICIES + 1)), JSON, 422, "/policies"),
    (
        "shocks-at-limit",
        edit(lambda b: b.update(shocks=[b["shocks"][0]] * limits.MAX_SHOCKS)),
        JSON,
        200,
        None,
    ),
    (
        "shocks-over-limit",
        edit(lambda b: b.update(shocks=[b["shocks"][0]] * (limits.MAX_SHOCKS + 1))),
        JSON,
        422,
        "/shocks",
    ),
    # economics the model refuses
    ("linear-shock-too-large", edit(lambda b: b["shocks"][0].update(change=-0.99)), JSON, 422, "/shocks"),
    ("tax-past-choke", edit(lambda b: b["policies"][4].update(amount=1e6)), JSON, 422, "/policies/4/amount"),
]

BANDS_CASES = [
    (
        "draws-at-limit-work-over",
        edit(lambda b: b.update(draws=MAX_DRAWS, horizon=60), UNCERTAIN),
        422,
        "/draws",
    ),
    ("draws-over-limit", edit(lambda b: b.update(draws=MAX_DRAWS + 1), UNCERTAIN), 422, "/draws"),
    ("draws-zero", edit(lambda b: b.update(draws=0), UNCERTAIN), 422, "/draws"),
    (
        "percentile-over-100",
        edit(lambda b: b.update(percentiles=[50, 101]), UNCERTAIN),
        422,
        "/percentiles/1",
    ),
    (
        "sd-negative",
        edit(
            _set(
                ["market", "demand", "price_elasticity"], {"distribution": "normal", "mean": -0.4, "sd": -1}
            ),
            UNCERTAIN,
        ),
        422,
        "/market/demand/price_elasticity/sd",
    ),
    (
        "mean-wrong-sign",
        edit(
            _set(
                ["market", "demand", "price_elasticity"], {"distribution": "normal", "mean": 0.4, "sd": 0.1}
            ),
            UNCERTAIN,
        ),
        422,
        "/market/demand/price_elasticity/mean",
    ),
    (
        "unknown-distribution",
        edit(_set(["market", "supply", "short_run_elasticity"], {"distribution": "cauchy"}), UNCERTAIN),
        422,
        "/market/supply/short_run_elasticity/distribution",
    ),
    ("correlation-over-one", edit(_set(["supply_correlation"], 1.5), UNCERTAIN), 422, "/supply_correlation"),
]


def _check(response, status, pointer):
    assert response.status_code == status, response.get_data(as_text=True)[:500]
    if status >= 400:
        assert response.mimetype == "application/problem+json"
        body = response.get_json()
        assert body["status"] == status and body["detail"]
        assert "Traceback" not in response.get_data(as_text=True)
        if pointer is not None:
            assert pointer in [e["pointer"] for e in body["errors"]], body


@pytest.mark.parametrize(
    ("body", "content_type", "status", "pointer"), [c[1:] for c in CASES], ids=[c[0] for c in CASES]
)
def test_paths_corpus(client, body, content_type, status, pointer):
    _check(client.post("/v1/paths", data=body, content_type=content_type), status, pointer)


@pytest.mark.parametrize(
    ("body", "status", "pointer"), [c[1:] for c in BANDS_CASES], ids=[c[0] for c in BANDS_CASES]
)
def test_bands_corpus(client, body, status, pointer):
    _check(client.post("/v1/bands", data=body, content_type=JSON), status, pointer)


def test_an_oversized_body_is_413(client, app):
    body = b'{"pad": "' + b"x" * app.config["MAX_CONTENT_LENGTH"] + b'"}'
    _check(client.post("/v1/paths", data=body, content_type=JSON), 413, None)


def test_a_batch_asking_for_more_work_than_allowed_is_422_before_any_work(client):
    heavy = json.loads(edit(_named_policies(limits.MAX_POLICIES)))
    heavy["horizon"] = limits.MAX_HORIZON
    response = client.post("/v1/paths/batch", json={"scenarios": [heavy] * 30})
    _check(response, 422, "/scenarios")


def test_the_largest_bands_request_allowed_is_answered(client):
    from service.limits import MAX_DRAW_CELLS

    request = copy.deepcopy(UNCERTAIN)
    request["policies"].append({"name": "levy", "kind": "unit_tax", "amount": 30})
    request["draws"] = MAX_DRAWS
    request["horizon"] = MAX_DRAW_CELLS // (MAX_DRAWS * 4) - 1
    response = client.post("/v1/bands", json=request)
    assert response.status_code == 200
    body = response.get_json()
    # The answer covers exactly the largest work allowed: draws x periods x policies.
    assert body["draws"] * len(body["periods"]) * len(body["bands"]) == MAX_DRAW_CELLS


def test_the_largest_batch_allowed_is_answered(client):
    scenario = copy.deepcopy(BASE)
    scenario["policies"] = scenario["policies"][:4]
    scenario["horizon"] = limits.MAX_POLICY_PERIODS // (limits.MAX_BATCH_SCENARIOS * 4) - 1
    response = client.post("/v1/paths/batch", json={"scenarios": [scenario] * limits.MAX_BATCH_SCENARIOS})
    assert response.status_code == 200
    # orjson: the standard library's parser takes seconds over these 48 MB.
    results = orjson.loads(response.data)["results"]
    assert len(results) == limits.MAX_BATCH_SCENARIOS
    assert all(r["periods"] == results[0]["periods"] for r in results)


# --- the scenario library: the same corpus as a saved scenario's request, and its own -------


def _as_scenario(body):
    """A corpus body as the `request` of POST /v1/scenarios (None when it is not JSON)."""
    try:
        request = json.loads(body)
    except (ValueError, UnicodeDecodeError, RecursionError):
        return None
    return json.dumps({"name": "hostile", "request": request})


def _under_request(status, pointer):
    if status == 200:
        return 201, None
    if status == 422:
        return 422, "/request" + (pointer or "")
    return status, pointer


@pytest.mark.parametrize(
    ("body", "content_type", "status", "pointer"), [c[1:] for c in CASES], ids=[c[0] for c in CASES]
)
def test_library_corpus(client, body, content_type, status, pointer):
    """Every /v1/paths case saved as a scenario: the status /v1/paths gives, the pointer under
    /request; a body that is not JSON at all is refused as /v1/paths refuses it."""
    wrapped = _as_scenario(body) if content_type == JSON else None
    if wrapped is None:
        _check(client.post("/v1/scenarios", data=body, content_type=content_type), status, pointer)
    else:
        expected, where = _under_request(status, pointer)
        _check(client.post("/v1/scenarios", data=wrapped, content_type=JSON), expected, where)


@pytest.mark.parametrize(
    ("body", "status", "pointer"), [c[1:] for c in BANDS_CASES], ids=[c[0] for c in BANDS_CASES]
)
def test_library_bands_corpus(client, body, status, pointer):
    expected, where = _under_request(status, pointer)
    _check(client.post("/v1/scenarios", data=_as_scenario(body), content_type=JSON), expected, where)


def _scenario(**fields):
    return json.dumps({"name": "n", "request": BASE, **fields})


LIBRARY_CASES = [
    ("not-an-object", "[]", 422, ""),
    ("no-name", json.dumps({"request": BASE}), 422, "/name"),
    ("no-request", json.dumps({"name": "n"}), 422, "/request"),
    ("request-string", _scenario(request="POST /v1/paths"), 422, "/request"),
    ("name-object", _scenario(name={"$gt": ""}), 422, "/name"),
    ("name-sql", _scenario(name="x'); DROP TABLE scenario_records; --"), 201, None),
    ("name-nul", _scenario(name="a\u0000b"), 422, "/name"),
    ("name-rtl-override", _scenario(name="abc\u202edef"), 422, "/name"),
    ("name-too-long", _scenario(name="n" * (limits.MAX_SCENARIO_NAME_LENGTH + 1)), 422, "/name"),
    ("name-at-limit", _scenario(name="n" * limits.MAX_SCENARIO_NAME_LENGTH), 201, None),
    ("notes-too-long", _scenario(notes="x" * (limits.MAX_SCENARIO_NOTES_LENGTH + 1)), 422, "/notes"),
    ("notes-escape", _scenario(notes="\u001b[31mred"), 422, "/notes"),
    ("tags-object", _scenario(tags={"a": 1}), 422, "/tags"),
    ("tag-number", _scenario(tags=["ok", 7]), 422, "/tags/1"),
    ("tag-empty", _scenario(tags=[" "]), 422, "/tags/0"),
    ("tags-too-many", _scenario(tags=[f"t{i}" for i in range(limits.MAX_SCENARIO_TAGS + 1)]), 422, "/tags"),
    ("tags-at-limit", _scenario(tags=[f"t{i}" for i in range(limits.MAX_SCENARIO_TAGS)]), 201, None),
    ("shared-number", _scenario(shared=1), 422, "/shared"),
    ("id-given", _scenario(id="chosen-by-me"), 422, "/id"),
    ("revision-given", _scenario(revision=7), 422, "/revision"),
    ("owner-given", _scenario(owner="someone-else"), 422, "/owner"),
]


@pytest.mark.parametrize(
    ("body", "status", "pointer"), [c[1:] for c in LIBRARY_CASES], ids=[c[0] for c in LIBRARY_CASES]
)
def test_library_write_corpus(client, body, status, pointer):
    _check(client.post("/v1/scenarios", data=body, content_type=JSON), status, pointer)


HOSTILE_URLS = [
    ("/v1/scenarios/%00", 404),
    ("/v1/scenarios/..%2F..%2Fetc%2Fpasswd", 404),
    ("/v1/scenarios/' OR '1'='1", 404),
    ("/v1/scenarios/" + "a" * 5000, 404),
    ("/v1/scenarios/%E2%80%AE", 404),
    ("/v1/scenarios/abc/paths?revision=-1", 422),
    ("/v1/scenarios?name=%00", 422),
    ("/v1/scenarios?name=%25%25%25", 200),
    ("/v1/scenarios?name=' OR 1=1 --", 200),
    ("/v1/scenarios?tag=%00", 422),
    ("/v1/scenarios?limit=1e3", 422),
    ("/v1/scenarios?limit=-1", 422),
    ("/v1/scenarios?limit=99999999999999999999999", 422),
    ("/v1/scenarios?cursor=" + "A" * 4000, 422),
    ("/v1/scenarios?cursor=cy0x", 422),  # base64 of "s-1": ours in form, not in value
    ("/v1/scenarios?cursor=%FF", 422),
]


@pytest.mark.parametrize(("url", "status"), HOSTILE_URLS, ids=[u for u, _ in HOSTILE_URLS])
def test_library_hostile_urls(client, url, status):
    _check(client.get(url), status, None)


def test_library_hostile_revision_numbers(client):
    saved = client.post("/v1/scenarios", data=_scenario(), content_type=JSON).get_json()
    for revision, status in (
        ("-1", 422),
        ("0", 422),
        ("1.0", 422),
        ("99999999999999999999", 422),
        ("2", 404),
    ):
        _check(client.get(f"/v1/scenarios/{saved['id']}?revision={revision}"), status, None)
    # An unreadable If-Match is no If-Match (428); a weak one never matches (412).
    for tag, status in (
        ('"' + saved["id"] + ".1", 428),
        (f'W/"{saved["id"]}.1"', 412),
        (f'"{saved["id"]}.1"', 200),
    ):
        response = client.put(
            f"/v1/scenarios/{saved['id']}", data=_scenario(), content_type=JSON, headers={"If-Match": tag}
        )
        _check(response, status, None)


XLSX = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"


@pytest.mark.parametrize("accept", [JSON, "text/csv", XLSX])
def test_a_name_with_a_control_character_is_422_in_every_format_and_a_batch_id_too(client, accept):
    """Names end up in workbooks and charts (XML) and CSV rows: refused at their pointer before
    any format is written, never a 500 or a broken file."""
    body = edit(_set(["policies", 1, "name"], "rent\u0007freeze"))
    response = client.post("/v1/paths", data=body, content_type=JSON, headers={"Accept": accept})
    _check(response, 422, "/policies/1/name")
    batch = json.dumps({"scenarios": [dict(BASE, id="run\u00071")]})
    response = client.post("/v1/paths/batch", data=batch, content_type=JSON, headers={"Accept": accept})
    assert response.status_code == 200  # a batch answers each scenario: this one is a problem
    if accept == JSON:
        (result,) = response.get_json()["results"]
        assert "/scenarios/0/id" in [e["pointer"] for e in result["errors"]]


def test_chart_and_briefing_titles_with_control_characters_are_422(client):
    paths = json.loads(edit(lambda b: None))
    response = client.post("/v1/charts", json={"request": paths, "title": "Rents\u0000"})
    _check(response, 422, "/title")
    response = client.post("/v1/briefing", json={"request": paths, "title": "Rents\u0007"})
    _check(response, 422, "/title")


@pytest.mark.parametrize(
    ("path", "value", "words"),
    [
        (["market", "demand", "price_elasticity"], 0.5, "negative (for example -0.5)"),
        (["policies", 1, "coverage"], 40, "write 0.4 for 40 %"),
    ],
)
def test_the_usual_mistakes_get_a_message_that_says_what_to_write(client, path, value, words):
    """A demand elasticity typed without its minus sign, a share typed as a whole percent: the
    message at the field says what to write, not only the range."""
    body = json.loads(edit(_set(path, value)))
    if path[0] == "policies":
        body["policies"][1] = {
            "name": "older homes",
            "kind": "price_ceiling",
            "growth": 0.02,
            "coverage": value,
        }
    response = client.post("/v1/paths", json=body)
    _check(response, 422, "/" + "/".join(str(p) for p in path))
    (error,) = [e for e in response.get_json()["errors"] if e["pointer"] == "/" + "/".join(map(str, path))]
    assert words in error["message"]
