"""CORS: off by default; for configured origins, preflights are answered and Vary: Origin is set."""

from __future__ import annotations

import pytest

from service import create_app
from service.http.settings import SettingsError, load_settings

DASHBOARD = "http://127.0.0.1:8050"
PREFLIGHT = {
    "Origin": DASHBOARD,
    "Access-Control-Request-Method": "POST",
    "Access-Control-Request-Headers": "content-type, authorization",
}


def test_without_configured_origins_no_cors_header_is_sent():
    client = create_app({"TESTING": True}).test_client()
    response = client.options("/v1/paths", headers=PREFLIGHT)
    assert not [h for h in response.headers if h[0].lower().startswith("access-control-")]
    answer = client.get("/v1/examples", headers={"Origin": DASHBOARD})
    assert "Access-Control-Allow-Origin" not in answer.headers


def test_a_preflight_from_a_configured_origin_is_answered(contract_request):
    client = create_app({"TESTING": True, "cors_origins": f"{DASHBOARD},https://dash.example"}).test_client()
    response = client.options("/v1/paths", headers=PREFLIGHT)
    assert response.status_code == 200
    assert response.headers["Access-Control-Allow-Origin"] == DASHBOARD
    assert "POST" in response.headers["Access-Control-Allow-Methods"]
    allowed = response.headers["Access-Control-Allow-Headers"].lower()
    assert "content-type" in allowed and "authorization" in allowed
    assert "Origin" in response.headers["Vary"]
    answer = client.post("/v1/paths", json=contract_request, headers={"Origin": DASHBOARD})
    assert answer.headers["Access-Control-Allow-Origin"] == DASHBOARD
    exposed = answer.headers["Access-Control-Expose-Headers"]
    assert "ETag" in exposed and "Content-Disposition" in exposed
    assert "Origin" in answer.headers["Vary"] and "Accept" in answer.headers["Vary"]


def test_an_origin_not_configured_gets_no_cors_header_but_the_same_vary():
    client = create_app({"TESTING": True, "cors_origins": DASHBOARD}).test_client()
    response = client.options("/v1/paths", headers=dict(PREFLIGHT, Origin="http://127.0.0.1:9999"))
    assert "Access-Control-Allow-Origin" not in response.headers
    assert "Origin" in response.headers["Vary"]


def test_a_preflight_needs_no_key_but_the_call_does(contract_request):
    key = "k" * 20
    client = create_app({"TESTING": True, "cors_origins": DASHBOARD, "api_keys": key}).test_client()
    assert client.options("/v1/paths", headers=PREFLIGHT).status_code == 200
    refused = client.post("/v1/paths", json=contract_request, headers={"Origin": DASHBOARD})
    assert refused.status_code == 401
    assert refused.headers["Access-Control-Allow-Origin"] == DASHBOARD  # the page can read the 401
    ok = client.post(
        "/v1/paths", json=contract_request, headers={"Origin": DASHBOARD, "Authorization": f"Bearer {key}"}
    )
    assert ok.status_code == 200


def test_health_endpoints_stay_same_origin():
    client = create_app({"TESTING": True, "cors_origins": DASHBOARD}).test_client()
    assert "Access-Control-Allow-Origin" not in client.get("/healthz", headers={"Origin": DASHBOARD}).headers


@pytest.mark.parametrize("value", ["127.0.0.1:8050", "http://x.example/path", "http://x.example/", "ftp://x"])
def test_an_origin_that_is_not_one_stops_start_up(value):
    with pytest.raises(SettingsError, match="SHOCKPATH_CORS_ORIGINS"):
        load_settings(environ={"SHOCKPATH_CORS_ORIGINS": value})


def test_origins_come_from_the_environment():
    settings = load_settings(environ={"SHOCKPATH_CORS_ORIGINS": "http://a.example, https://b.example:8443"})
    assert settings.cors_origins == ("http://a.example", "https://b.example:8443")
