"""How long the GUI thread goes without serving its events, and whether it
ever does data work (issue 9: "the GUI thread never does data work").

Two plain parts, testable without a window, and a thin Qt one:

- :class:`StallLog` is fed the times of a heartbeat; it keeps the longest
  gap between two beats and every gap well past the beat (a *stall*).
- :class:`DataWorkWatch` is a profile hook for one thread: it counts the
  calls that enter the modules that read rows (:data:`DATA_WORK`: ``data``,
  the study's stages and the fitting modules of ``analysis``) from outside
  them, by function.  Reading a result is not data work: a method of a
  frozen dataclass (a result, a loaded table, a profile) is not counted.
- :class:`StallMeter` beats a QTimer every 10 ms on the GUI thread into a
  :class:`StallLog` and, when asked, installs the watch on that thread.

A stall says *that* the event loop stood still; the watch says *whether*
data work was the cause, which a test can assert without any clock.
"""

from __future__ import annotations

import sys
import threading
import time
from collections import Counter
from dataclasses import dataclass, field
from types import FrameType
from typing import Any

from PySide6.QtCore import QObject, Qt, QTimer

__all__ = ["DATA_WORK", "DataWorkWatch", "StallLog", "StallMeter"]

#: Modules whose functions read or summarise rows: none may run on the GUI thread.
DATA_WORK = (
    "covariscope.data.",
    "covariscope.study.cache",
    "covariscope.study.checks",
    "covariscope.study.decide",
    "covariscope.study.degenerate",
    "covariscope.study.pipeline",
    "covariscope.study.prepare",
    "covariscope.study.rows_read",
    "covariscope.study.source",
    "covariscope.study.whole_source",
    "covariscope.analysis.collinearity",
    "covariscope.analysis.column_fit",
    "covariscope.analysis.contrasts",
    "covariscope.analysis.design",
    "covariscope.analysis.evidence",
    "covariscope.analysis.fitting",
    "covariscope.analysis.glm",
    "covariscope.analysis.joint_region",
    "covariscope.analysis.linear",
    "covariscope.analysis.modification",
    "covariscope.analysis.passes",
    "covariscope.analysis.risk_sets",
    "covariscope.analysis.rows",
    "covariscope.analysis.spline",
    "covariscope.analysis.splines",
    "covariscope.analysis.survival",
    "covariscope.analysis.claim_fits",
    "covariscope.analysis.claim_tests",
)
#: Modules among them that read no rows (the process's own memory use).
NOT_WORK = ("covariscope.data.sources.memuse",)


@dataclass
class StallLog:
    """The gaps between heartbeats of an event loop.

    Parameters
    ----------
    beat : seconds between two beats when the loop is free
    stall : a gap at least this long is kept in :attr:`stalls`

    Examples
    --------
    >>> log = StallLog(beat=0.01, stall=0.05)
    >>> for t in (0.0, 0.01, 0.02, 0.2, 0.21):
    ...     log.tick(t)
    >>> round(log.longest, 3), log.beats, [(round(a, 2), round(g, 2)) for a, g in log.stalls]
    (0.18, 5, [(0.02, 0.18)])
    >>> log.over(0.1), log.over(0.5)
    (1, 0)
    """

    beat: float = 0.010
    stall: float = 0.050
    longest: float = 0.0
    beats: int = 0
    #: (when the loop stopped, for how long), for every gap of ``stall`` or more
    stalls: list[tuple[float, float]] = field(default_factory=list)
    #: the time of the last beat (None before the first)
    last: float | None = None

    def tick(self, now: float) -> None:
        """A heartbeat at time ``now`` (seconds, any fixed origin)."""
        if self.last is not None:
            gap = now - self.last
            self.longest = max(self.longest, gap)
            if gap >= self.stall:
                self.stalls.append((self.last, gap))
        self.last = now
        self.beats += 1

    def over(self, limit: float) -> int:
        """How many gaps lasted ``limit`` seconds or more (``limit`` ≥ ``stall``)."""
        return sum(1 for _, gap in self.stalls if gap >= limit)

    def restart(self) -> None:
        """Forget every beat (the next beat starts a new log)."""
        self.longest, self.beats, self.stalls, self.last = 0.0, 0, [], None


@dataclass
class DataWorkWatch:
    """Counts entries into data work on the thread it is installed on.

    An *entry* is a call of a function of a :data:`DATA_WORK` module from
    code outside them; the calls it makes in turn are not counted again.
    Install it with :meth:`install` on the thread to watch (``sys.setprofile``
    acts on the calling thread only) and take it off with :meth:`remove`.

    Examples
    --------
    >>> watch = DataWorkWatch(prefixes=("json",))
    >>> import json
    >>> watch.install(); json.dumps([1]); json.loads("[2]"); watch.remove()
    '[1]'
    [2]
    >>> watch.total, sorted(watch.entries)
    (2, ['json.dumps', 'json.loads'])
    """

    prefixes: tuple[str, ...] = DATA_WORK
    exceptions: tuple[str, ...] = NOT_WORK
    entries: Counter[str] = field(default_factory=Counter)
    _depth: int = 0
    _thread: int | None = None
    _before: Any = None

    @property
    def total(self) -> int:
        """Entries into data work counted so far."""
        return sum(self.entries.values())

    def _inside(self, frame: FrameType) -> bool:
        name = frame.f_globals.get("__name__", "")
        return (
            isinstance(name, str)
            and name.startswith(self.prefixes)
            and not name.startswith(self.exceptions)
        )

    @staticmethod
    def _reads_result(frame: FrameType) -> bool:
        """A method of a frozen dataclass: reading a result, not making one."""
        if "." not in frame.f_code.co_qualname:
            return False
        params = getattr(type(frame.f_locals.get("self")), "__dataclass_params__", None)
        return bool(params is not None and params.frozen)

    def hook(self, frame: FrameType, event: str, _arg: Any) -> None:
        """The profile function (``sys.setprofile``)."""
        if event == "call" and self._inside(frame):
            if self._depth == 0 and not self._reads_result(frame):
                name = frame.f_globals.get("__name__", "")
                self.entries[f"{name}.{frame.f_code.co_qualname}"] += 1
            self._depth += 1
        elif event == "return" and self._depth and self._inside(frame):
            self._depth -= 1

    def install(self) -> None:
        """Start counting on the calling thread (in place of its profile function)."""
        self._thread = threading.get_ident()
        self._depth = 0
        self._before = sys.getprofile()
        sys.setprofile(self.hook)

    def remove(self) -> None:
        """Stop counting and give the thread back the profile function it had
        (call it on the thread it was installed on)."""
        if self._thread == threading.get_ident():
            sys.setprofile(self._before)
        self._thread, self._before = None, None


class StallMeter(QObject):
    """A heartbeat on the GUI thread: :attr:`log` holds the longest gap
    between beats; :attr:`watch`, when installed, counts data work there."""

    def __init__(
        self, parent: QObject | None = None, *, beat_ms: int = 10, watch: bool = False
    ) -> None:
        super().__init__(parent)
        self.log = StallLog(beat=beat_ms / 1000.0)
        self.watch = DataWorkWatch() if watch else None
        self._timer = QTimer(self)
        self._timer.setTimerType(Qt.TimerType.PreciseTimer)
        self._timer.setInterval(beat_ms)
        self._timer.timeout.connect(self._beat)

    def _beat(self) -> None:
        self.log.tick(time.perf_counter())

    def start(self) -> None:
        """Forget earlier beats and start beating (and watching)."""
        self.log.restart()
        self._beat()
        self._timer.start()
        if self.watch is not None:
            self.watch.install()

    def stop(self) -> None:
        """Stop beating (and watching); the last gap counts."""
        self._timer.stop()
        self._beat()
        if self.watch is not None:
            self.watch.remove()
