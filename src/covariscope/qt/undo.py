"""A thin QUndoCommand adapter over the pure edit commands.

The model commands do the work; this module only puts them on a QUndoStack.
An edit the model refuses never enters the stack: its message goes to the
caller, who shows it as it is.
"""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtGui import QUndoCommand, QUndoStack

from covariscope.errors import CovariscopeError
from covariscope.model.commands import Command

__all__ = ["UndoableEdit", "push"]


class UndoableEdit(QUndoCommand):
    """A model command on the undo stack.  The command has already been
    applied once when it is pushed, so the stack's first ``redo`` is skipped."""

    def __init__(self, command: Command) -> None:
        super().__init__(command.text)
        self.command = command
        self._applied = True

    def redo(self) -> None:
        if self._applied:
            self._applied = False
            return
        self.command.redo()

    def undo(self) -> None:
        self.command.undo()


def push(
    stack: QUndoStack,
    command: Command,
    on_refused: Callable[[str], None] | None = None,
) -> bool:
    """Apply ``command`` and put it on ``stack``.

    Returns True when the edit was made.  A refused edit (the model raises a
    :class:`~covariscope.errors.CovariscopeError`) leaves the model and
    the stack as they were; its message is passed to ``on_refused``, or the
    error is raised again when no ``on_refused`` is given.
    """
    try:
        command.redo()
    except CovariscopeError as exc:
        if on_refused is None:
            raise
        on_refused(str(exc))
        return False
    stack.push(UndoableEdit(command))
    return True
