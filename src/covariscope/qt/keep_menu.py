"""The "keep this one of the group" entries, shared by the review table's
and the canvas's context menus so both say and do the same thing."""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtWidgets import QMenu

from covariscope.views.keep_choice import KeepChoice

__all__ = ["add_keep_actions"]


def add_keep_actions(
    menu: QMenu,
    choice: KeepChoice | None,
    node_id: str,
    chosen: Callable[[str, str | None], object],
) -> bool:
    """Add the keep-choice entries of ``node_id`` to ``menu`` and a separator;
    ``chosen(group key, member or None)`` runs when one is triggered.  Adds
    nothing and returns False when the node has no group to keep one of.

    The actions carry ``data()`` keys ``keep`` and ``keep:suggested`` (and the
    object names ``keepThisOne``, ``keepSuggested``) for tests and panels."""
    if choice is None:
        return False
    keep = menu.addAction("Keep this one of the group")
    keep.setObjectName("keepThisOne")
    keep.setData("keep")
    keep.setToolTip(f"Keep it of {{{choice.names()}}}; the choice is saved with the project")
    keep.setStatusTip(keep.toolTip())
    keep.setEnabled(not (choice.saved and choice.kept == node_id))
    keep.triggered.connect(lambda *_: chosen(choice.key, node_id))
    if choice.saved:
        back = menu.addAction("Let the analysis suggest which to keep")
        back.setObjectName("keepSuggested")
        back.setData("keep:suggested")
        back.triggered.connect(lambda *_: chosen(choice.key, None))
    menu.addSeparator()
    return True
