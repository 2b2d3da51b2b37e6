"""One JSON log line per request, with its ids, never its body."""

from __future__ import annotations

import json

from service import create_app


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


def test_a_request_line_left_out_by_the_level_gathers_nothing_from_the_request():
    import logging

    from service.http.logs import log_request

    logger = logging.getLogger("shockpath.test.quiet")
    logger.setLevel(logging.WARNING)
    # Outside any request: reading the request's fields would raise; a line the level leaves
    # out reads none of them.
    log_request(logger, 200, 0.001)
    logger.setLevel(logging.INFO)
    try:
        log_request(logger, 200, 0.001)
    except RuntimeError as error:  # Flask: "Working outside of request context"
        assert "request context" in str(error)
    else:
        raise AssertionError("an enabled request line reads the request")
