"""One least-recently-used cache per process, bounded by the bytes it holds.

Engine curves and curves interpolated onto grids of every step share it, so
however many steps or curves are asked for, a process never keeps more than
``TELLSTACK_CURVE_CACHE_BYTES`` (default 64 MiB) of them. An entry larger
than the whole budget is returned without being kept.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from dataclasses import fields, is_dataclass

import numpy as np
from django.conf import settings

__all__ = ["ByteLRU", "size_of", "shared"]


def size_of(value) -> int:
    """The bytes of the numpy arrays ``value`` holds (directly or in its dataclass fields), plus a little."""
    if isinstance(value, np.ndarray):
        return int(value.nbytes)
    total = 256
    if is_dataclass(value):
        for f in fields(value):
            total += size_of_part(getattr(value, f.name, None))
    return total


def size_of_part(part) -> int:
    if isinstance(part, np.ndarray):
        return int(part.nbytes)
    if isinstance(part, (tuple, list)):
        return sum(size_of_part(p) for p in part)
    if is_dataclass(part):
        return size_of(part)
    return 0


class ByteLRU:
    """A thread-safe LRU mapping whose entries together hold at most ``budget`` bytes."""

    def __init__(self, budget: int | None = None):
        self._budget = budget
        self._lock = threading.Lock()
        self._items: OrderedDict = OrderedDict()
        self._bytes = 0

    @property
    def budget(self) -> int:
        if self._budget is not None:
            return self._budget
        return int(getattr(settings, "TELLSTACK_CURVE_CACHE_BYTES", 64 * 1024 * 1024))

    @property
    def bytes(self) -> int:
        return self._bytes

    def __len__(self) -> int:
        return len(self._items)

    def get(self, key):
        with self._lock:
            hit = self._items.get(key)
            if hit is None:
                return None
            self._items.move_to_end(key)
            return hit[0]

    def put(self, key, value):
        """Keep ``value`` under ``key`` (evicting the least recently used) and return it."""
        size = size_of(value)
        budget = self.budget
        with self._lock:
            old = self._items.pop(key, None)
            if old is not None:
                self._bytes -= old[1]
            if size > budget:
                return value
            self._items[key] = (value, size)
            self._bytes += size
            while self._bytes > budget:
                _key, (_value, evicted) = self._items.popitem(last=False)
                self._bytes -= evicted
        return value

    def clear(self) -> None:
        with self._lock:
            self._items.clear()
            self._bytes = 0


#: The process's one cache of engine curves and interpolated curves.
shared = ByteLRU()
