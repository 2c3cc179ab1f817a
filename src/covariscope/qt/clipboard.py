"""Copied diagram selections on the system clipboard.

A selection travels as JSON under our own MIME type (so Paste works across
windows and sessions), with the node labels as plain text for other programs.
What a selection holds and how it is checked when read back is decided in
:mod:`covariscope.model.selection`; this module only wraps it for Qt.
"""

from __future__ import annotations

import json

from PySide6.QtCore import QMimeData

from covariscope.model.selection import Selection, selection_from_json, selection_text

__all__ = ["SELECTION_MIME", "selection_from_mime", "selection_mime"]

#: Clipboard type of a copied selection: UTF-8 JSON with "nodes", "arrows", "proxies".
SELECTION_MIME = "application/x-covariscope-selection"


def selection_mime(clip: Selection) -> QMimeData:
    """The clipboard payload of a selection from ``DiagramScene.copy_selection``."""
    mime = QMimeData()
    mime.setData(SELECTION_MIME, json.dumps(clip, ensure_ascii=False).encode("utf-8"))
    mime.setText(selection_text(clip))
    return mime


def selection_from_mime(mime: QMimeData | None) -> Selection | None:
    """The selection a clipboard payload carries, or None when it carries none
    (other content, or a payload that cannot be read: see
    :func:`~covariscope.model.selection.selection_from_json`)."""
    if mime is None or not mime.hasFormat(SELECTION_MIME):
        return None
    return selection_from_json(bytes(mime.data(SELECTION_MIME).data()))
