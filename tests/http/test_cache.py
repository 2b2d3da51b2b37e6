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
