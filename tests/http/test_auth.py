"""Optional bearer keys on /v1 (and /metrics when so configured)."""

from __future__ import annotations

import pytest

from service import create_app

from ..openapi_check import ResponseChecker

KEY_A = "alpha-key-0123456789"
KEY_B = "bravo-key-9876543210"


@pytest.fixture()
def keyed(tmp_path, app):
    keys = tmp_path / "keys"
    keys.write_text(f"# rotated monthly\n{KEY_B}\n")
    secured = create_app({"api_keys": KEY_A, "api_keys_file": str(keys)})
    return ResponseChecker(secured.extensions["shockpath.openapi"]).wrap(secured.test_client())


def test_with_keys_every_v1_endpoint_needs_a_valid_bearer_key(keyed, contract_request):
    missing = keyed.post("/v1/paths", json=contract_request)
    assert missing.status_code == 401 and missing.mimetype == "application/problem+json"
    assert missing.headers["WWW-Authenticate"].startswith("Bearer")
    wrong = keyed.post(
        "/v1/paths", json=contract_request, headers={"Authorization": "Bearer not-a-key-at-all-xx"}
    )
    assert wrong.status_code == 401
    basic = keyed.post("/v1/paths", json=contract_request, headers={"Authorization": f"Basic {KEY_A}"})
    assert basic.status_code == 401
    assert keyed.get("/v1/examples").status_code == 401


def test_both_keys_of_a_rotation_are_accepted(keyed, contract_request):
    for key in (KEY_A, KEY_B):
        response = keyed.post("/v1/paths", json=contract_request, headers={"Authorization": f"Bearer {key}"})
        assert response.status_code == 200


def test_health_and_metrics_stay_open_unless_metrics_are_protected(keyed, tmp_path):
    assert keyed.get("/healthz").status_code == 200
    assert keyed.get("/readyz").status_code == 200
    assert keyed.get("/metrics").status_code == 200
    protected = create_app({"api_keys": KEY_A, "metrics_require_key": True}).test_client()
    assert protected.get("/metrics").status_code == 401
    assert protected.get("/metrics", headers={"Authorization": f"Bearer {KEY_A}"}).status_code == 200


def test_without_keys_nothing_needs_one(client, contract_request):
    assert client.post("/v1/paths", json=contract_request).status_code == 200
