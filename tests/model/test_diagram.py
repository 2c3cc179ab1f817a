"""The diagram refuses what a causal diagram cannot hold, and says why."""

from __future__ import annotations

import itertools

import networkx as nx
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from covariscope.errors import CycleError, DiagramError
from covariscope.model.diagram import Diagram, Node


def chain(*ids: str) -> Diagram:
    d = Diagram()
    for i in ids:
        d.add_node(Node(i))
    for a, b in itertools.pairwise(ids):
        d.add_arrow(a, b)
    return d


def test_cycle_is_refused_and_named_from_the_new_arrow():
    d = chain("a", "b", "c")
    before = d.to_dict()
    with pytest.raises(CycleError) as info:
        d.add_arrow("c", "a")
    assert "c → a → b → c" in str(info.value)
    assert info.value.cycle == ["c", "a", "b", "c"]
    assert d.to_dict() == before


@pytest.mark.parametrize(
    ("edit", "message"),
    [
        (lambda d: d.add_arrow("a", "a"), "to itself"),
        (lambda d: d.add_arrow("a", "b"), "already in the diagram"),
        (lambda d: d.add_arrow("a", "zz"), 'no node "zz"'),
        (lambda d: d.add_node(Node("a")), "already exists"),
        (lambda d: d.add_proxy("a", "a"), "to itself"),
        (lambda d: d.add_node(Node("1x")), "cannot be a node id"),
        (lambda d: d.remove_node("a"), "still has arrows"),
        (lambda d: d.add_node(Node("q", kind="mystery")), "not a node kind"),
    ],
)
def test_refused_edits_leave_the_diagram_unchanged(edit, message):
    d = chain("a", "b", "c")
    before = d.to_dict()
    with pytest.raises(DiagramError, match=message):
        edit(d)
    assert d.to_dict() == before


def test_one_exposure_and_one_outcome():
    d = Diagram()
    d.add_node(Node("x", kind="exposure"))
    with pytest.raises(DiagramError, match="already the exposure"):
        d.add_node(Node("x2", kind="exposure"))
    with pytest.raises(DiagramError, match="no outcome"):
        d.require_question()
    d.add_node(Node("y", kind="outcome"))
    assert d.require_question() == ("x", "y")
    with pytest.raises(DiagramError, match="already the outcome"):
        d.update_node("x", kind="outcome")


def test_proxy_merge_that_closes_a_cycle_is_refused():
    # a → m → b: treating a and b as one measure would make a|b cause itself.
    d = chain("a", "m", "b")
    with pytest.raises(CycleError, match=r"a\|b → m → a\|b"):
        d.add_proxy("a", "b")
    assert d.proxies == []


def test_arrow_closing_a_cycle_through_a_measure_group_is_refused():
    d = chain("a", "m")
    d.add_node(Node("b"))
    d.add_proxy("a", "b")
    with pytest.raises(CycleError, match="would close the cycle"):
        d.add_arrow("m", "b")


def test_proxy_to_exposure_is_not_merged():
    # A proxy of the exposure may be caused by it: not a cycle.
    d = Diagram()
    d.add_node(Node("x", kind="exposure"))
    d.add_node(Node("xm"))
    d.add_arrow("x", "xm")
    d.add_proxy("x", "xm")
    assert d.proxies == [("x", "xm")]


def test_to_networkx_carries_kinds_measured_and_proxies():
    d = Diagram()
    d.add_node(Node("x", kind="exposure"))
    d.add_node(Node("y", kind="outcome"))
    d.add_node(Node("u", measured=False))
    d.add_node(Node("w"))
    d.add_arrow("u", "x")
    d.add_arrow("u", "y")
    d.add_proxy("u", "w")
    g = d.to_networkx()
    assert g.nodes["u"] == {"kind": "covariate", "measured": False, "label": "u"}
    assert g.graph["proxies"] == [("u", "w")]
    assert set(g.edges) == {("u", "x"), ("u", "y")}


def test_events_are_fine_grained():
    d = chain("a", "b")
    seen = []
    d.subscribe(seen.append)
    d.update_node("a", label="Age")
    d.remove_arrow("a", "b")
    assert [e.kind for e in seen] == ["node_changed", "arrow_removed"]
    assert seen[0].changes == {"label": ("a", "Age")}


ids = st.sampled_from(list("abcdefg"))


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(ids, ids), max_size=30))
def test_an_arrow_that_closes_a_cycle_is_always_refused(pairs):
    """Property: the diagram is always acyclic, and a refusal changes nothing."""
    d = Diagram()
    for i in "abcdefg":
        d.add_node(Node(i))
    for a, b in pairs:
        before = d.to_dict()
        graph = d.to_networkx()
        graph.add_edge(a, b)
        would_cycle = a == b or not nx.is_directed_acyclic_graph(graph)
        try:
            d.add_arrow(a, b)
        except CycleError:
            assert would_cycle
            assert d.to_dict() == before
        except DiagramError:
            assert d.to_dict() == before
        else:
            assert not would_cycle
        assert nx.is_directed_acyclic_graph(d.to_networkx())


def test_a_kind_change_cannot_proxy_link_the_exposure_to_the_outcome():
    d = Diagram()
    d.add_node(Node("x", kind="exposure"))
    d.add_node(Node("y", kind="outcome"))
    d.add_node(Node("w"))
    d.add_proxy("y", "w")
    d.update_node("x", kind="covariate")
    with pytest.raises(DiagramError, match="Remove the link first"):
        d.update_node("w", kind="exposure")
    assert d.node("w").kind == "covariate"
