"""Memory pages under a large analysis: hand freed ones back, ask for small ones.

Reading a text file in chunks, and coding a design column by column, leaves
their temporaries' memory free inside the heap, where glibc's ``malloc``
keeps it (blocks below its mapping threshold, which rises as large blocks
are freed, are never returned on their own while later blocks sit above
them).  :func:`release_freed_memory` returns those pages (``malloc_trim(3)``),
so that the process's peak is the data and its design, not the data twice.

It is a no-op (returning False) where the C library is not glibc.

numpy advises the kernel to back every new array of 4 MiB or more with
huge pages (``madvise(MADV_HUGEPAGE)``).  Where the kernel answers that
advice by compacting memory on the spot (transparent huge pages with
``defrag=madvise``, a common default), filling a fresh 240 MB design took
0.63 s of kernel time against 0.13 s with ordinary pages, and a ``check`` of a
million rows spent about 0.9 s more in the kernel, with no gain in user time
(measured on the 1e6-row study of benchmarks/bench_edits.py).
:func:`prefer_small_pages` turns the advice off for the process.
"""

from __future__ import annotations

import ctypes
import importlib
import sys

__all__ = ["prefer_small_pages", "release_freed_memory"]


def _glibc() -> ctypes.CDLL | None:
    """The process's C library when it is glibc (the only one with ``malloc_trim``)."""
    if not sys.platform.startswith("linux"):
        return None
    try:
        # The symbols the process has loaded (glibc's among them): no search of
        # the library path, which ``ctypes.util.find_library`` makes by running
        # ``ldconfig`` in a child process (5-15 ms, on every call).
        libc = ctypes.CDLL(None)
        libc.malloc_trim.argtypes = [ctypes.c_size_t]
    except (OSError, AttributeError):
        return None
    return libc


def release_freed_memory() -> bool:
    """Return the heap's free pages to the system; whether the C library could.

    Cheap (it walks the heap's free list, a millisecond or so): meant after a
    step that freed large temporaries and before one that allocates its own.

    >>> isinstance(release_freed_memory(), bool)
    True
    """
    libc = _glibc()
    if libc is None:
        return False
    libc.malloc_trim(0)
    return True


def prefer_small_pages() -> bool:
    """Stop numpy advising huge pages for new large arrays; whether it could.

    For a process that runs one analysis and ends (the command line): see the
    module's note for what the advice costs where the kernel compacts memory
    to follow it.
    """
    for name in ("numpy._core.multiarray", "numpy.core.multiarray"):  # numpy 2, numpy 1
        try:
            module = importlib.import_module(name)
        except ImportError:
            continue
        setter = getattr(module, "_set_madvise_hugepage", None)
        if callable(setter):
            setter(False)
            return True
    return False
