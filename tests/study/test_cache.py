"""The study cache: least-recently-used eviction, counters, one lock."""

from __future__ import annotations

import threading

import numpy as np

from covariscope.study.cache import StageCount, StudyCache


def test_counts_hits_and_misses_per_stage():
    cache = StudyCache()
    assert cache.get("a", 1, lambda: "one") == "one"
    assert cache.get("a", 1, lambda: "other") == "one"
    cache.get("b", 1, lambda: 2)
    assert cache.counts() == {"a": StageCount(1, 1), "b": StageCount(0, 1)}
    cache.reset_counts()
    assert cache.count("a") == StageCount(0, 0)
    assert len(cache) == 2


def test_least_recently_used_goes_first_when_memory_is_full():
    cache = StudyCache(max_bytes=3 * 800)
    for key in range(3):
        cache.get("v", key, lambda: np.zeros(100))  # 800 bytes each
    cache.get("v", 0, lambda: None)  # 0 is now the most recent
    cache.get("v", 3, lambda: np.zeros(100))  # evicts 1, the least recent
    assert [k for k, _ in cache.entries("v")] == [2, 0, 3]  # 1 is gone, most recent last
    assert cache.size_bytes <= 3 * 800


def test_entry_bound():
    cache = StudyCache(max_entries=5)
    for key in range(20):
        cache.get("k", key, lambda k=key: k)
    assert len(cache) == 5
    assert [k for k, _ in cache.entries("k")] == [15, 16, 17, 18, 19]


def test_many_threads_one_cache():
    cache = StudyCache(max_entries=50)
    errors: list[BaseException] = []

    def hammer(seed: int) -> None:
        rng = np.random.default_rng(seed)
        try:
            for key in rng.integers(0, 80, size=2000):
                assert cache.get("sq", int(key), lambda k=int(key): k * k) == int(key) ** 2
        except BaseException as exc:  # reported below
            errors.append(exc)

    threads = [threading.Thread(target=hammer, args=(s,)) for s in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert errors == []
    c = cache.count("sq")
    assert c.hits + c.misses == 8000
    assert len(cache) <= 50


def test_get_many_computes_only_absent_items_in_one_call():
    cache = StudyCache()
    calls: list[list[int]] = []

    def squares(items: list[int]) -> dict[int, int]:
        calls.append(items)
        return {i: i * i for i in items if i != 5}  # 5 has no result

    assert cache.get_many("sq", {2: ("k", 2), 3: ("k", 3)}, squares) == {2: 4, 3: 9}
    assert cache.get_many("sq", {3: ("k", 3), 4: ("k", 4), 5: ("k", 5)}, squares) == {3: 9, 4: 16}
    assert calls == [[2, 3], [4, 5]]
    assert cache.count("sq") == StageCount(hits=1, misses=4)
    assert cache.get("sq", ("k", 4), lambda: -1) == 16  # the same entries as get's


def test_a_stage_s_entries_keep_the_cache_s_recency_order_through_hits_and_evictions():
    # Reference: the whole cache's recency order (a plain list, most recent
    # last), filtered to the stage, after random stores, hits and evictions.
    import random

    rng = random.Random(5)
    cache = StudyCache(max_entries=12)
    order: list[tuple[str, int]] = []
    for _ in range(400):
        stage, key = rng.choice("abc"), rng.randrange(10)
        if rng.random() < 0.3:
            cache.get_many(stage, {key: key}, lambda missing: {k: k * 10 for k in missing})
        else:
            cache.get(stage, key, lambda key=key: key * 10)
        if (stage, key) in order:
            order.remove((stage, key))
        order.append((stage, key))
        del order[: max(len(order) - 12, 0)]
        for s in "abc":
            assert cache.entries(s) == [(k, k * 10) for t, k in order if t == s]
