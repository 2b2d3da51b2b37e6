"""A client generated from the committed document by openapi-python-client works: every demo,
a batch with ids and summaries, bands, CSV and a chart round-trip through its typed models.

The client is generated into a temporary folder (offline, about 10 s) and talks to the app
in-process through httpx's WSGI transport.
"""

from __future__ import annotations

import csv
import importlib
import io
import subprocess
import sys
from pathlib import Path

import pytest

from service.http.openapi import DOCUMENT_PATH

httpx = pytest.importorskip("httpx")

PACKAGE = "shockpath_client"


@pytest.fixture(scope="module")
def generated(tmp_path_factory):
    folder = tmp_path_factory.mktemp("generated")
    config = folder / "config.yaml"
    config.write_text("post_hooks: []\n", encoding="utf-8")
    tool = Path(sys.executable).with_name("openapi-python-client")
    done = subprocess.run(
        [
            *(str(tool), "generate", "--path", str(DOCUMENT_PATH), "--meta", "none"),
            *("--output-path", str(folder / PACKAGE), "--config", str(config)),
        ],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert done.returncode == 0, done.stdout + done.stderr
    assert "Warning" not in done.stdout, done.stdout  # every operation and schema was understood
    sys.path.insert(0, str(folder))
    try:
        yield importlib.import_module(PACKAGE)
    finally:
        sys.path.remove(str(folder))
        for name in [n for n in sys.modules if n == PACKAGE or n.startswith(PACKAGE + ".")]:
            del sys.modules[name]


@pytest.fixture(scope="module")
def api(generated, app):
    """The generated package's client (no key: the document's security is optional)."""
    client = generated.Client(
        base_url="http://shockpath.test", httpx_args={"transport": httpx.WSGITransport(app=app)}
    )
    with client as c:
        yield c


def _op(name: str):
    return importlib.import_module(f"{PACKAGE}.api.default.{name}")


def test_every_demo_parses_and_round_trips_through_the_typed_models(generated, api, app):
    from service.examples import example_request, examples

    models = importlib.import_module(f"{PACKAGE}.models")
    raw = app.test_client()
    listed = _op("list_examples").sync(client=api)
    assert {e.name for e in listed.examples} == set(examples())
    for entry in listed.examples:
        kind = "bands" if entry.endpoint == "/v1/bands" else "paths"
        typed = _op(f"get_{kind}_example").sync(entry.name, client=api)
        expected = models.BandsRequest if kind == "bands" else models.PathsRequest
        assert isinstance(typed, expected), (entry.name, typed)
        assert typed.to_dict() == example_request(entry.name)  # nothing dropped, nothing added
        for policy in typed.policies:  # typed policies, not loose dicts
            assert not isinstance(policy, dict)
            assert getattr(policy, "additional_properties", {}) == {}, entry.name  # strict schemas
        if kind == "bands":
            assert typed.draws == example_request(entry.name).get("draws", typed.draws)
            continue  # bands of every demo would be slow: one is tested below
        answer = _op("post_paths").sync(client=api, body=typed)
        assert isinstance(answer, models.PathsResponse), (entry.name, answer)
        direct = raw.post("/v1/paths", json=example_request(entry.name)).get_json()
        assert answer.to_dict() == direct
        assert answer.scenario_id == direct["scenario_id"]


def test_a_numeric_ceiling_and_the_older_base_spelling_both_work(generated, api, contract_request, app):
    models = importlib.import_module(f"{PACKAGE}.models")
    contract_request["policies"].append({"name": "ceiling at 1500", "kind": "price_ceiling", "level": 1500.0})
    body = models.PathsRequest.from_dict(contract_request)
    ceiling = body.policies[-1]
    assert ceiling.level == 1500.0 and not isinstance(ceiling.level, str)
    answer = _op("post_paths").sync(client=api, body=body)
    assert isinstance(answer, models.PathsResponse), answer
    assert [p.name for p in answer.paths][-1] == "ceiling at 1500"
    # The older spelling of a freeze, "level": "base", is the same scenario as base_level: true.
    new = app.test_client().post("/v1/paths", json=contract_request).get_json()
    freeze = next(p for p in contract_request["policies"] if p.get("base_level"))
    del freeze["base_level"]
    freeze["level"] = "base"
    old = app.test_client().post("/v1/paths", json=contract_request).get_json()
    assert old == new


def test_a_batch_with_ids_and_summaries_round_trips(generated, api, contract_request, app):
    models = importlib.import_module(f"{PACKAGE}.models")
    request = {
        "output": "summary",
        "scenarios": [{"id": "north", **contract_request}, {"id": "south", **contract_request, "horizon": 3}],
    }
    answer = _op("post_paths_batch").sync(client=api, body=models.BatchRequest.from_dict(request))
    assert isinstance(answer, models.BatchResponse), answer
    direct = app.test_client().post("/v1/paths/batch", json=request).get_json()
    assert answer.to_dict() == direct
    assert [r["id"] for r in direct["results"]] == ["north", "south"]
    assert all("paths" not in r and r["summary"] for r in direct["results"])


def test_bands_round_trip(generated, api, app):
    from service.examples import example_request

    models = importlib.import_module(f"{PACKAGE}.models")
    request = example_request("quillbrook-uncertain-elasticities") | {"horizon": 3, "draws": 200}
    answer = _op("post_bands").sync(client=api, body=models.BandsRequest.from_dict(request))
    assert isinstance(answer, models.BandsResponse), answer
    assert answer.to_dict() == app.test_client().post("/v1/bands", json=request).get_json()
    assert answer.draws == 200


def test_csv_comes_through_the_csv_operations_as_text(generated, api, contract_request, app):
    models = importlib.import_module(f"{PACKAGE}.models")
    body = models.PathsRequest.from_dict(contract_request)
    text = _op("post_paths_csv").sync(client=api, body=body)
    direct = app.test_client().post("/v1/paths", json=contract_request, headers={"Accept": "text/csv"})
    assert text == direct.get_data(as_text=True)
    assert next(csv.reader(io.StringIO(text))) == ["policy", "period", "variable", "value", "unit"]
    wide = _op("post_paths_csv").sync(client=api, body=body, layout=models.PostPathsCsvLayout.WIDE)
    assert next(csv.reader(io.StringIO(wide)))[:2] == ["policy", "period"]
    batch = models.BatchRequest.from_dict({"scenarios": [{"id": "only", **contract_request}]})
    rows = list(csv.DictReader(io.StringIO(_op("post_paths_batch_csv").sync(client=api, body=batch))))
    assert rows and {r["scenario"] for r in rows} == {"only"}


def test_a_chart_comes_through_as_bytes(generated, api, contract_request):
    models = importlib.import_module(f"{PACKAGE}.models")
    request = models.ChartRequest.from_dict({"chart": "paths", "format": "svg", "scenario": contract_request})
    image = _op("post_chart").sync(client=api, body=request)
    data = image.payload.read()
    assert b"<svg" in data[:500]
