"""Copied diagram selections on the system clipboard.

A selection travels as JSON under our own MIME type (so Paste works across
windows and sessions), with the node labels as plain text for other programs.
"""

from __future__ import annotations

import json
from typing import Any

from PySide6.QtCore import QMimeData

__all__ = ["SELECTION_MIME", "selection_from_mime", "selection_mime"]

#: Clipboard type of a copied selection: UTF-8 JSON with "nodes", "arrows", "proxies".
SELECTION_MIME = "application/x-covariscope-selection"


def selection_mime(clip: dict[str, Any]) -> QMimeData:
    """The clipboard payload of a selection from ``DiagramScene.copy_selection``."""
    mime = QMimeData()
    mime.setData(SELECTION_MIME, json.dumps(clip, ensure_ascii=False).encode("utf-8"))
    mime.setText("\n".join(str(n.get("label") or n.get("id", "")) for n in clip.get("nodes", [])))
    return mime


def selection_from_mime(mime: QMimeData | None) -> dict[str, Any] | None:
    """The selection a clipboard payload carries, or None when it carries none
    (other content, or a payload that cannot be read)."""
    if mime is None or not mime.hasFormat(SELECTION_MIME):
        return None
    try:
        clip = json.loads(bytes(mime.data(SELECTION_MIME).data()).decode("utf-8"))
    except (UnicodeDecodeError, ValueError):
        return None
    if not isinstance(clip, dict) or not isinstance(clip.get("nodes"), list):
        return None
    return clip if clip["nodes"] else None
