"""A per-worker cache of rendered answers, keyed by scenario id (least recently used first out).

The model is deterministic and the scenario id hashes the normalised request with the model
version, so an answer once computed is the answer: dashboards that poll the same scenario, or
several callers asking for it, get it without recomputation. Bounded in bytes; 0 disables it.
"""

from __future__ import annotations

import threading
from collections import OrderedDict

from .metrics import CACHE_LOOKUPS

__all__ = ["AnswerCache"]


class AnswerCache:
    def __init__(self, max_bytes: int):
        self.max_bytes = max_bytes
        self._items: OrderedDict[str, bytes] = OrderedDict()
        self._size = 0
        self._lock = threading.Lock()

    def get(self, key: str) -> bytes | None:
        with self._lock:
            value = self._items.get(key)
            if value is not None:
                self._items.move_to_end(key)
        CACHE_LOOKUPS.labels("miss" if value is None else "hit").inc()
        return value

    def put(self, key: str, value: bytes) -> None:
        if len(value) > self.max_bytes:
            return
        with self._lock:
            old = self._items.pop(key, None)
            if old is not None:
                self._size -= len(old)
            self._items[key] = value
            self._size += len(value)
            while self._size > self.max_bytes:
                _, evicted = self._items.popitem(last=False)
                self._size -= len(evicted)

    def __len__(self) -> int:
        return len(self._items)
