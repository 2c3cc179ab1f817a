"""The review table and its neighbours: proposed-set ticks shared with the
canvas, open paths highlighted, exports, thresholds, first start."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from PySide6.QtCore import Qt

DEMO = Path(__file__).resolve().parents[2] / "demo_data"
SHOTS = Path("/tmp/shots")


class FakePrompts:
    """Answers the window's questions without dialogs; records what was said."""

    def __init__(self) -> None:
        self.said: list[tuple[str, str]] = []
        self.answers: dict[str, object] = {}

    def save_changes(self, name):
        return self.answers.get("save_changes", "discard")

    def yes_no(self, title, text):
        self.said.append((title, text))
        return bool(self.answers.get(title, False))

    def warn(self, title, text):
        self.said.append((title, text))

    info = warn

    def open_path(self, title, filter_, start=""):
        return self.answers.get("open_path")

    def save_path(self, title, filter_, start=""):
        return self.answers.get("save_path")


@pytest.fixture
def demo(tmp_path):
    if not (DEMO / "demo_project.json").exists():
        pytest.skip("the demo study is not there yet")
    for name in ("demo_project.json", "demo_cohort.csv"):
        shutil.copyfile(DEMO / name, tmp_path / name)
    return tmp_path


@pytest.fixture
def window(qtbot):
    from covariscope.qt.app import application
    from covariscope.qt.main_window import MainWindow

    application()
    prompts = FakePrompts()
    w = MainWindow(prompts=prompts, debounce_ms=20)
    qtbot.addWidget(w)
    w.show()
    yield w
    w.io.extra_modified = False
    w.undo_stack.setClean()
    w.close()


def wait_for_analysis(qtbot, w, timeout=90_000):
    qtbot.waitUntil(
        lambda: (
            w.result is not None
            and not w.runner.running
            and not w.runner.pending
            and not w.data.loading
            and w.state_label.text() == "Analysis up to date"
        ),
        timeout=timeout,
    )


def test_tick_is_one_undoable_proposed_set(qtbot, window, demo):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    before = w.project.proposed
    w.review.set_checked("family_hist", True)
    assert w.project.proposed == [*before, "family_hist"]
    # the canvas's own toggle lands in the table too
    w.scene.proposed_toggled.emit("family_hist", False)
    row = w.review.row_of("family_hist")
    assert w.review.table.item(row, 7).checkState() == Qt.CheckState.Unchecked
    w.undo_stack.undo()
    w.undo_stack.undo()
    assert w.project.proposed == before
    wait_for_analysis(qtbot, w)
    # unmeasured covariates cannot be ticked
    row = w.review.row_of("early_life")
    flags = w.review.table.item(row, 7).flags()
    assert not flags & Qt.ItemFlag.ItemIsUserCheckable
    # the verdict's reason is the tooltip and the detail line
    w.review.select_node("age")
    reason = w.result.verdicts["age"].reason
    assert w.review.table.item(w.review.row_of("age"), 6).toolTip() == reason
    assert reason in w.review.detail.text()


def test_choosing_an_open_path_highlights_it(qtbot, window, demo, monkeypatch):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    assert w.paths.paths
    seen = []
    monkeypatch.setattr(w.scene, "highlight_path", seen.append)
    w.paths.choose(0)
    assert seen[-1] == list(w.paths.paths[0])


def test_exports(qtbot, window, demo, tmp_path):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    for kind in ("png", "svg", "graphml"):
        target = tmp_path / f"diagram.{kind}"
        w.prompts.answers["save_path"] = str(target)
        assert w.export_diagram(kind), w.prompts.said
        assert target.stat().st_size > 0
    wait_for_analysis(qtbot, w)
    target = tmp_path / "review.csv"
    w.prompts.answers["save_path"] = str(target)
    w.actions_.export_csv.trigger()
    assert target.read_text(encoding="utf-8").count("\n") == 1 + len(w.project.diagram.covariates)


def test_rationale_pdf(qtbot, window, demo, tmp_path):
    pytest.importorskip("covariscope.report.painter")
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    target = tmp_path / "rationale.pdf"
    assert w.save_rationale_pdf(str(target)), w.prompts.said
    assert target.read_bytes().startswith(b"%PDF")


def test_thresholds_are_saved_as_guides(qtbot, window, monkeypatch):
    from covariscope.qt.settings_dialogs import ThresholdsDialog

    w = window

    def accept(dialog):
        dialog.spins["vif"].setValue(5.0)
        return True

    monkeypatch.setattr(ThresholdsDialog, "exec", accept)
    w.actions_.thresholds.trigger()
    assert w.project.analysis.thresholds["vif"] == 5.0
    w.undo_stack.undo()
    assert w.project.analysis.thresholds["vif"] == 10.0
    dialog = ThresholdsDialog(w.project.analysis.thresholds, w)
    qtbot.addWidget(dialog)
    assert "guide" in dialog.windowTitle()


def test_first_start_offers_the_demo(qtbot, monkeypatch):
    from covariscope.qt import app, project_io

    asked = []

    def yes_no(self, title, text):
        asked.append(title)
        return True

    monkeypatch.setattr(project_io.Prompts, "yes_no", yes_no)
    monkeypatch.setattr(project_io.Prompts, "warn", lambda self, title, text: asked.append(title))
    window = app.start_window(None)
    qtbot.addWidget(window)
    try:
        assert asked == ["Open the demo?"]
        assert window.project.path is not None
        assert window.project.path.name == "demo_project.json"
        again = app.start_window(None)
        qtbot.addWidget(again)
        assert asked == ["Open the demo?"]  # only on the first start
        again.close()
    finally:
        window.io.extra_modified = False
        window.undo_stack.setClean()
        window.close()
