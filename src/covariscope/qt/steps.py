"""Work of the GUI thread cut into steps, one per turn of the event loop.

Showing a new result touches every panel and the canvas: done in one slot,
that is 50–120 ms during which the window neither repaints nor answers (and
twice that while the analysis thread holds the interpreter lock half the
time).  :class:`StepChain` runs the same work as a list of short steps, each
in its own turn of the event loop, so input and painting get through
between them; starting the chain again drops the steps not yet run.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

from PySide6.QtCore import QObject, QTimer

__all__ = ["StepChain"]


class StepChain(QObject):
    """Runs steps one per turn of the event loop; a new :meth:`start` replaces the rest.

    Examples
    --------
    >>> from covariscope.qt.app import application
    >>> app = application()
    >>> done = []
    >>> chain = StepChain()
    >>> chain.start([lambda: done.append(1), lambda: done.append(2)])
    >>> done, chain.pending
    ([1], True)
    >>> chain.finish()
    >>> done, chain.pending
    ([1, 2], False)
    """

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._steps: list[Callable[[], object]] = []
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(0)
        self._timer.timeout.connect(self._next)

    @property
    def pending(self) -> bool:
        """Steps are still to run."""
        return bool(self._steps)

    def start(self, steps: Sequence[Callable[[], object]], *, now: bool = True) -> None:
        """Run the first step now (``now=False``: in the next turn) and the
        others in the turns after it."""
        self._steps = list(steps)
        if now:
            self._next()
        elif self._steps:
            self._timer.start()

    def finish(self) -> None:
        """Run every step still pending, now."""
        while self._steps:
            self._next()

    def stop(self) -> None:
        """Drop the steps not yet run."""
        self._steps = []
        self._timer.stop()

    def _next(self) -> None:
        if not self._steps:
            return
        step = self._steps.pop(0)
        if self._steps:
            self._timer.start()
        else:
            self._timer.stop()
        step()
