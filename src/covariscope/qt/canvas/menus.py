"""Context menus of the canvas.  Every action's ``data()`` is a short key
(``kind:exposure``, ``measured``, ``proposed``, ``keep``, ``keep:suggested``, ``rename``, ``proxy``,
``delete``, ``reverse``, ``unlink``, ``add``, ``paste``, ``arrange``) so
that tests and other panels can find and trigger it."""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

from PySide6.QtCore import QPointF
from PySide6.QtGui import QAction
from PySide6.QtWidgets import QMenu

from covariscope.model.commands import (
    RemoveArrow,
    RemoveProxy,
    SetKind,
    SetProposed,
    UpdateNode,
)
from covariscope.qt.keep_menu import add_keep_actions

if TYPE_CHECKING:
    from covariscope.qt.canvas.scene import DiagramScene

__all__ = ["action_by_key", "arrow_menu", "canvas_menu", "node_menu", "proxy_menu"]


def _add(
    menu: QMenu, text: str, key: str, slot: Callable[[], object], checked: bool | None = None
) -> None:
    action = menu.addAction(text)
    action.setData(key)
    if checked is not None:
        action.setCheckable(True)
        action.setChecked(checked)
    action.triggered.connect(lambda *_: slot())


def action_by_key(menu: QMenu, key: str) -> QAction:
    for action in menu.actions():
        if action.data() == key:
            return action
    raise KeyError(key)


def _set_kind(scene: DiagramScene, node_id: str, kind: str) -> Callable[[], object]:
    def run() -> object:
        project = scene.project
        if project.diagram.node(node_id).kind == kind:
            return None
        return scene.push(SetKind(project, node_id, kind))

    return run


def node_menu(scene: DiagramScene, node_id: str) -> QMenu:
    project = scene.project
    node = project.diagram.node(node_id)
    menu = QMenu()
    for kind, text in (
        ("exposure", "The exposure"),
        ("outcome", "The outcome"),
        ("covariate", "A covariate"),
    ):
        _add(menu, text, f"kind:{kind}", _set_kind(scene, node_id, kind), checked=node.kind == kind)
    menu.addSeparator()
    _add(
        menu,
        "Measured in the data",
        "measured",
        lambda: scene.push(
            UpdateNode(project, node_id, measured=not project.diagram.node(node_id).measured)
        ),
        checked=node.measured,
    )

    def toggle_proposed() -> None:
        current = project.proposed
        ids = [p for p in current if p != node_id] if node_id in current else [*current, node_id]
        scene.push(SetProposed(project, ids))

    _add(
        menu,
        "In the proposed set",
        "proposed",
        toggle_proposed,
        checked=node_id in project.proposed,
    )
    action_by_key(menu, "proposed").setEnabled(node.kind == "covariate")
    menu.addSeparator()
    add_keep_actions(menu, scene.keep_choice_of(node_id), node_id, scene.keep_chosen.emit)
    _add(menu, "Rename", "rename", lambda: scene.start_rename(node_id))
    _add(menu, "Link as alternate measure of…", "proxy", lambda: _arm_proxy(scene, node_id))
    menu.addSeparator()
    _add(menu, "Delete", "delete", scene.delete_selection)
    return menu


def _arm_proxy(scene: DiagramScene, node_id: str) -> None:
    scene.set_mode("proxy")
    mode = scene.modes["proxy"]
    mode.arm(node_id)  # type: ignore[attr-defined]
    scene.message.emit(f"Click the node that measures the same thing as {node_id}.")


def arrow_menu(scene: DiagramScene, pair: tuple[str, str]) -> QMenu:
    menu = QMenu()
    _add(menu, "Reverse arrow", "reverse", scene.reverse_selected_arrows)
    _add(menu, "Delete arrow", "delete", lambda: scene.push(RemoveArrow(scene.project, *pair)))
    return menu


def proxy_menu(scene: DiagramScene, pair: tuple[str, str]) -> QMenu:
    menu = QMenu()
    _add(
        menu,
        "Unlink alternate measures",
        "unlink",
        lambda: scene.push(RemoveProxy(scene.project, *pair)),
    )
    return menu


def canvas_menu(scene: DiagramScene, pos: QPointF) -> QMenu:
    menu = QMenu()
    _add(menu, "Add node here", "add", lambda: scene.add_node_at(pos))
    _add(menu, "Arrange automatically", "arrange", scene.auto_layout)
    return menu
