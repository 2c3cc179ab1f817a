"""Background analysis: a new edit cancels the running one and its stale
result is discarded, never shown as current."""

from __future__ import annotations

import sys
import threading

import pytest

from covariscope.model.diagram import Node
from covariscope.model.project import Project
from covariscope.qt.worker import AnalysisRunner, LoadRunner


class GatedRun:
    """A stand-in analysis that runs until cancelled or released."""

    def __init__(self) -> None:
        self.started: list[int] = []
        self.cancelled: list[int] = []
        self.release = threading.Event()

    def __call__(self, project, table, progress, cancel):
        n = len(project.diagram)
        self.started.append(n)
        progress(0.5, "halfway")
        while not self.release.wait(0.005):
            if cancel():
                self.cancelled.append(n)
                return ("cancelled run", n)  # a run may still return; it must be dropped
        return ("result", n)


@pytest.fixture
def runner(qapp):
    project = Project()
    project.diagram.add_node(Node("x", kind="exposure"))
    gate = GatedRun()
    r = AnalysisRunner(lambda: project, run=gate, debounce_ms=0)
    yield r, project, gate
    gate.release.set()
    assert r.shutdown()


def test_new_edit_cancels_and_discards(qtbot, runner):
    r, project, gate = runner
    shown = []
    r.finished.connect(lambda g, res: shown.append((g, res)))
    first = r.run_now()
    qtbot.waitUntil(lambda: gate.started == [1])
    project.diagram.add_node(Node("y", kind="outcome"))
    with qtbot.waitSignal(r.discarded, timeout=5000) as stale:
        r.request()
    assert stale.args == [first]
    assert gate.cancelled == [1]
    qtbot.waitUntil(lambda: gate.started == [1, 2])
    gate.release.set()
    qtbot.waitUntil(lambda: bool(shown), timeout=5000)
    assert shown == [(r.generation, ("result", 2))]
    assert r.result == ("result", 2)


def test_progress_only_from_the_current_run(qtbot, runner):
    r, _, gate = runner
    with qtbot.waitSignal(r.progress, timeout=5000) as seen:
        r.run_now()
    assert seen.args == [0.5, "halfway"]
    gate.release.set()
    qtbot.waitSignal(r.finished, timeout=5000).wait()


def test_progress_lines_of_one_stage_are_thinned(qtbot, qapp):
    # a stage's lines reach the window a few times a second, a new stage's
    # first line at once (a clock set by hand: no test reads the real one)
    project = Project()
    now = [100.0]

    def run(project, table, progress, cancel):
        for k in range(1, 6):
            progress(k / 10, f"Fitting model {k} of 5")
        progress(0.6, "Checking effect modification: model 1 of 3")
        now[0] += 1.0
        progress(0.7, "Checking effect modification: model 2 of 3")
        progress(0.8, "Checking effect modification: model 3 of 3")
        return "ok"

    r = AnalysisRunner(lambda: project, run=run, debounce_ms=0)
    r.clock = lambda: now[0]
    lines: list[str] = []
    r.progress.connect(lambda _f, text: lines.append(text))
    with qtbot.waitSignal(r.finished, timeout=5000):
        r.run_now()
    assert lines == [
        "Fitting model 1 of 5",
        "Checking effect modification: model 1 of 3",
        "Checking effect modification: model 2 of 3",
    ]
    assert r.shutdown()


def test_requests_are_debounced(qtbot, qapp):
    project = Project()
    calls = []
    r = AnalysisRunner(lambda: project, run=lambda *a: calls.append(1) or "ok", debounce_ms=30)
    with qtbot.waitSignal(r.finished, timeout=5000):
        for _ in range(5):
            r.request()
    assert calls == [1]
    assert r.shutdown()


def test_errors_come_back_in_words(qtbot, qapp):
    from covariscope.errors import DiagramError

    def refuse(*_):
        raise DiagramError("The diagram has no exposure.")

    r = AnalysisRunner(lambda: Project(), run=refuse, debounce_ms=0)
    with qtbot.waitSignal(r.failed, timeout=5000) as failed:
        r.run_now()
    assert failed.args[1] == "The diagram has no exposure."
    assert r.shutdown()


def test_load_can_be_cancelled(qtbot, qapp):
    from covariscope.errors import DataError

    started = threading.Event()

    def slow_load(path, progress, cancel):
        started.set()
        while not cancel():
            progress(0.1, "")
            threading.Event().wait(0.005)
        raise DataError("Loading cancelled.")

    loads = LoadRunner(load=slow_load)
    got = []
    loads.loaded.connect(got.append)
    loads.failed.connect(got.append)
    loads.load("big.csv")
    qtbot.waitUntil(started.is_set)
    assert loads.running
    loads.cancel()
    assert loads.shutdown()
    qapp.processEvents()
    assert got == []  # a cancelled load reports nothing as current


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="per-thread nice is Linux's")
def test_background_work_runs_at_the_gui_threads_priority(qtbot):
    """A worker below the GUI thread's priority is preempted by the machine's
    other work while it holds the interpreter lock, and the GUI thread waits
    as long (qt.worker's docstring has the figures): loading, profiling,
    analysing and the warm-up imports run at the GUI thread's own priority."""
    import os

    gui = os.getpriority(os.PRIO_PROCESS, 0)
    seen: list[int] = []
    r = LoadRunner(load=lambda path, progress, cancel: os.getpriority(os.PRIO_PROCESS, 0))
    r.loaded.connect(seen.append)
    r.load("any")
    qtbot.waitUntil(lambda: bool(seen), timeout=5000)
    assert seen == [gui]
    r.shutdown()
