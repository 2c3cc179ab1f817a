"""Diagram export: PNG, SVG, GraphML, and the vector drawing from the model."""

from __future__ import annotations

import shutil
from pathlib import Path

import networkx as nx
import pytest
from PySide6.QtCore import QRectF
from PySide6.QtGui import QColor, QImage, QPainter, QUndoStack

from covariscope.errors import CovariscopeError
from covariscope.model.diagram import Diagram, Node
from covariscope.model.layout import layered_layout
from covariscope.model.project import Project
from covariscope.qt.canvas import (
    DiagramScene,
    export_png,
    export_svg,
    render_diagram,
)
from covariscope.views.diagram import export_graphml


def _project() -> Project:
    p = Project()
    d = p.diagram
    d.add_node(Node("x", "Exposure", kind="exposure", column="x"))
    d.add_node(Node("y", "Outcome", kind="outcome", column="y"))
    d.add_node(Node("c", "Confounder", column="c"))
    d.add_node(Node("u", "Hidden", measured=False))
    d.add_node(Node("c2", "Other measure"))
    for a, b in [("c", "x"), ("c", "y"), ("x", "y"), ("u", "c"), ("u", "y")]:
        d.add_arrow(a, b)
    d.add_proxy("c", "c2")
    p.set_proposed(["c"])
    for node_id, (px, py) in layered_layout(d, origin=(0.0, 0.0)).items():
        d.update_node(node_id, x=px, y=py)
    return p


@pytest.fixture
def scene(qapp):
    s = DiagramScene(_project(), QUndoStack())
    yield s
    s.detach()
    s.clear()


def test_png_and_svg_are_written(scene, tmp_path):
    png = export_png(scene, tmp_path / "d.png", scale=2)
    image = QImage(str(png))
    assert not image.isNull()
    assert image.width() > 400
    svg = export_svg(scene, tmp_path / "d.svg")
    text = svg.read_text(encoding="utf-8")
    assert text.startswith("<?xml")
    assert "<svg" in text
    assert "Confounder" in text  # labels stay text in the vector file


def test_export_into_a_missing_folder_says_so(scene, tmp_path):
    with pytest.raises(CovariscopeError, match="does not exist"):
        export_png(scene, tmp_path / "nowhere" / "d.png")


def test_graphml_reads_back_with_networkx(tmp_path):
    """Read back with networkx.read_graphml (an outside reader of the standard)."""
    diagram = _project().diagram
    path = export_graphml(diagram, tmp_path / "d.graphml")
    graph = nx.read_graphml(path)
    assert set(graph.nodes) == set(diagram.node_ids)
    edges = {(a, b, data["cs_link"]) for a, b, data in graph.edges(data=True)}
    assert {(a, b) for a, b, link in edges if link == "arrow"} == set(diagram.arrows)
    assert {(a, b) for a, b, link in edges if link == "proxy"} == set(diagram.proxies)
    for node in diagram.nodes:
        data = graph.nodes[node.id]
        assert data["cs_label"] == node.label
        assert data["cs_kind"] == node.kind
        assert data["cs_measured"] == node.measured
        assert data["cs_column"] == (node.column or "")
        assert (data["cs_x"], data["cs_y"]) == (node.x, node.y)


def _big_diagram(n: int = 40) -> Diagram:
    d = Diagram()
    d.add_node(Node("x", "Exposure variable", kind="exposure"))
    d.add_node(Node("y", "Outcome variable", kind="outcome"))
    d.add_arrow("x", "y")
    for i in range(n - 2):
        node_id = f"v{i}"
        d.add_node(Node(node_id, f"Covariate with a long name {i}", measured=i % 5 != 0))
        d.add_arrow(node_id, "x" if i % 2 else "y")
        if i % 3 == 0 and i % 2:
            d.add_arrow(node_id, "y")
        if i > 0 and i % 4 == 0:
            d.add_arrow(f"v{i - 1}", node_id)
    for node_id, (px, py) in layered_layout(d).items():
        d.update_node(node_id, x=px, y=py)
    return d


@pytest.mark.parametrize(("width", "height"), [(900, 600), (300, 200)])
def test_render_diagram_fits_the_rect(qapp, tmp_path, width, height):
    d = _big_diagram()
    image = QImage(width + 40, height + 40, QImage.Format.Format_ARGB32_Premultiplied)
    image.fill(QColor("#FFFFFF"))
    painter = QPainter(image)
    target = QRectF(20, 20, width, height)
    render_diagram(
        painter,
        target,
        d,
        proposed=["v1", "v2"],
        annotations={"roles": {"v1": "confounder"}, "verdicts": {"v1": ("adjust", "adjust")}},
    )
    painter.end()
    outside = {image.pixelColor(x, y).name() for x in range(0, image.width(), 3) for y in range(14)}
    outside |= {
        image.pixelColor(x, y).name() for x in range(14) for y in range(0, image.height(), 3)
    }
    assert outside == {"#ffffff"}, "nothing is drawn outside the target rect"
    inside = {
        image.pixelColor(x, y).name()
        for x in range(20, width + 20, 4)
        for y in range(20, height + 20, 4)
    }
    assert len(inside) > 5
    shots = Path("/tmp/shots")
    name = f"render_{width}x{height}.png"
    image.save(str(tmp_path / name))
    if shots.is_dir():
        shutil.copy(tmp_path / name, shots / name)


def test_render_diagram_of_empty_diagram_draws_nothing(qapp):
    image = QImage(50, 50, QImage.Format.Format_ARGB32_Premultiplied)
    image.fill(QColor("#FFFFFF"))
    painter = QPainter(image)
    render_diagram(painter, QRectF(0, 0, 50, 50), Diagram())
    painter.end()
    assert {image.pixelColor(x, y).name() for x in range(50) for y in range(50)} == {"#ffffff"}
