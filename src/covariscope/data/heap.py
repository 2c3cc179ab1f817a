"""Hand the C heap's free pages back to the system after a large step.

Reading a text file in chunks, and coding a design column by column, leaves
their temporaries' memory free inside the heap, where glibc's ``malloc``
keeps it (blocks below its mapping threshold, which rises as large blocks
are freed, are never returned on their own while later blocks sit above
them).  :func:`release_freed_memory` returns those pages (``malloc_trim(3)``),
so that the process's peak is the data and its design, not the data twice.

It is a no-op (returning False) where the C library is not glibc.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import sys

__all__ = ["release_freed_memory"]


def _glibc() -> ctypes.CDLL | None:
    """The process's C library when it is glibc (the only one with ``malloc_trim``)."""
    if not sys.platform.startswith("linux"):
        return None
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
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
