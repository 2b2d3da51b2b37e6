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
    # ... and the header that says how to authenticate
    assert "WWW-Authenticate" in refused.headers
    assert "WWW-Authenticate" in refused.headers["Access-Control-Expose-Headers"]
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


def _cors_client(**config):
    return create_app({"TESTING": True, "cors_origins": DASHBOARD, **config}).test_client()


def _cors_headers(response):
    return [name for name, _ in response.headers if name.lower().startswith("access-control-")]


def test_a_preflight_allows_a_gzip_body():
    # The API takes gzip bodies (Content-Encoding: gzip); a browser sends that header only if
    # the preflight allows it.
    client = _cors_client()
    asked = "authorization,content-encoding,content-type"
    response = client.options(
        "/v1/paths/batch", headers=dict(PREFLIGHT, **{"Access-Control-Request-Headers": asked})
    )
    assert response.status_code == 200
    allowed = {h.strip().lower() for h in response.headers["Access-Control-Allow-Headers"].split(",")}
    assert allowed == set(asked.split(","))


@pytest.mark.parametrize(
    ("method", "path"), [("GET", "/v1/examples"), ("GET", "/openapi.json"), ("OPTIONS", "/v1/paths")]
)
def test_a_request_without_an_origin_gets_no_cors_header_and_learns_no_configured_origin(method, path):
    client = create_app({"TESTING": True, "cors_origins": f"{DASHBOARD},https://dash.example"}).test_client()
    response = client.open(path, method=method)
    assert _cors_headers(response) == []
    assert DASHBOARD not in str(response.headers) and "dash.example" not in str(response.headers)
    # The answer differs for a configured Origin, so a shared cache must key on it.
    assert "Origin" in response.vary


def test_a_wildcard_origin_is_not_sent_to_a_request_without_an_origin():
    client = create_app({"TESTING": True, "cors_origins": "*"}).test_client()
    assert _cors_headers(client.get("/v1/examples")) == []
    # Any origin may call: the answer names the caller's.
    assert (
        client.get("/v1/examples", headers={"Origin": DASHBOARD}).headers["Access-Control-Allow-Origin"]
        == DASHBOARD
    )


def _broken_compute(*args, **kwargs):
    raise RuntimeError("secret internals")


@pytest.mark.parametrize(
    ("status", "send"),
    [
        (
            304,
            lambda c, r: c.get(
                "/v1/examples", headers={"If-None-Match": c.get("/v1/examples").headers["ETag"]}
            ),
        ),
        (404, lambda c, r: c.get("/v1/no-such-thing")),
        (406, lambda c, r: c.post("/v1/paths", json=r, headers={"Accept": "application/xml"})),
        (
            413,
            lambda c, r: c.post(
                "/v1/paths",
                data=b" " * (c.application.config["MAX_CONTENT_LENGTH"] + 1),
                content_type="application/json",
            ),
        ),
        (415, lambda c, r: c.post("/v1/paths", data=b"{}", content_type="text/plain")),
        (422, lambda c, r: c.post("/v1/paths", json={"horizon": "x"})),
        (500, lambda c, r: c.post("/v1/paths", json=r)),
    ],
)
def test_an_allowed_origin_can_read_every_answer_the_error_ones_too(
    monkeypatch, contract_request, status, send
):
    monkeypatch.setattr("service.http.paths.compute", _broken_compute)
    client = create_app({"TESTING": False, "cors_origins": DASHBOARD}).test_client()
    client.environ_base["HTTP_ORIGIN"] = DASHBOARD
    response = send(client, contract_request)
    assert response.status_code == status
    assert response.headers["Access-Control-Allow-Origin"] == DASHBOARD
    assert "ETag" in response.headers["Access-Control-Expose-Headers"]
    assert "Origin" in response.vary


def test_a_dashboard_can_read_which_methods_a_path_takes():
    """A 405's Allow header says what to send instead; another origin reads it only if exposed."""
    client = create_app({"TESTING": True, "cors_origins": DASHBOARD}).test_client()
    refused = client.delete("/v1/paths", headers={"Origin": DASHBOARD})
    assert refused.status_code == 405 and "POST" in refused.headers["Allow"]
    assert "Allow" in [h.strip() for h in refused.headers["Access-Control-Expose-Headers"].split(",")]
