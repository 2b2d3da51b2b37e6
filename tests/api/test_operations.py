"""Operations: configuration errors, API keys, JSON request logs, Prometheus metrics."""

from __future__ import annotations

import json

import pytest

from service import create_app
from service.http.settings import SettingsError, load_settings

from ..openapi_check import ResponseChecker

KEY_A = "alpha-key-0123456789"
KEY_B = "bravo-key-9876543210"


@pytest.mark.parametrize(
    ("environ", "names"),
    [
        ({"SHOCKPATH_MAX_BODY_BYTES": "lots"}, "SHOCKPATH_MAX_BODY_BYTES"),
        ({"SHOCKPATH_MAX_BODY_BYTES": "-4"}, "SHOCKPATH_MAX_BODY_BYTES"),
        ({"SHOCKPATH_LOG_LEVEL": "chatty"}, "SHOCKPATH_LOG_LEVEL"),
        ({"SHOCKPATH_BAND_THREADS": "0"}, "SHOCKPATH_BAND_THREADS"),
        ({"SHOCKPATH_METRICS_REQUIRE_KEY": "maybe"}, "SHOCKPATH_METRICS_REQUIRE_KEY"),
        ({"SHOCKPATH_API_KEYS": "short"}, "SHOCKPATH_API_KEYS"),
        ({"SHOCKPATH_API_KEYS_FILE": "/nonexistent/keys"}, "SHOCKPATH_API_KEYS_FILE"),
    ],
)
def test_invalid_configuration_stops_start_up_naming_the_variable(environ, names):
    with pytest.raises(SettingsError, match=names):
        load_settings(environ=environ)


def test_settings_come_from_the_environment_and_the_factory_mapping_wins():
    settings = load_settings(
        {"band_threads": 1}, environ={"SHOCKPATH_BAND_THREADS": "3", "SHOCKPATH_LOG_LEVEL": "debug"}
    )
    assert settings.band_threads == 1 and settings.log_level == "DEBUG"


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


def test_each_request_is_one_json_log_line_with_its_ids_and_never_its_body(capfd, contract_request):
    app = create_app()
    client = app.test_client()
    capfd.readouterr()
    response = client.post("/v1/paths", json=contract_request, headers={"X-Request-ID": "trace-42"})
    sid = response.get_json()["scenario_id"]
    lines = [json.loads(line) for line in capfd.readouterr().err.splitlines() if line.strip()]
    requests = [line for line in lines if line.get("message") == "request"]
    assert len(requests) == 1
    entry = requests[0]
    assert entry["request_id"] == "trace-42" and entry["scenario_id"] == sid
    assert entry["method"] == "POST" and entry["path"] == "/v1/paths" and entry["status"] == 200
    assert entry["duration_ms"] >= 0
    assert "1450" not in json.dumps(lines)  # the body's numbers never reach the log


def test_metrics_count_requests_per_endpoint_and_status_and_the_work_done(client, contract_request):
    def value(text, prefix):
        return sum(float(line.split()[-1]) for line in text.splitlines() if line.startswith(prefix))

    contract_request["market"]["price"] = 1451.25  # a scenario no other test asked for: not cached
    before = client.get("/metrics").get_data(as_text=True)
    client.post("/v1/paths", json=contract_request)
    client.post("/v1/paths", json={})
    after = client.get("/metrics").get_data(as_text=True)
    ok = 'shockpath_http_requests_total{endpoint="/v1/paths",method="POST",status="200"}'
    bad = 'shockpath_http_requests_total{endpoint="/v1/paths",method="POST",status="422"}'
    assert value(after, ok) - value(before, ok) == 1
    assert value(after, bad) - value(before, bad) == 1
    computed = 'shockpath_scenarios_computed_total{endpoint="/v1/paths"}'
    assert value(after, computed) - value(before, computed) == 1
    assert "shockpath_http_request_duration_seconds_bucket" in after
