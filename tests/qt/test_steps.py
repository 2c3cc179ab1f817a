"""Showing a result in short steps, one per turn of the event loop (issue 9:
the GUI thread never stalls on one long slot)."""

from __future__ import annotations

from PySide6.QtWidgets import QApplication

from covariscope.model.commands import SetProposed
from covariscope.qt.steps import StepChain


def test_steps_run_one_per_turn_of_the_loop(qtbot):
    chain = StepChain()
    done: list[int] = []
    chain.start([lambda: done.append(1), lambda: done.append(2), lambda: done.append(3)])
    assert done == [1]
    assert chain.pending
    QApplication.processEvents()
    assert done == [1, 2]
    qtbot.waitUntil(lambda: not chain.pending)
    assert done == [1, 2, 3]


def test_a_new_start_drops_the_steps_not_yet_run(qtbot):
    chain = StepChain()
    done: list[str] = []
    chain.start([lambda: done.append("a1"), lambda: done.append("a2")])
    chain.start([lambda: done.append("b1"), lambda: done.append("b2")])
    qtbot.waitUntil(lambda: not chain.pending)
    assert done == ["a1", "b1", "b2"]
    chain.start([lambda: done.append("c1"), lambda: done.append("c2")])
    chain.stop()
    QApplication.processEvents()
    assert done[-1] == "c1"
    assert not chain.pending
    chain.start([lambda: done.append("d1"), lambda: done.append("d2")])
    chain.finish()
    assert done[-2:] == ["d1", "d2"]


def test_the_window_shows_a_result_in_steps_and_says_up_to_date_last(
    qtbot, window, demo, wait_for_analysis
):
    w = window
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    result = w.result
    w.scene.set_annotations({}, {})
    w._set_state("Analysing…")
    w.runner.finished.emit(w.runner.generation, result)
    # the first step showed the review; the canvas and the state wait their turn
    assert w.showing.pending
    assert w.state_label.text() == "Analysing…"
    assert not w.scene.roles
    qtbot.waitUntil(lambda: not w.showing.pending)
    assert w.state_label.text() == "Analysis up to date"
    assert w.scene.roles
    # an edit while the steps run: its own state stands when they end (the
    # steps are finished at once here, before the edit's analysis can start)
    w.runner.finished.emit(w.runner.generation, result)
    w.push(SetProposed(w.project, sorted(set(w.project.proposed) ^ {"smoke"})))
    w.showing.finish()
    assert w.state_label.text() != "Analysis up to date"
    wait_for_analysis(qtbot, w)
