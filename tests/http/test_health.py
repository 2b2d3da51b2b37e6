"""Liveness is cheap; readiness solves a canned market and checks the answer."""


def test_liveness(client):
    assert client.get("/healthz").get_json()["status"] == "ok"


def test_readiness_checks_a_known_answer(client, monkeypatch):
    assert client.get("/readyz").status_code == 200
    monkeypatch.setattr(
        "service.http.health._CANNED",
        {**__import__("service.http.health", fromlist=["x"])._CANNED, "horizon": 0},
    )
    response = client.get("/readyz")
    assert response.status_code == 503
    assert response.mimetype == "application/problem+json"


def test_request_ids_are_echoed_or_made(client):
    assert client.get("/healthz", headers={"X-Request-ID": "r-1"}).headers["X-Request-ID"] == "r-1"
    assert len(client.get("/healthz").headers["X-Request-ID"]) == 32
