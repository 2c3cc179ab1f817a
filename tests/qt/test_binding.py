"""The Qt bindings in use keep Python's reference counts intact.

PySide6 6.12.0 on Python 3.11 drops one reference to ``None`` on every Qt
method that returns nothing, which frees ``None`` after a few thousand paint
calls and aborts the interpreter; pyproject.toml therefore excludes it.  This
check fails loudly if such a release is ever installed again.
"""

from __future__ import annotations

import sys

from PySide6.QtGui import QImage, QPainter, QPen


def test_void_qt_calls_do_not_lose_references_to_none(qapp):
    image = QImage(8, 8, QImage.Format.Format_ARGB32)
    painter = QPainter(image)
    pen = QPen()
    before = sys.getrefcount(None)
    for _ in range(2000):
        painter.setPen(pen)
    after = sys.getrefcount(None)
    painter.end()
    assert after >= before - 50, f"{before - after} references to None lost in 2,000 calls"
