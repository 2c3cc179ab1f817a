"""The diagram canvas: scene, view, mouse modes and export."""

from covariscope.qt.canvas.drawing import Annotations
from covariscope.qt.canvas.export import export_png, export_svg, render_diagram
from covariscope.qt.canvas.modes import Pointer
from covariscope.qt.canvas.scene import COLUMN_MIME, DiagramScene
from covariscope.qt.canvas.view import DiagramView

__all__ = [
    "COLUMN_MIME",
    "Annotations",
    "DiagramScene",
    "DiagramView",
    "Pointer",
    "export_png",
    "export_svg",
    "render_diagram",
]
