"""The per-worker answer cache (service/http/cache.py)."""

from __future__ import annotations

from service.http.cache import AnswerCache


def test_the_cache_evicts_the_least_recently_used_beyond_its_bytes():
    cache = AnswerCache(10)
    cache.put("a", b"12345")
    cache.put("b", b"12345")
    assert cache.get("a") == b"12345"  # a is now the most recent
    cache.put("c", b"123")
    assert cache.get("b") is None and cache.get("a") is not None and len(cache) == 2
    cache.put("big", b"x" * 11)
    assert cache.get("big") is None


def test_a_bands_request_is_computed_once_for_its_json_csv_workbook_and_chart(monkeypatch):
    """The page asks for a bands answer's JSON, then its long and wide CSV and its chart: the
    draws are run once and every form reads the cached answer, with the same bytes as forms
    computed afresh (a service without the cache)."""
    from service import create_app
    from service.examples import example_request
    from service.http import uncertainty as http_uncertainty

    request = example_request("quillbrook-uncertain-elasticities")
    request["draws"] = 300
    forms = [("", "application/json"), ("", "text/csv"), ("?layout=wide", "text/csv")]
    forms.append(("", "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"))
    computed = []
    real = http_uncertainty.bands

    def counted(raw, threads=1):
        computed.append(1)
        return real(raw, threads=threads)

    monkeypatch.setattr(http_uncertainty, "bands", counted)

    def answers(settings):
        client = create_app({"TESTING": True, "band_threads": 1, **settings}).test_client()
        out = []
        for query, accept in forms:
            response = client.post("/v1/bands" + query, json=request, headers={"Accept": accept})
            assert response.status_code == 200
            out.append((response.headers["ETag"], response.get_data()))
        chart = client.post("/v1/charts", json={"chart": "bands", "format": "svg", "scenario": request})
        assert chart.status_code == 200
        out.append((chart.headers["ETag"], chart.get_data()))
        return out

    cached = answers({})
    assert len(computed) == 1  # the band chart drawn from the same answer too
    fresh = answers({"cache_bytes": 0})
    assert len(computed) == 1 + len(forms) + 1
    assert [etag for etag, _ in cached] == [etag for etag, _ in fresh]
    assert [body for _, body in cached] == [body for _, body in fresh]
    assert len({etag for etag, _ in cached}) == len(forms) + 1
