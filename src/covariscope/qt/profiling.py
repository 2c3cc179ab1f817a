"""Column profiles of a file read where it lies, one column at a time, off the GUI thread.

A large file's profiles take a pass over every row per column (exact counts
of missing values and levels), so the data panel fills in column by column:
each profile is handed to the GUI thread as it arrives, with the progress
bar moving and the Cancel button stopping the pass after the column in hand.
"""

from __future__ import annotations

import queue
from collections.abc import Mapping
from typing import Any

from PySide6.QtCore import QObject, Signal

from covariscope.qt.worker import _Runner

__all__ = ["ProfileRunner"]


class ProfileRunner(_Runner):
    """Profiles columns of a data source in the background.

    Signals
    -------
    profiled(dict) : column → profile, for the columns finished since the last signal.
    progress(float, str) : share of the columns done and the column in hand.
    finished(int) : how many columns were profiled (the run was not cancelled).
    failed(str) : the problem, in plain words.
    """

    profiled = Signal(dict)
    progress = Signal(float, str)
    finished = Signal(int)
    failed = Signal(str)

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent, threads=1)
        self._arrived: queue.SimpleQueue[tuple[int, str, Any]] = queue.SimpleQueue()

    def profile(
        self,
        source: Any,
        columns: tuple[str, ...],
        types: Mapping[str, str],
        references: Mapping[str, object],
    ) -> int:
        """Start profiling ``columns`` of ``source`` with the user's types and reference levels."""
        arrived = self._arrived
        generation = self.generation + 1  # the one _start is about to give

        def work(progress: Any, cancel: Any) -> int:
            done = 0
            for i, column in enumerate(columns):
                if cancel():
                    break
                progress(i / max(len(columns), 1), column)
                found = source.profiles((column,), types, references)
                arrived.put((generation, column, found[column]))
                done += 1
                progress((i + 1) / max(len(columns), 1), column)
            return done

        return self._start(work)

    def _drain(self, generation: int) -> None:
        found: dict[str, Any] = {}
        while True:
            try:
                made, column, profile = self._arrived.get_nowait()
            except queue.Empty:
                break
            if made == generation:
                found[column] = profile
        if found:
            self.profiled.emit(found)

    def _on_progress(self, generation: int, fraction: float, text: str) -> None:
        if generation == self.generation:
            self._drain(generation)
            self.progress.emit(fraction, text)

    def _on_done(self, generation: int, result: object) -> None:
        if generation == self.generation:
            self._drain(generation)
            self._running = False
            self.finished.emit(int(result))  # type: ignore[call-overload]

    def _on_error(self, generation: int, message: str) -> None:
        if generation == self.generation:
            self._running = False
            self.failed.emit(message)
