"""A small per-process memo for answers keyed on the data version (app.db.version).

The key holds the data version, so an entry can never be out of date: after any change the key
is new and the old entries just age out. Bounded (the least recently used entries go first); thread-safe.
The expensive part behind an entry (an outlook) is computed once for all processes and stored
in the database (app.services.outlook_cache); this memo only saves each process re-reading and
re-serialising it for every request.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable
from typing import Generic, TypeVar

T = TypeVar("T")


class VersionMemo(Generic[T]):
    def __init__(self, size: int) -> None:
        if size < 1:
            raise ValueError(f"memo size must be >= 1, got {size!r}")
        self.size = size
        self._data: OrderedDict[Hashable, T] = OrderedDict()
        self._lock = threading.Lock()

    def get(self, key: Hashable) -> T | None:
        with self._lock:
            hit = self._data.get(key)
            if hit is not None:
                self._data.move_to_end(key)  # least recently used goes first
            return hit

    def put(self, key: Hashable, value: T) -> T:
        with self._lock:
            self._data[key] = value
            self._data.move_to_end(key)
            while len(self._data) > self.size:
                self._data.popitem(last=False)
        return value

    def get_or_make(self, key: Hashable, make: Callable[[], T]) -> T:
        hit = self.get(key)
        return hit if hit is not None else self.put(key, make())

    def clear(self) -> None:
        with self._lock:
            self._data.clear()

    def __len__(self) -> int:
        return len(self._data)


__all__ = ["VersionMemo"]
