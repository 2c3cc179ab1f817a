"""The diagram as the canvas and other programs see it, without Qt.

Pairs with :mod:`covariscope.qt.canvas`: what the canvas writes beside each
covariate after an analysis (role and verdict, in the vocabulary's words), and
the GraphML export, which the command line writes without a display.

GraphML node keys are our own: ``cs_label``, ``cs_kind``, ``cs_measured``,
``cs_column`` (empty when unbound), ``cs_x``, ``cs_y``.  Arrows are edges
with ``cs_link = "arrow"``; proxy links are edges with ``cs_link = "proxy"``
(one per pair, written from the first id to the second; they are undirected).
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

import networkx as nx

from covariscope.errors import CovariscopeError
from covariscope.model.diagram import Diagram
from covariscope.study.result import StudyResult

__all__ = ["CanvasAnnotations", "canvas_annotations", "diagram_to_graphml_graph", "export_graphml"]


@dataclass(frozen=True)
class CanvasAnnotations:
    """Role code per covariate id, and (verdict code, verdict label) per covariate id."""

    roles: dict[str, str]
    verdicts: dict[str, tuple[str, str]]


def canvas_annotations(result: StudyResult) -> CanvasAnnotations:
    """What the canvas shows beside each covariate after an analysis."""
    return CanvasAnnotations(
        roles={k: v.role for k, v in result.diagram.roles.items()},
        verdicts={k: (v.code, v.label) for k, v in result.verdicts.items()},
    )


def diagram_to_graphml_graph(diagram: Diagram) -> nx.MultiDiGraph:
    """The diagram as a networkx graph carrying our GraphML attributes."""
    graph = nx.MultiDiGraph()
    for n in diagram.nodes:
        graph.add_node(
            n.id,
            cs_label=n.label,
            cs_kind=n.kind,
            cs_measured=bool(n.measured),
            cs_column=n.column or "",
            cs_x=float(n.x),
            cs_y=float(n.y),
        )
    for a, b in diagram.arrows:
        graph.add_edge(a, b, key="arrow", cs_link="arrow")
    for a, b in diagram.proxies:
        graph.add_edge(a, b, key="proxy", cs_link="proxy")
    return graph


def export_graphml(diagram: Diagram, path: str | os.PathLike[str]) -> Path:
    """Write the diagram as GraphML (an open standard other tools read)."""
    path = Path(path)
    if not path.parent.exists():
        raise CovariscopeError(f"Cannot export to {path}: the folder {path.parent} does not exist.")
    try:
        nx.write_graphml(diagram_to_graphml_graph(diagram), path, named_key_ids=True)
    except OSError as exc:
        raise CovariscopeError(f"Could not write {path}: {exc.strerror or exc}.") from None
    return path
