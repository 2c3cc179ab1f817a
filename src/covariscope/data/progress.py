"""Progress reporting and cancellation for long reads.

A reader reports its own fraction done; :class:`Steps` maps it onto the
share of the whole load that the step owns, keeps the reported values
non-decreasing (chunk sizes vary, buffered file positions jump) and checks
for cancellation at every report.
"""

from __future__ import annotations

from collections.abc import Callable

from covariscope.errors import DataError

__all__ = ["LoadCancelledError", "Steps"]


class LoadCancelledError(DataError):
    """The user cancelled a load; nothing was kept."""

    def __init__(self) -> None:
        super().__init__("Loading cancelled: the data set was not loaded.")


class Steps:
    """Map per-step fractions onto one monotone 0..1 progress callback.

    Parameters
    ----------
    progress : callable or None
        Receives a float in [0, 1]; called with non-decreasing values.
    cancel : callable or None
        Returns True when the user asked to stop.

    Examples
    --------
    >>> seen = []
    >>> steps = Steps(seen.append, None)
    >>> steps.begin(0.0, 0.5); steps.report(0.5); steps.begin(0.5, 1.0); steps.report(1.0)
    >>> seen
    [0.0, 0.25, 0.5, 1.0]
    """

    def __init__(
        self,
        progress: Callable[[float], None] | None,
        cancel: Callable[[], bool] | None,
    ) -> None:
        self._progress = progress
        self._cancel = cancel
        self._low = 0.0
        self._high = 1.0
        self._last = -1.0

    def begin(self, low: float, high: float) -> None:
        """Start a step that owns the share ``low..high`` of the load."""
        self._low, self._high = low, high
        self.report(0.0)

    def report(self, fraction: float) -> None:
        """Report ``fraction`` (0..1) of the current step; raise if cancelled."""
        self.check_cancel()
        fraction = min(max(fraction, 0.0), 1.0)
        value = self._low + (self._high - self._low) * fraction
        if value > self._last and self._progress is not None:
            self._progress(value)
        self._last = max(self._last, value)

    def check_cancel(self) -> None:
        """Raise :class:`LoadCancelledError` when the user asked to stop."""
        if self._cancel is not None and self._cancel():
            raise LoadCancelledError()

    def finish(self) -> None:
        """Report completion (exactly 1.0) once."""
        if self._last < 1.0 and self._progress is not None:
            self._progress(1.0)
        self._last = 1.0
