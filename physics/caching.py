"""One cache policy for porefill: every in-memory cache is made here and registered, so one call clears
them all (the server does when its last session closes).

- `memoize(maxsize)`: `functools.lru_cache` for pure functions of frozen, hashable inputs (scenarios,
  geometry stages), least recently used out first;
- `BoundedCache(maxsize)`: the same policy as an object with ``get``/``put``, for values stored under a key
  the caller derives (thread-safe: the dashboard's sessions share them);
- `register(obj)`: any other object with a ``clear()`` method joins the policy;
- `clear_caches()`: empties every one of them.

A cached value is always the value the function would compute again: a cache changes time, never results.
"""
from __future__ import annotations

import functools
import threading
from collections import OrderedDict
from typing import Any, Callable, Hashable

__all__ = ["memoize", "BoundedCache", "register", "clear_caches", "registered"]

_registry: list = []
_registry_lock = threading.Lock()


def register(cache: Any) -> Any:
    """Add ``cache`` (anything with ``clear()``, or an lru_cache wrapper) to the policy; returns it."""
    with _registry_lock:
        _registry.append(cache)
    return cache


def registered() -> tuple:
    """Every cache of the policy (for tests and memory reports)."""
    with _registry_lock:
        return tuple(_registry)


def clear_caches() -> None:
    """Empty every registered cache."""
    for cache in registered():
        (cache.cache_clear if hasattr(cache, "cache_clear") else cache.clear)()


def memoize(maxsize: int | None = 32) -> Callable[[Callable], Callable]:
    """``functools.lru_cache(maxsize)``, registered with the policy."""

    def wrap(fn: Callable) -> Callable:
        return register(functools.lru_cache(maxsize=maxsize)(fn))

    return wrap


class BoundedCache:
    """Values by key, at most ``maxsize`` of them, least recently used out first; thread-safe; registered."""

    def __init__(self, maxsize: int):
        if isinstance(maxsize, bool) or not isinstance(maxsize, int) or maxsize < 1:
            raise ValueError(f"maxsize must be a whole number >= 1; got {maxsize!r}")
        self.maxsize = maxsize
        self._data: OrderedDict = OrderedDict()
        self._lock = threading.Lock()
        register(self)

    def get(self, key: Hashable, default=None):
        with self._lock:
            if key not in self._data:
                return default
            self._data.move_to_end(key)
            return self._data[key]

    def put(self, key: Hashable, value) -> None:
        with self._lock:
            self._data[key] = value
            self._data.move_to_end(key)
            while len(self._data) > self.maxsize:
                self._data.popitem(last=False)

    def __len__(self) -> int:
        with self._lock:
            return len(self._data)

    def __contains__(self, key: Hashable) -> bool:
        with self._lock:
            return key in self._data

    def clear(self) -> None:
        with self._lock:
            self._data.clear()
