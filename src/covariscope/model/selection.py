"""Copying part of a diagram and pasting it back, without a window.

A copied selection is the chosen nodes in their saved form with the arrows
and proxy links whose two ends are both chosen; it travels as JSON (the
window puts it on the system clipboard under its own type).  Pasting adds
copies under fresh ids, shifted so they do not hide the originals, with the
links among them, as one undo step; a copied exposure or outcome comes in
as a covariate when the diagram already has one.  A payload read back is
checked as strictly as a project file: anything on the clipboard may have
been put there by another program.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, NotRequired, TypedDict

from covariscope.errors import CovariscopeError
from covariscope.model.commands import AddArrow, AddNode, AddProxy, Command, Macro
from covariscope.model.diagram import Diagram, Node
from covariscope.model.project import FORMAT, FORMAT_VERSION, Project, project_from_dict
from covariscope.model.project_json import parse_project_json

__all__ = [
    "MAX_SELECTION_BYTES",
    "PASTE_OFFSET",
    "SELECTION_FORMAT",
    "Paste",
    "Selection",
    "copied_selection",
    "paste_command",
    "selection_from_json",
    "selection_text",
]

#: the "format" a copied selection names itself with
SELECTION_FORMAT = "covariscope-selection"
#: A copied selection of a whole diagram takes well under a megabyte.
MAX_SELECTION_BYTES = 16 * 1024 * 1024
#: how far (scene units, right and down) pasted copies sit from where they were copied
PASTE_OFFSET = 32.0


class Selection(TypedDict):
    """A copied selection as it travels: nodes in their saved form, links as id pairs."""

    nodes: list[dict[str, Any]]
    arrows: list[list[str]]
    proxies: list[list[str]]
    format: NotRequired[str]


@dataclass(frozen=True)
class Paste:
    """What pasting a selection does: one undoable command and the new node ids
    (in the order of the copied nodes)."""

    command: Macro
    ids: tuple[str, ...]


def copied_selection(diagram: Diagram, ids: Sequence[str]) -> Selection:
    """The nodes ``ids`` of ``diagram`` with the arrows and proxy links among them."""
    chosen = set(ids)
    every = {n["id"]: n for n in diagram.to_dict()["nodes"]}
    return {
        "format": SELECTION_FORMAT,
        "nodes": [every[i] for i in ids],
        "arrows": [[a, b] for a, b in diagram.arrows if a in chosen and b in chosen],
        "proxies": [[a, b] for a, b in diagram.proxies if a in chosen and b in chosen],
    }


def selection_text(selection: Selection) -> str:
    """The copied nodes' labels, one a line (what other programs paste)."""
    return "\n".join(str(n.get("label") or n.get("id", "")) for n in selection["nodes"])


def selection_from_json(raw: bytes) -> Selection | None:
    """The selection ``raw`` JSON carries, checked as a project file's diagram
    is (nesting, numbers, duplicate keys, ids, kinds, links); None when it
    carries none or cannot be read."""
    if len(raw) > MAX_SELECTION_BYTES:
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


def _pair(value: object, first: str, second: str) -> dict[str, object]:
    if not isinstance(value, list | tuple) or len(value) != 2:
        raise ValueError("a link is a pair of node ids")
    return {first: value[0], second: value[1]}


def _pasted_node(raw: dict[str, Any], new_id: str, kind: str, offset: tuple[float, float]) -> Node:
    return Node(
        new_id,
        label=raw.get("label", new_id),
        kind=kind,
        measured=raw.get("measured", True),
        column=raw.get("column"),
        x=float(raw.get("x", 0.0)) + offset[0],
        y=float(raw.get("y", 0.0)) + offset[1],
        note=raw.get("note", ""),
    )


def paste_command(
    project: Project,
    selection: Selection,
    offset: tuple[float, float] = (PASTE_OFFSET, PASTE_OFFSET),
) -> Paste | None:
    """The command that adds copies of ``selection``'s nodes to ``project``
    (fresh ids, shifted by ``offset``) with the links among them; None when
    the selection holds no nodes."""
    if not selection.get("nodes"):
        return None
    d = project.diagram
    taken = set(d.node_ids)
    kinds_held = {n.kind for n in d.nodes}
    renamed: dict[str, str] = {}
    steps: list[Command] = []
    for raw in selection["nodes"]:
        new_id = stem = d.fresh_id(raw["id"])
        n = 2
        while new_id in taken:
            new_id, n = f"{stem}_{n}", n + 1
        taken.add(new_id)
        renamed[raw["id"]] = new_id
        kind = raw.get("kind", "covariate")
        if kind in kinds_held:
            kind = "covariate"  # one exposure, one outcome: a second copy is a covariate
        kinds_held.add(kind)
        steps.append(AddNode(project, _pasted_node(raw, new_id, kind, offset)))
    for a, b in selection.get("arrows", []):
        if a in renamed and b in renamed:
            steps.append(AddArrow(project, renamed[a], renamed[b]))
    for a, b in selection.get("proxies", []):
        if a in renamed and b in renamed:
            steps.append(AddProxy(project, renamed[a], renamed[b]))
    return Paste(Macro(f"Paste {len(renamed)} nodes", steps), tuple(renamed.values()))
