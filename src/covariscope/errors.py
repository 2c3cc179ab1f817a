"""Domain errors and warnings.

Every message is written for the analyst: it names the problem and, where
there is one, the fix.  The user interface shows messages as they are.
"""

from __future__ import annotations

__all__ = [
    "CovariscopeError",
    "CycleError",
    "DataError",
    "DesignError",
    "DiagramError",
    "ProjectFileError",
]


class CovariscopeError(Exception):
    """Base of every error the program reports to the user in plain words."""


class DiagramError(CovariscopeError):
    """An edit the diagram refuses: unknown node, duplicate id, self-loop, ..."""


class CycleError(DiagramError):
    """An arrow (or proxy link) that would close a cycle.

    ``cycle`` holds the node ids in order, first repeated at the end.
    """

    def __init__(self, message: str, cycle: list[str]) -> None:
        super().__init__(message)
        self.cycle = cycle


class ProjectFileError(CovariscopeError):
    """A project file that cannot be read; ``problems`` lists every finding
    as ``"<where>: <what>"``."""

    def __init__(self, message: str, problems: list[str] | None = None) -> None:
        super().__init__(message)
        self.problems = problems or [message]


class DataError(CovariscopeError):
    """A data file or column that cannot be used as asked."""


class DesignError(DataError):
    """The bound columns cannot answer the question at all: the exposure and
    the outcome in one column, an outcome the exposure determines exactly,
    values beyond what double precision can square.  Unlike other data
    problems, the study stops here rather than falling back to the diagram,
    since any number shown would be meaningless."""
