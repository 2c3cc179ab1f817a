"""Automatic layered layout: exposure left of outcome, causes before effects."""

from __future__ import annotations

import networkx as nx
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from covariscope.model.diagram import Diagram, Node
from covariscope.model.layout import layer_of, layered_layout


def _diagram(arrows, extra=(), proxies=()):
    d = Diagram()
    ids = dict.fromkeys([x for pair in arrows for x in pair] + list(extra))
    for node_id in ids:
        kind = {"x": "exposure", "y": "outcome"}.get(node_id, "covariate")
        d.add_node(Node(node_id, kind=kind))
    for a, b in arrows:
        d.add_arrow(a, b)
    for a, b in proxies:
        d.add_proxy(a, b)
    return d


def test_confounder_mediator_collider():
    d = _diagram([("c", "x"), ("c", "y"), ("x", "m"), ("m", "y"), ("x", "s"), ("y", "s")])
    pos = layered_layout(d, origin=(0.0, 0.0))
    assert pos["x"][0] < pos["y"][0]
    for a, b in d.arrows:
        assert pos[a][0] < pos[b][0], (a, b)
    assert pos["x"][1] == pos["y"][1]  # exposure and outcome share the main row
    assert pos["m"][1] != pos["x"][1]  # nothing sits on the line between them


def test_outcome_right_of_unrelated_chain():
    d = _diagram([("x", "a"), ("p", "q"), ("q", "r"), ("r", "s")], extra=["y"])
    layers = layer_of(d)
    assert layers["y"] > layers["x"]
    assert layers["y"] > max(layers[n] for n in ("p", "q", "r", "s"))


def test_lone_proxy_stands_beside_its_partner():
    d = _diagram([("x", "m"), ("m", "y")], extra=["w"], proxies=[("m", "w")])
    pos = layered_layout(d, origin=(0.0, 0.0))
    assert pos["w"][0] == pos["m"][0]
    assert abs(pos["w"][1] - pos["m"][1]) == 100.0


def test_no_two_nodes_share_a_place():
    d = _diagram([("c", "x"), ("c", "y"), ("x", "y"), ("d", "x"), ("e", "y"), ("d", "e")])
    pos = layered_layout(d)
    assert len(set(pos.values())) == len(pos)


@settings(max_examples=40, deadline=None)
@given(st.data())
def test_every_arrow_points_rightwards(data):
    """Property: for random DAGs (networkx checks acyclicity), every arrow goes
    from a lower to a higher column and the exposure is left of the outcome."""
    n = data.draw(st.integers(3, 9))
    names = ["x", "y"] + [f"v{i}" for i in range(n - 2)]
    order = data.draw(st.permutations(names))
    pairs = [(order[i], order[j]) for i in range(n) for j in range(i + 1, n)]
    chosen = data.draw(st.lists(st.sampled_from(pairs), unique=True, max_size=12))
    d = _diagram(chosen, extra=names)
    assert nx.is_directed_acyclic_graph(d.to_networkx())
    pos = layered_layout(d, origin=(0.0, 0.0))
    for a, b in d.arrows:
        assert pos[a][0] < pos[b][0]
    assert pos["x"][0] < pos["y"][0] or nx.has_path(d.to_networkx(), "y", "x")
    assert len(set(pos.values())) == len(pos)


def test_empty_diagram():
    assert layered_layout(Diagram()) == {}


@pytest.mark.parametrize("origin", [(0.0, 0.0), (50.0, -20.0)])
def test_origin_is_top_left(origin):
    d = _diagram([("c", "x"), ("x", "y")])
    pos = layered_layout(d, origin=origin)
    assert min(p[0] for p in pos.values()) == origin[0]
    assert min(p[1] for p in pos.values()) == origin[1]


def test_a_tall_layer_wraps_into_sub_columns():
    """Forty nodes, thirty of them causes of both exposure and outcome: the
    layout wraps the tall layer so it is not a single column forty rows high."""
    arrows = [("x", "y")]
    arrows += [(f"c{i}", "x") for i in range(30)] + [(f"c{i}", "y") for i in range(30)]
    arrows += [("x", f"m{i}") for i in range(4)] + [(f"m{i}", "y") for i in range(4)]
    arrows += [("y", f"d{i}") for i in range(4)]
    d = _diagram(arrows)
    assert len(d) == 40
    pos = layered_layout(d, origin=(0.0, 0.0), max_rows=8)
    per_column: dict[float, int] = {}
    for x, _ in pos.values():
        per_column[x] = per_column.get(x, 0) + 1
    assert max(per_column.values()) <= 8
    width = max(p[0] for p in pos.values()) - min(p[0] for p in pos.values())
    height = max(p[1] for p in pos.values()) - min(p[1] for p in pos.values())
    assert height <= 8 * 100.0
    assert width >= height / 2  # no longer tall and thin
    for a, b in d.arrows:
        assert pos[a][0] < pos[b][0], (a, b)
    assert pos["x"][1] == pos["y"][1]
    assert len(set(pos.values())) == len(pos)
    unwrapped = layered_layout(d, origin=(0.0, 0.0), max_rows=100)
    assert max(p[1] for p in unwrapped.values()) > 2 * height


def test_small_layers_are_not_wrapped():
    d = _diagram([(f"c{i}", "x") for i in range(8)] + [("x", "y")])
    pos = layered_layout(d, origin=(0.0, 0.0), max_rows=8)
    assert len({pos[f"c{i}"][0] for i in range(8)}) == 1
