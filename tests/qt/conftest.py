"""GUI tests: test-mode settings paths, no window, timer or thread left
behind, and the pieces the window tests share (the demo folder, a window
with answering prompts, waiting for the analysis)."""

from __future__ import annotations

import shutil
from collections.abc import Callable
from pathlib import Path

import pytest

DEMO = Path(__file__).resolve().parents[2] / "demo_data"
#: screenshots the tests write for a person to look at (not golden images)
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

    def printer(self):
        self.said.append(("printer", ""))
        return self.answers.get("printer")


def wait_for_analysis(qtbot, w, timeout=90_000):
    """Until the window shows an analysis that matches its project."""
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


@pytest.fixture(autouse=True)
def _qt_test_mode(qapp):
    from PySide6.QtCore import QStandardPaths

    QStandardPaths.setTestModeEnabled(True)


@pytest.fixture(autouse=True)
def _fresh_settings(qapp):
    """Every test starts with no remembered window layout or recent files:
    Qt keeps one settings file per process, so a window closed by an earlier
    test would otherwise hand its geometry and docks to the next one."""
    from PySide6.QtCore import QSettings

    QSettings().clear()
    yield
    QSettings().clear()


@pytest.fixture(autouse=True)
def _collect_closed_windows(qapp):
    """Destroy what a test closed before the next test runs its event loop:
    pending deferred deletes are delivered and Python's cycle collector runs
    here, at a known point, rather than in the middle of a later test's events."""
    yield
    import gc

    from PySide6.QtCore import QCoreApplication, QEvent

    QCoreApplication.processEvents()
    QCoreApplication.sendPostedEvents(None, QEvent.Type.DeferredDelete)
    gc.collect()


@pytest.fixture(autouse=True)
def _no_leaked_windows(qapp):
    from PySide6.QtWidgets import QApplication

    before = {id(w) for w in QApplication.topLevelWidgets() if w.isVisible()}
    yield
    QApplication.processEvents()
    leaked = [
        w
        for w in QApplication.topLevelWidgets()
        if w.isVisible() and id(w) not in before and w.objectName() != "qt_scrollarea_viewport"
    ]
    for w in leaked:
        w.close()
        w.deleteLater()
    assert not leaked, f"test left windows open: {[type(w).__name__ for w in leaked]}"


@pytest.fixture
def demo(tmp_path):
    """A copy of the demo project and its data in a temporary folder."""
    if not (DEMO / "demo_project.json").exists():
        pytest.skip("the demo study is not there yet")
    for name in ("demo_project.json", "demo_levels_project.json", "demo_cohort.csv"):
        shutil.copyfile(DEMO / name, tmp_path / name)
    return tmp_path


@pytest.fixture
def fake_prompts() -> type[FakePrompts]:
    """The prompts class, for a test that builds a window of its own."""
    return FakePrompts


@pytest.fixture
def window(qtbot):
    """A shown main window whose prompts answer from ``w.prompts.answers``."""
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


@pytest.fixture(name="wait_for_analysis")
def _wait_for_analysis() -> Callable[..., None]:
    """``wait_for_analysis(qtbot, w)``: until ``w`` shows a current analysis."""
    return wait_for_analysis


@pytest.fixture
def shots() -> Path:
    SHOTS.mkdir(exist_ok=True)
    return SHOTS


@pytest.fixture(autouse=True)
def _empty_clipboard(qapp):
    """Leave the clipboard empty: mime data still held by the offscreen
    clipboard when the interpreter exits makes Qt crash in its teardown."""
    yield
    from PySide6.QtWidgets import QApplication

    QApplication.clipboard().clear()
