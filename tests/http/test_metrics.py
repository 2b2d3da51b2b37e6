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


def test_resident_memory_is_this_process_s_resident_set_read_from_one_open_descriptor():
    import os

    from service.http import metrics

    first = metrics.resident_bytes()
    with open("/proc/self/statm", "rb") as f:
        pages = int(f.read().split()[1])
    # Resident memory moves a little between the two reads, never by anything like a megabyte.
    assert abs(first - pages * metrics._PAGE) < 1 << 20
    descriptors = len(os.listdir("/proc/self/fd"))
    for _ in range(50):
        assert metrics.resident_bytes() > 0
    assert len(os.listdir("/proc/self/fd")) == descriptors  # no descriptor opened per call


def test_a_forked_worker_reads_its_own_resident_memory_not_the_master_s():
    import os

    from service.http import metrics

    metrics.resident_bytes()  # the parent ("master") has its descriptor open
    read_end, write_end = os.pipe()
    pid = os.fork()
    if pid == 0:  # the child, as a gunicorn worker forked from a preloaded master
        try:
            metrics.resident_bytes()
            os.write(write_end, f"{metrics._STATM[0]} {os.getpid()}".encode())
        finally:
            os._exit(0)
    os.close(write_end)
    os.waitpid(pid, 0)
    with os.fdopen(read_end, "rb") as f:
        read_for, child = f.read().split()
    assert read_for == child and int(child) == pid
    assert metrics._STATM[0] == os.getpid()  # the parent's own descriptor is untouched
