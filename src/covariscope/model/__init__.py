"""The diagram, the project file and edit commands (no Qt)."""

from covariscope.model.diagram import KINDS, Diagram, DiagramEvent, Node
from covariscope.model.errors import (
    CovariscopeError,
    CovariscopeWarning,
    CycleError,
    DataError,
    DiagramError,
    ProjectFileError,
)
from covariscope.model.project import (
    DEFAULT_THRESHOLDS,
    AnalysisSettings,
    DataRef,
    Project,
    load_project,
    save_project,
)

__all__ = [
    "DEFAULT_THRESHOLDS",
    "KINDS",
    "AnalysisSettings",
    "CovariscopeError",
    "CovariscopeWarning",
    "CycleError",
    "DataError",
    "DataRef",
    "Diagram",
    "DiagramError",
    "DiagramEvent",
    "Node",
    "Project",
    "ProjectFileError",
    "load_project",
    "save_project",
]
