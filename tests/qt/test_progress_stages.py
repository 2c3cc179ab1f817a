"""The window's progress words for the tables fitted after the evidence, and
its Cancel reaching them between two fits (issue 12, point 6)."""

from __future__ import annotations

import threading

from covariscope.analysis.evidence import EvidenceCancelledError
from covariscope.qt.worker import study_run


class Spy:
    """The window's analysis, with every progress line it says recorded
    (from the worker thread) and, optionally, a pause at one line."""

    def __init__(self, window, hold: str = "") -> None:
        self.inner = study_run(window.runner.cache)
        self.said: list[str] = []
        self.raised: list[BaseException] = []
        self.hold = hold
        self.reached, self.release = threading.Event(), threading.Event()

    def __call__(self, project, table, progress, cancel):
        def spoken(fraction: float, text: str = "") -> None:
            self.said.append(text)
            progress(fraction, text)
            if self.hold and text.startswith(self.hold):
                self.reached.set()
                self.release.wait(30)

        try:
            return self.inner(project, table, spoken, cancel)
        except BaseException as exc:
            self.raised.append(exc)
            raise


def test_progress_label_names_both_tables(qtbot, window, demo, wait_for_analysis):
    w = window
    shown: list[str] = []
    # connected after the window's own slot, so the label already holds the words
    w.runner.progress.connect(lambda _f, _t: shown.append(w.progress_label.text()))
    w.runner.run_fn = Spy(w)
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    modification = [t for t in shown if t.startswith("Checking effect modification: model")]
    residual = [t for t in shown if t.startswith("Checking residual confounding: model")]
    # the window is sent a few lines a second of one stage, and each stage's first line
    assert modification[0] == "Checking effect modification: model 1 of 11"
    assert residual[0] == "Checking residual confounding: model 1 of 5"
    assert all(t.endswith(" of 11") for t in modification)
    assert all(t.endswith(" of 5") for t in residual)
    assert shown.index(modification[-1]) < shown.index(residual[0])
    claims = [t for t in shown if t.startswith("Checking the diagram against the data: claim")]
    assert claims[0].startswith("Checking the diagram against the data: claim 1 of ")
    assert shown.index(residual[-1]) < shown.index(claims[0])


def test_cancel_stops_effect_modification_between_two_fits(qtbot, window, demo):
    w = window
    spy = Spy(w, hold="Checking effect modification: model 2 of")
    w.runner.run_fn = spy
    assert w.io.open(str(demo / "demo_project.json"))
    qtbot.waitUntil(spy.reached.is_set, timeout=90_000)
    qtbot.waitUntil(lambda: w.cancel_button.isVisible())
    w.cancel_button.click()  # while model 2 is being fitted
    spy.release.set()
    assert w.runner.pool.waitForDone(60_000)
    assert [type(e) for e in spy.raised] == [EvidenceCancelledError]
    checking = [t for t in spy.said if t.startswith("Checking")]
    assert checking[-1].startswith("Checking effect modification: model 2 of")
    assert w.state_label.text().startswith("Analysis cancelled")
    assert not w.runner.cache.entries("modification")
