"""Demo scenarios: listed, fetchable, postable as they are, covering every policy kind."""

from __future__ import annotations

from service.schemas.paths import POLICY_SCHEMAS


def test_every_listed_example_can_be_posted_as_it_is(client):
    listing = client.get("/v1/examples").get_json()["examples"]
    assert len(listing) >= 4
    kinds = set()
    for item in listing:
        request = client.get(item["href"]).get_json()
        kinds |= {p["kind"] for p in request["policies"]}
        response = client.post(item["endpoint"], json=request)
        assert response.status_code == 200, item["name"]
        answer = response.get_json()
        summary = answer["summary"] if "summary" in answer else answer["central"]["summary"]
        assert any(s["binding_periods"] > 0 for s in summary), item["name"]
    assert kinds == set(POLICY_SCHEMAS)
    forms = {client.get(i["href"]).get_json()["market"].get("form", "linear") for i in listing}
    assert forms == {"linear", "constant_elasticity"}
    assert {i["endpoint"] for i in listing} == {"/v1/paths", "/v1/bands"}
