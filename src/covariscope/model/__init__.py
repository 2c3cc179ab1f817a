"""The diagram, the project file and edit commands (no Qt)."""

from covariscope.model.diagram import KINDS, Diagram, DiagramEvent, Node
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
    "DataRef",
    "Diagram",
    "DiagramEvent",
    "Node",
    "Project",
    "load_project",
    "save_project",
]
