"""The window's size on the screen it opens on, and its remembered layout."""

from __future__ import annotations

from PySide6.QtCore import QByteArray, QEvent, QObject, QSettings, QSize, Qt, QTimer
from PySide6.QtGui import QResizeEvent
from PySide6.QtWidgets import QDockWidget, QMainWindow

__all__ = ["HeightShare", "restore_layout", "save_layout", "window_size"]

#: the size the window prefers on a large screen
PREFERRED = QSize(1400, 900)
_GEOMETRY, _STATE = "window/geometry", "window/state"


def window_size(available: QSize) -> QSize:
    """The preferred size, shrunk to fit the screen's available area (less a
    small margin for the window frame), so a laptop screen shows it whole."""
    width = min(PREFERRED.width(), max(640, available.width() - 16))
    height = min(PREFERRED.height(), max(480, available.height() - 40))
    return QSize(width, height)


def save_layout(window: QMainWindow) -> None:
    """Remember the window's geometry and its docks and toolbar."""
    settings = QSettings()
    settings.setValue(_GEOMETRY, window.saveGeometry())
    settings.setValue(_STATE, window.saveState())


def restore_layout(window: QMainWindow) -> bool:
    """Put back the remembered geometry and layout (False: none saved yet).
    A geometry saved on a larger screen is shrunk to fit this one."""
    settings = QSettings()
    geometry, state = settings.value(_GEOMETRY), settings.value(_STATE)
    if not isinstance(geometry, QByteArray) or not isinstance(state, QByteArray):
        return False
    window.restoreGeometry(geometry)
    window.restoreState(state)
    screen = window.screen().availableGeometry().size()
    fitted = window_size(QSize(screen.width(), screen.height()))
    if window.width() > screen.width() or window.height() > screen.height():
        window.resize(fitted.boundedTo(window.size()))
    return True


class HeightShare(QObject):
    """Keeps a bottom dock's share of the window's height when the window is resized.

    On its own, QMainWindow hands a change of height to the centre and the
    docks by their size hints: the demo opened at 1920×1080 and made
    1366×768 left the review dock 51 % of the height and the diagram a strip
    of 170 px; other paths leave the review a few rows.  The share is what
    the user set, so it is what stays: it changes only when the user drags a
    separator (they belong to the window itself: a mouse release on it), or
    through :meth:`remember` (a restored layout).

    Parameters
    ----------
    window : the main window
    dock : the dock whose height share is kept
    share : its share at first (of the window's height, 0–1)
    """

    def __init__(self, window: QMainWindow, dock: QDockWidget, share: float) -> None:
        super().__init__(window)
        self.window, self.dock, self.share = window, dock, share
        window.installEventFilter(self)

    def _docked(self) -> bool:
        return self.dock.isVisible() and not self.dock.isFloating() and self.window.height() > 0

    def eventFilter(self, watched: QObject, event: QEvent) -> bool:
        if watched is self.window:
            kind = event.type()
            if kind == QEvent.Type.Resize and isinstance(event, QResizeEvent):
                if event.size().height() != event.oldSize().height():
                    QTimer.singleShot(0, self.apply)  # once the layout has its new size
            elif kind == QEvent.Type.MouseButtonRelease:
                QTimer.singleShot(0, self.remember)  # a separator dragged, perhaps
        return False

    def remember(self) -> None:
        """Take the dock's present share as the one to keep."""
        if self._docked():
            self.share = self.dock.height() / self.window.height()

    def apply(self) -> None:
        """Give the dock its share of the window's present height."""
        if self._docked():
            height = round(self.share * self.window.height())
            self.window.resizeDocks([self.dock], [height], Qt.Orientation.Vertical)
