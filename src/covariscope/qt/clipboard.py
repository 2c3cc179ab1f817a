"""Copied diagram selections on the system clipboard.

A selection travels as JSON under our own MIME type (so Paste works across
windows and sessions), with the node labels as plain text for other programs.
"""

from __future__ import annotations

import json
from typing import Any

from PySide6.QtCore import QMimeData

from covariscope.errors import CovariscopeError
from covariscope.model.project import FORMAT, FORMAT_VERSION, project_from_dict
from covariscope.model.project_json import parse_project_json

__all__ = ["SELECTION_MIME", "selection_from_mime", "selection_mime"]

#: Clipboard type of a copied selection: UTF-8 JSON with "nodes", "arrows", "proxies".
SELECTION_MIME = "application/x-covariscope-selection"
#: A copied selection of a whole diagram takes well under a megabyte.
MAX_CLIP_BYTES = 16 * 1024 * 1024


def selection_mime(clip: dict[str, Any]) -> QMimeData:
    """The clipboard payload of a selection from ``DiagramScene.copy_selection``."""
    mime = QMimeData()
    mime.setData(SELECTION_MIME, json.dumps(clip, ensure_ascii=False).encode("utf-8"))
    mime.setText("\n".join(str(n.get("label") or n.get("id", "")) for n in clip.get("nodes", [])))
    return mime


def selection_from_mime(mime: QMimeData | None) -> dict[str, Any] | None:
    """The selection a clipboard payload carries, or None when it carries none
    (other content, or a payload that cannot be read).

    The payload is read as strictly as a project file (nesting, numbers,
    duplicate keys, ids, kinds, links): anything from the clipboard may have
    been put there by another program.
    """
    if mime is None or not mime.hasFormat(SELECTION_MIME):
        return None
    raw = bytes(mime.data(SELECTION_MIME).data())
    if len(raw) > MAX_CLIP_BYTES:
        return None
    try:
        parsed = parse_project_json(raw, "clipboard")
        clip = parsed.value
        if parsed.duplicates or not isinstance(clip, dict):
            return None
        nodes = clip.get("nodes")
        if not isinstance(nodes, list) or not nodes:
            return None
        diagram = project_from_dict(
            {
                "format": FORMAT,
                "version": FORMAT_VERSION,
                "diagram": {
                    "nodes": nodes,
                    "arrows": [_pair(p, "from", "to") for p in clip.get("arrows", [])],
                    "proxies": [_pair(p, "a", "b") for p in clip.get("proxies", [])],
                },
            }
        ).diagram
    except (CovariscopeError, TypeError, ValueError):
        return None
    checked = diagram.to_dict()
    return {
        "nodes": checked["nodes"],
        "arrows": [[a["from"], a["to"]] for a in checked["arrows"]],
        "proxies": [[p["a"], p["b"]] for p in checked["proxies"]],
    }


def _pair(value: Any, first: str, second: str) -> dict[str, Any]:
    if not isinstance(value, list | tuple) or len(value) != 2:
        raise ValueError("a link is a pair of node ids")
    return {first: value[0], second: value[1]}
