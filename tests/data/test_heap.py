"""Freed heap memory goes back to the system after a large step (glibc only)."""

from __future__ import annotations

import ctypes.util
import os
import sys
from pathlib import Path

import numpy as np
import pytest

from covariscope.data.heap import prefer_small_pages, release_freed_memory


def _resident() -> int:
    return int(Path("/proc/self/statm").read_text().split()[1])


@pytest.mark.skipif(
    not sys.platform.startswith("linux") or ctypes.util.find_library("c") is None,
    reason="malloc_trim is glibc's",
)
def test_freed_small_blocks_are_handed_back() -> None:
    # Many blocks below malloc's mapping threshold, freed in an order that
    # leaves the heap's top in use: malloc keeps their pages until trimmed.
    blocks = [np.ones(12_000) for _ in range(1200)]  # ~115 MB of 96 kB blocks
    keep = blocks[-1]
    del blocks[:-1]
    before = _resident()
    assert release_freed_memory()
    after = _resident()
    assert (before - after) * os.sysconf("SC_PAGE_SIZE") > 60e6
    assert keep.sum() == 12_000


def test_numpy_stops_advising_huge_pages() -> None:
    import importlib

    module = importlib.import_module("numpy._core.multiarray")
    before = module._get_madvise_hugepage()
    try:
        assert prefer_small_pages()
        assert module._get_madvise_hugepage() is False
    finally:
        module._set_madvise_hugepage(before)


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="malloc_trim is glibc's")
def test_trimming_runs_no_child_process(monkeypatch) -> None:
    # It runs after every analysis step that frees memory (twice per edit):
    # finding the C library must not start `ldconfig` (ctypes.util.find_library does).
    import subprocess

    def refuse(*args: object, **kwargs: object) -> None:
        raise AssertionError("a child process was started")

    monkeypatch.setattr(subprocess.Popen, "__init__", refuse)
    assert isinstance(release_freed_memory(), bool)
