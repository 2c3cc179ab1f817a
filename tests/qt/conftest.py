"""GUI tests: test-mode settings paths, and no window, timer or thread left behind."""

from __future__ import annotations

import pytest


@pytest.fixture(autouse=True)
def _qt_test_mode(qapp):
    from PySide6.QtCore import QStandardPaths

    QStandardPaths.setTestModeEnabled(True)


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
