"""Passes over the rows on several cores: the rows cut into ranges, one thread each.

A pass over the rows of a GLM is a few matrix products per block of rows and,
between them, element-wise work (the link's exponentials and logarithms)
that runs on one core whatever BLAS does.  Left to BLAS alone, the products
of a block are split over its own threads, block after block, and those
threads wait for each other by spinning: on a machine whose cores are busy
with other work, the pass can take several times longer than on one core.

Here the rows are cut into contiguous ranges and each range is summed by a
thread of its own, BLAS on one thread inside (through threadpoolctl, which
sets the thread count of whichever BLAS numpy loaded); the sums of the ranges
are then added.  numpy lets go of the interpreter lock in its products and
element-wise loops, so the ranges run at once.  The number of ranges is the
number of threads BLAS itself was set to use (``OPENBLAS_NUM_THREADS`` and
the like, by default the processor count), so a user who limits BLAS limits
the passes too.  The sums are those of one range up to the order of the
additions.
"""

from __future__ import annotations

import functools
import os
import threading
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from typing import TypeVar

from threadpoolctl import ThreadpoolController

__all__ = ["MIN_RANGE_ROWS", "in_ranges", "row_ranges", "threads_for"]

T = TypeVar("T")

#: Fewest rows a range is given: below this a thread's start and the adding
#: of the ranges' sums cost more than they save (common practice for
#: splitting work over threads; no published figure).
MIN_RANGE_ROWS = 65536


@functools.cache
def _controller() -> ThreadpoolController:
    # The libraries loaded into the process, found once.
    return ThreadpoolController()


def _blas_threads() -> int:
    infos = [lib for lib in _controller().info() if lib["user_api"] == "blas"]
    return max((int(lib["num_threads"]) for lib in infos), default=1)


def _cpus() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        return os.cpu_count() or 1


class _OneThreadBlas:
    """BLAS held to one thread while any pass runs in ranges.

    The thread count of BLAS belongs to the whole process: the first pass to
    start sets it to one and the last to end puts back what it was, so that
    passes running at once (the window's analysis and a check of the
    diagram, say) never restore it under each other.
    """

    def __init__(self) -> None:
        self._lock = threading.Lock()
        self._users = 0
        self._limit: object | None = None

    @contextmanager
    def held(self) -> Iterator[None]:
        with self._lock:
            if self._users == 0:
                self._limit = _controller().limit(limits=1, user_api="blas")
            self._users += 1
        try:
            yield
        finally:
            with self._lock:
                self._users -= 1
                if self._users == 0 and self._limit is not None:
                    self._limit.restore_original_limits()  # type: ignore[attr-defined]
                    self._limit = None


_ONE_THREAD = _OneThreadBlas()


def threads_for(n: int) -> int:
    """How many ranges a pass over ``n`` rows is cut into: the threads BLAS
    was set to use, at most the processors this process may run on, and no
    range under `MIN_RANGE_ROWS` rows."""
    if n < 2 * MIN_RANGE_ROWS:
        return 1
    return max(1, min(_blas_threads(), _cpus(), n // MIN_RANGE_ROWS))


def row_ranges(n: int, parts: int) -> list[tuple[int, int]]:
    """``parts`` contiguous ranges (start, stop) covering rows 0 .. n − 1.

    >>> row_ranges(10, 3)
    [(0, 3), (3, 6), (6, 10)]
    """
    cuts = [n * k // parts for k in range(parts + 1)]
    return [(cuts[k], cuts[k + 1]) for k in range(parts)]


def in_ranges(n: int, work: Callable[[int, int], T], *, parts: int | None = None) -> list[T]:
    """``work(start, stop)`` for each range of rows, on threads of their own
    when there are several, BLAS on one thread meanwhile; the results in the
    ranges' order (the caller adds them).  An exception raised by any range
    is raised here once every range has ended."""
    count = threads_for(n) if parts is None else parts
    ranges = row_ranges(n, max(1, count))
    if len(ranges) == 1:
        return [work(0, n)]
    results: dict[int, T] = {}
    errors: list[BaseException] = []

    def run(k: int) -> None:
        try:
            results[k] = work(*ranges[k])
        except BaseException as error:  # handed to the caller below
            errors.append(error)

    with _ONE_THREAD.held():
        threads = [threading.Thread(target=run, args=(k,)) for k in range(1, len(ranges))]
        for thread in threads:
            thread.start()
        run(0)
        for thread in threads:
            thread.join()
    if errors:
        raise errors[0]
    return [results[k] for k in range(len(ranges))]
