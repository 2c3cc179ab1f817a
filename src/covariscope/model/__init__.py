"""The diagram, the project file and edit commands (no Qt)."""

from covariscope.model.diagram import KINDS, Diagram, DiagramEvent, Node
from covariscope.model.project import (
    AnalysisSettings,
    DataRef,
    Project,
    load_project,
    save_project,
)

__all__ = [
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
