"""The cache of the study pipeline: one object, owned by whoever runs the pipeline.

The window keeps one :class:`StudyCache` for its life and a command-line
run makes its own; nothing is cached at module level.  Every stage stores
its result under a key made of exactly what it reads, so an edit finds the
results of the stages it did not touch and recomputes the rest.

The cache is safe to share between threads (one lock guards the table and
the counters; a stage is computed outside the lock, so two threads asking
for the same missing key may both compute it, and the first stored wins),
bounded in memory (least recently used entries go first once the total of
their sizes passes ``max_bytes``, or their number passes ``max_entries``),
and counts hits and misses per stage so tests can see what an edit
recomputed.
"""

from __future__ import annotations

import sys
import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable, Mapping
from dataclasses import dataclass
from typing import Any, TypeVar

import numpy as np

__all__ = ["StageCount", "StudyCache", "nbytes"]

T = TypeVar("T")
H = TypeVar("H", bound=Hashable)

#: Default memory bound: enough for the designs of a few 1,000,000-row studies.
DEFAULT_MAX_BYTES = 2 * 1024**3
DEFAULT_MAX_ENTRIES = 50_000


@dataclass(frozen=True)
class StageCount:
    """Hits and misses of one stage since the counters were last reset."""

    hits: int = 0
    misses: int = 0


def nbytes(value: object) -> int:
    """A rough size in bytes of a stage result: its arrays, or a small constant."""
    if isinstance(value, np.ndarray):
        return int(value.nbytes)
    size = getattr(value, "nbytes", None)
    if isinstance(size, int):
        return size
    return sys.getsizeof(value)


class StudyCache:
    """Stage results by (stage, key), least recently used first out.

    Parameters
    ----------
    max_bytes : int
        Bound on the summed sizes of the entries (see :func:`nbytes`).
    max_entries : int
        Bound on their number.

    Examples
    --------
    >>> cache = StudyCache()
    >>> cache.get("square", 3, lambda: 9), cache.get("square", 3, lambda: -1)
    (9, 9)
    >>> cache.count("square")
    StageCount(hits=1, misses=1)
    """

    def __init__(
        self, max_bytes: int = DEFAULT_MAX_BYTES, max_entries: int = DEFAULT_MAX_ENTRIES
    ) -> None:
        self.max_bytes = max_bytes
        self.max_entries = max_entries
        self._lock = threading.RLock()
        self._entries: OrderedDict[tuple[str, Hashable], tuple[Any, int]] = OrderedDict()
        # each stage's keys in the same least-recent-first order (entries() reads
        # one stage without walking the others' thousands of entries)
        self._stages: dict[str, OrderedDict[Hashable, None]] = {}
        self._bytes = 0
        self._hits: dict[str, int] = {}
        self._misses: dict[str, int] = {}

    def get(
        self,
        stage: str,
        key: Hashable,
        compute: Callable[[], T],
        *,
        size: Callable[[T], int] = nbytes,
        trace: list[str] | None = None,
    ) -> T:
        """The stored result of ``stage`` for ``key``, computing and storing it if absent.

        ``trace``, when given, receives the stage name on a miss (what this
        run recomputed).
        """
        full = (stage, key)
        with self._lock:
            hit = self._entries.get(full)
            if hit is not None:
                self._touch(stage, key)
                self._hits[stage] = self._hits.get(stage, 0) + 1
                value: T = hit[0]
                return value
            self._misses[stage] = self._misses.get(stage, 0) + 1
        if trace is not None:
            trace.append(stage)
        value = compute()
        self.put(stage, key, value, size(value))
        return value

    def get_many(
        self,
        stage: str,
        keys: Mapping[H, Hashable],
        compute: Callable[[list[H]], Mapping[H, T]],
        *,
        trace: list[str] | None = None,
    ) -> dict[H, T]:
        """One entry per item, the absent ones computed together in one call.

        ``keys`` maps each item to its key; ``compute(missing)`` returns the
        results of the items not stored (one call, so that work they share
        is done once).  Each item counts one hit or one miss.

        Examples
        --------
        >>> cache = StudyCache()
        >>> squares = lambda items: {i: i * i for i in items}
        >>> cache.get_many("square", {2: 2, 3: 3}, squares)
        {2: 4, 3: 9}
        >>> cache.get_many("square", {3: 3, 4: 4}, squares), cache.count("square")
        ({3: 9, 4: 16}, StageCount(hits=1, misses=3))
        """
        found: dict[H, T] = {}
        with self._lock:
            for item, key in keys.items():
                hit = self._entries.get((stage, key))
                if hit is not None:
                    self._touch(stage, key)
                    found[item] = hit[0]
            self._hits[stage] = self._hits.get(stage, 0) + len(found)
            missing = [item for item in keys if item not in found]
            self._misses[stage] = self._misses.get(stage, 0) + len(missing)
        if missing:
            if trace is not None:
                trace.append(stage)
            computed = compute(missing)
            for item in missing:
                if item in computed:
                    value = computed[item]
                    self.put(stage, keys[item], value, nbytes(value))
                    found[item] = value
        return {item: found[item] for item in keys if item in found}

    def put(self, stage: str, key: Hashable, value: object, size: int) -> None:
        """Store a result (the first stored wins when two threads raced)."""
        full = (stage, key)
        with self._lock:
            if full in self._entries:
                return
            self._entries[full] = (value, size)
            self._stages.setdefault(stage, OrderedDict())[key] = None
            self._bytes += size
            while self._entries and (
                self._bytes > self.max_bytes or len(self._entries) > self.max_entries
            ):
                (gone, gone_key), (_, old) = self._entries.popitem(last=False)
                del self._stages[gone][gone_key]
                self._bytes -= old

    def _touch(self, stage: str, key: Hashable) -> None:
        """Make an entry the most recently used (the lock is held)."""
        self._entries.move_to_end((stage, key))
        self._stages[stage].move_to_end(key)

    def replace(self, stage: str, key: Hashable, value: object, size: int = 0) -> None:
        """Swap a stored result for an equal one (a view that shares memory); no count."""
        full = (stage, key)
        with self._lock:
            old = self._entries.get(full)
            if old is None:
                return
            self._bytes += size - old[1]
            self._entries[full] = (value, size)

    def entries(self, stage: str) -> list[tuple[Hashable, Any]]:
        """The (key, value) pairs of one stage, most recent last."""
        with self._lock:
            return [(k, self._entries[(stage, k)][0]) for k in self._stages.get(stage, ())]

    def record(self, stage: str, hit: bool) -> None:
        """Count a hit or miss of a stage whose results live elsewhere (a fit)."""
        with self._lock:
            table = self._hits if hit else self._misses
            table[stage] = table.get(stage, 0) + 1

    def count(self, stage: str) -> StageCount:
        """Hits and misses of ``stage``."""
        with self._lock:
            return StageCount(self._hits.get(stage, 0), self._misses.get(stage, 0))

    def counts(self) -> dict[str, StageCount]:
        """Hits and misses of every stage seen."""
        with self._lock:
            stages = sorted(set(self._hits) | set(self._misses))
            return {s: StageCount(self._hits.get(s, 0), self._misses.get(s, 0)) for s in stages}

    def reset_counts(self) -> None:
        """Set every counter back to zero (the entries stay)."""
        with self._lock:
            self._hits.clear()
            self._misses.clear()

    @property
    def size_bytes(self) -> int:
        """The summed sizes of the stored entries."""
        with self._lock:
            return self._bytes

    def __len__(self) -> int:
        with self._lock:
            return len(self._entries)
