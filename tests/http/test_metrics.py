"""Prometheus metrics: requests per endpoint and status, and the work done."""

from __future__ import annotations


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
