"""gzip for large answers when asked (Accept-Encoding), the same bytes once decoded."""

from __future__ import annotations

import copy
import gzip

from service.examples import example_request
from service.http.compression import GZIP_MIN_BYTES


def test_a_large_batch_is_gzipped_when_asked_and_decodes_to_the_same_body(client, contract_request):
    request = {"scenarios": [copy.deepcopy(contract_request) for _ in range(20)]}
    plain = client.post("/v1/paths/batch", json=request)
    assert "Content-Encoding" not in plain.headers
    packed = client.post("/v1/paths/batch", json=request, headers={"Accept-Encoding": "gzip, deflate, br"})
    assert packed.headers["Content-Encoding"] == "gzip"
    assert "Accept-Encoding" in packed.headers["Vary"]
    assert gzip.decompress(packed.data) == plain.data
    assert len(packed.data) < len(plain.data) / 4
    assert int(packed.headers["Content-Length"]) == len(packed.data)


def test_csv_is_gzipped_too_and_small_answers_are_not(client, contract_request):
    packed = client.post(
        "/v1/paths", json=contract_request, headers={"Accept": "text/csv", "Accept-Encoding": "gzip"}
    )
    assert packed.headers["Content-Encoding"] == "gzip"
    assert gzip.decompress(packed.data).startswith(b'"policy","period","variable","value","unit"\n')
    small = client.get("/healthz", headers={"Accept-Encoding": "gzip"})
    assert len(small.data) < GZIP_MIN_BYTES and "Content-Encoding" not in small.headers


def test_identity_or_no_header_gets_the_plain_body(client):
    request = example_request("quillbrook-rent-freeze")
    for headers in ({}, {"Accept-Encoding": "identity"}, {"Accept-Encoding": "gzip;q=0"}):
        response = client.post("/v1/paths", json=request, headers=headers)
        assert "Content-Encoding" not in response.headers, headers
