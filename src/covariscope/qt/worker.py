"""Analysis and data loading off the GUI thread.

:class:`AnalysisRunner` re-runs the study after each edit, debounced, on
one worker thread (at most one analysis at a time), through the study
cache the runner owns for the window's life: the pipeline recomputes only
the stages an edit changed.  Each request gets a new *generation* number;
a new request cancels the running one through its cancel callback (checked
between stages, columns and models), and a result whose generation is no
longer current is discarded (``discarded`` is emitted), never shown.
:class:`LoadRunner` loads a data file in the background with progress and
cancellation.

The worker threads share the interpreter lock with the GUI thread, so a
single call that holds it stalls the window however short the GUI's own
work is: the row functions of ``analysis`` use calls that let it go (see
:mod:`covariscope.analysis.fitting_common`).  The workers run at the GUI
thread's own priority, on purpose: a worker set 5 nice steps lower (as
before) was preempted by the machine's other work *while it held the lock*,
and the GUI thread waited for the lock as long as the worker waited for a
CPU (measured in benchmarks/gui_storm.py: the GUI thread blocked 94 ms while
the lock's holder waited 73 ms for a CPU).  In benchmarks/bench_priority.py
a thread standing in for the GUI thread beside the study pipeline, at load
4.4-7 on two cores, was late by 50 ms or more 99 times with the worker 5
steps lower against 38 times at the same priority (nine alternating pairs
of 15-25 s runs), and the 99th percentile of its lateness was lower at the
same priority in seven of the nine pairs.  The
interpreter's switch interval stays at its 5 ms default: at 1 ms the longest
wait of a thread sharing the lock with a 200,000-row analysis was no
shorter (216 ms against 106–208 ms, on a loaded machine: those waits were
the machine's, not the lock's) and the analysis took longer (41.5 s
against 27.6–39.3 s for the same 30 edits).
"""

from __future__ import annotations

import copy
import math
import threading
import time
import traceback
from collections.abc import Callable
from typing import Any

from PySide6.QtCore import QObject, QRunnable, QThreadPool, QTimer, Signal

from covariscope.errors import CovariscopeError
from covariscope.model.project import Project
from covariscope.study.cache import StudyCache

__all__ = ["AnalysisRunner", "LoadRunner", "snapshot", "study_run"]


def snapshot(project: Project) -> Project:
    """A copy the worker may read while the user keeps editing."""
    return Project(
        project.diagram.copy(), project.data, copy.deepcopy(project.analysis), project.path
    )


def study_run(
    cache: StudyCache,
) -> Callable[[Project, Any, Callable[..., Any], Callable[..., Any]], Any]:
    """The default analysis: the study pipeline through ``cache``."""

    def run(
        project: Project, table: Any, progress: Callable[..., Any], cancel: Callable[..., Any]
    ) -> Any:
        from covariscope.data.sources.batched import BatchSource
        from covariscope.study import run_study

        if isinstance(table, BatchSource):  # rows read where they lie (DuckDB, Dask)
            return run_study(project, source=table, progress=progress, cancel=cancel, cache=cache)
        return run_study(project, table=table, progress=progress, cancel=cancel, cache=cache)

    return run


class _Bridge(QObject):
    """Lives in the GUI thread; signals emitted from the pool are queued to it."""

    progress = Signal(int, float, str)
    done = Signal(int, object)
    error = Signal(int, str)


class _Task(QRunnable):
    def __init__(
        self,
        fn: Callable[[], Any],
        generation: int,
        bridge: _Bridge,
        token: _Token,
    ) -> None:
        super().__init__()
        self.fn, self.generation, self.bridge, self.token = fn, generation, bridge, token
        self.setAutoDelete(True)

    def run(self) -> None:
        try:
            result = self.fn()
        except Exception as exc:
            if self.token():
                # cancelled: whatever it raised on the way out is of no interest
                self.bridge.error.emit(self.generation, "cancelled")
                return
            self._report(exc)
        else:
            self.bridge.done.emit(self.generation, result)

    def _report(self, exc: Exception) -> None:
        if isinstance(exc, CovariscopeError):
            self.bridge.error.emit(self.generation, str(exc))
            return
        # a bug: say so plainly and keep the window alive
        traceback.print_exception(exc)
        self.bridge.error.emit(
            self.generation,
            f"The analysis stopped on an internal error ({type(exc).__name__}: {exc}).",
        )


class _Token:
    def __init__(self) -> None:
        self._event = threading.Event()

    def cancel(self) -> None:
        self._event.set()

    def __call__(self) -> bool:
        return self._event.is_set()


#: digits dropped: what stays names the stage of a progress line ("Fitting model of")
_NO_DIGITS = str.maketrans("", "", "0123456789")


class _Runner(QObject):
    """Shared machinery: generations, cancel tokens, one private pool.

    ``progress_every`` (seconds) thins the progress lines a job sends to the
    GUI thread: a line within that time of the last one sent, and of the
    same stage (the same words but for the numbers), is dropped, so a
    thousand passes over the rows cost the GUI thread a few updates a second.
    """

    progress_every = 0.0
    #: the clock ``progress_every`` reads (seconds)
    clock: Callable[[], float] = staticmethod(time.monotonic)

    def __init__(self, parent: QObject | None = None, threads: int = 2) -> None:
        super().__init__(parent)
        self.pool = QThreadPool(self)
        self.pool.setMaxThreadCount(threads)
        self.generation = 0
        self._token: _Token | None = None
        self._running = False
        # parentless and held by every task, so a late signal from a worker
        # never reaches a deleted object
        self._bridge = _Bridge()
        self._bridge.progress.connect(self._on_progress)
        self._bridge.done.connect(self._on_done)
        self._bridge.error.connect(self._on_error)

    @property
    def running(self) -> bool:
        return self._running

    def cancel(self) -> None:
        """Cancel the running job; its result will be discarded."""
        if self._token is not None:
            self._token.cancel()
        self.generation += 1
        self._running = False

    def _start(self, fn: Callable[[Callable[..., Any], Callable[..., Any]], Any]) -> int:
        if self._token is not None:
            self._token.cancel()
        self.generation += 1
        generation = self.generation
        token = _Token()
        self._token = token
        bridge = self._bridge

        every, clock = self.progress_every, self.clock
        sent: list[Any] = [-math.inf, None]  # when the last line was sent, and its stage

        def progress(fraction: float, text: str = "") -> None:
            if every:
                now, stage = clock(), str(text).translate(_NO_DIGITS)
                if now - sent[0] < every and stage == sent[1]:
                    return
                sent[:] = [now, stage]
            bridge.progress.emit(generation, float(fraction), str(text))

        self._running = True
        task = _Task(lambda: fn(progress, token), generation, bridge, token)
        self.pool.start(task)
        return generation

    def shutdown(self, timeout_ms: int = 10_000) -> bool:
        """Cancel and wait for the pool (on close, and in tests)."""
        self.cancel()
        return self.pool.waitForDone(timeout_ms)

    # overridden
    def _on_progress(self, generation: int, fraction: float, text: str) -> None: ...
    def _on_done(self, generation: int, result: object) -> None: ...
    def _on_error(self, generation: int, message: str) -> None: ...


class AnalysisRunner(_Runner):
    """Debounced, cancellable re-analysis of a project.

    Signals
    -------
    started(int) : a run of that generation began.
    progress(float, str) : of the current run only.
    finished(int, object) : the current run's StudyResult.
    failed(int, str) : the current run's error, in plain words.
    discarded(int) : a run finished after a newer request; its result was dropped.
    """

    started = Signal(int)
    progress = Signal(float, str)
    finished = Signal(int, object)
    failed = Signal(int, str)
    discarded = Signal(int)

    #: at most about 20 progress lines a second of one stage reach the window
    progress_every = 0.05

    def __init__(
        self,
        project_source: Callable[[], Project],
        *,
        run: Callable[[Project, Any, Callable[..., Any], Callable[..., Any]], Any] | None = None,
        debounce_ms: int = 250,
        parent: QObject | None = None,
        cache: StudyCache | None = None,
    ) -> None:
        # One thread: a cancelled run finishes its current step before the next starts.
        super().__init__(parent, threads=1)
        self.project_source = project_source
        #: The stage results of every run so far (the window's study cache).
        self.cache = cache if cache is not None else StudyCache()
        self.run_fn = run or study_run(self.cache)
        self.table: Any = None
        self.result: Any = None
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(debounce_ms)
        self._timer.timeout.connect(self.run_now)

    def request(self) -> None:
        """Ask for a fresh analysis: the running one is cancelled at once
        (its result will not be shown) and a new one starts after the pause."""
        if self._token is not None and self._running:
            self._token.cancel()
            self.generation += 1  # whatever is in flight is now stale
            self._running = False
        self._timer.start()

    def run_now(self) -> int:
        self._timer.stop()
        project = snapshot(self.project_source())
        table = self.table
        run_fn = self.run_fn
        generation = self._start(lambda progress, cancel: run_fn(project, table, progress, cancel))
        self.started.emit(generation)
        return generation

    def shutdown(self, timeout_ms: int = 10_000) -> bool:
        self._timer.stop()
        return super().shutdown(timeout_ms)

    @property
    def pending(self) -> bool:
        return self._timer.isActive()

    def _on_progress(self, generation: int, fraction: float, text: str) -> None:
        if generation == self.generation:
            self.progress.emit(fraction, text)

    def _on_done(self, generation: int, result: object) -> None:
        if generation != self.generation:
            self.discarded.emit(generation)
            return
        self._running = False
        self.result = result
        self.finished.emit(generation, result)

    def _on_error(self, generation: int, message: str) -> None:
        if generation != self.generation:
            self.discarded.emit(generation)
            return
        self._running = False
        self.failed.emit(generation, message)


def _default_load(path: str, progress: Callable[..., Any], cancel: Callable[..., Any]) -> Any:
    from covariscope.data.loading import load_table

    return load_table(path, progress=lambda f: progress(f, ""), cancel=cancel)


class LoadRunner(_Runner):
    """Loads one data file at a time in the background."""

    progress = Signal(float)
    loaded = Signal(object)
    failed = Signal(str)

    def __init__(
        self, *, load: Callable[..., Any] | None = None, parent: QObject | None = None
    ) -> None:
        super().__init__(parent)
        self.load_fn = load or _default_load

    def load(self, path: str) -> int:
        load_fn = self.load_fn
        return self._start(lambda progress, cancel: load_fn(path, progress, cancel))

    def _on_progress(self, generation: int, fraction: float, text: str) -> None:
        if generation == self.generation:
            self.progress.emit(fraction)

    def _on_done(self, generation: int, result: object) -> None:
        if generation == self.generation:
            self._running = False
            self.loaded.emit(result)

    def _on_error(self, generation: int, message: str) -> None:
        if generation == self.generation:
            self._running = False
            self.failed.emit(message)
