"""The window's size on the screen it opens on, and its remembered layout."""

from __future__ import annotations

from PySide6.QtCore import QByteArray, QSettings, QSize
from PySide6.QtWidgets import QMainWindow

__all__ = ["restore_layout", "save_layout", "window_size"]

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
