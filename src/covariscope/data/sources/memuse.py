"""How much memory this process holds, for the status line."""

from __future__ import annotations

import sys
from pathlib import Path

__all__ = ["available_memory", "process_limit", "resident_bytes", "resident_text"]


def resident_bytes() -> int | None:
    """Resident memory of this process now (Linux), else its peak, else None."""
    statm = Path("/proc/self/statm")
    if statm.exists():
        import os

        pages = int(statm.read_text().split()[1])
        return pages * os.sysconf("SC_PAGE_SIZE")
    try:
        import resource
    except ImportError:
        return None
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return int(peak if sys.platform == "darwin" else peak * 1024)


def resident_text() -> str:
    """``"312 MB in memory"``, or an empty string when unknown."""
    size = resident_bytes()
    return "" if size is None else f"{size / 2**20:,.0f} MB in memory"


def available_memory() -> int | None:
    """Memory available to new work (Linux ``MemAvailable``), or None when unknown."""
    meminfo = Path("/proc/meminfo")
    if not meminfo.exists():
        return None
    for line in meminfo.read_text().splitlines():
        if line.startswith("MemAvailable:"):
            return int(line.split()[1]) * 1024
    return None


def process_limit() -> int | None:
    """The smaller of this process's address-space and data limits, in bytes (None: no limit)."""
    try:
        import resource
    except ImportError:
        return None
    limits = []
    for name in ("RLIMIT_AS", "RLIMIT_DATA"):
        which = getattr(resource, name, None)
        if which is None:
            continue
        soft = resource.getrlimit(which)[0]
        if soft != resource.RLIM_INFINITY and soft > 0:
            limits.append(int(soft))
    return min(limits) if limits else None
