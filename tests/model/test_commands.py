"""Every edit undoes exactly: the saved form before and after a round trip is the same."""

from __future__ import annotations

import json

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from covariscope.errors import DiagramError
from covariscope.model import commands as c
from covariscope.model.diagram import Node
from covariscope.model.project import Project, project_to_dict


def saved(project: Project) -> str:
    return json.dumps(project_to_dict(project), sort_keys=True)


def base() -> Project:
    p = Project()
    h = c.History()
    for node in (
        Node("x", kind="exposure", x=0),
        Node("y", kind="outcome", x=300),
        Node("a", x=100, y=-80),
        Node("b", x=200, y=-80),
        Node("m", x=150, y=60),
        Node("w", x=250, y=90),
    ):
        h.push(c.AddNode(p, node))
    for arrow in (("a", "x"), ("a", "y"), ("x", "m"), ("m", "y"), ("b", "y")):
        h.push(c.AddArrow(p, *arrow))
    h.push(c.AddProxy(p, "a", "b"))
    h.push(c.SetProposed(p, ["a", "m"]))
    return p


EDITS = {
    "add node": lambda p: c.AddNode(p, Node("z", x=5, y=6)),
    "remove node with arrows, proxy and proposal": lambda p: c.RemoveNode(p, "a"),
    "rename": lambda p: c.UpdateNode(p, "a", label="Age at entry"),
    "mark unmeasured": lambda p: c.UpdateNode(p, "b", measured=False),
    "bind column": lambda p: c.UpdateNode(p, "m", column="marker"),
    "note": lambda p: c.UpdateNode(p, "m", note="on the pathway"),
    "move": lambda p: c.MoveNodes(
        p, {"a": ((100, -80), (120, -90)), "b": ((200, -80), (210, -70))}
    ),
    "set kind exposure (old exposure demoted)": lambda p: c.SetKind(p, "a", "exposure"),
    "add arrow": lambda p: c.AddArrow(p, "b", "x"),
    "remove arrow": lambda p: c.RemoveArrow(p, "x", "m"),
    "reverse arrow": lambda p: c.ReverseArrow(p, "x", "m"),
    "add proxy": lambda p: c.AddProxy(p, "b", "w"),
    "remove proxy": lambda p: c.RemoveProxy(p, "a", "b"),
    "proposed set": lambda p: c.SetProposed(p, ["b"]),
    "macro": lambda p: c.Macro("two", [c.RemoveNode(p, "m"), c.AddArrow(p, "b", "x")]),
}


@pytest.mark.parametrize("name", list(EDITS))
def test_undo_then_redo_returns_the_saved_form(name):
    p = base()
    h = c.History()
    before = saved(p)
    h.push(EDITS[name](p))
    after = saved(p)
    assert after != before
    h.undo()
    assert saved(p) == before
    h.redo()
    assert saved(p) == after


def test_a_refused_macro_changes_nothing():
    p = base()
    before = saved(p)
    macro = c.Macro("bad", [c.AddArrow(p, "b", "x"), c.AddArrow(p, "y", "a")])
    with pytest.raises(DiagramError, match="cycle"):
        c.History().push(macro)
    assert saved(p) == before


def test_set_kind_removes_a_new_exposure_from_the_proposed_set():
    p = base()
    c.History().push(c.SetKind(p, "a", "exposure"))
    assert p.diagram.node("x").kind == "covariate"
    assert "a" not in p.proposed


ops = st.lists(
    st.tuples(
        st.sampled_from(
            [
                "add",
                "remove",
                "arrow",
                "unarrow",
                "reverse",
                "proxy",
                "kind",
                "propose",
                "undo",
                "redo",
            ]
        ),
        st.sampled_from(["x", "y", "a", "b", "m", "z", "w"]),
        st.sampled_from(["x", "y", "a", "b", "m", "z", "w"]),
        st.sampled_from(["exposure", "outcome", "covariate"]),
    ),
    max_size=25,
)


def _make(p: Project, op: str, u: str, v: str, kind: str) -> c.Command:
    return {
        "add": lambda: c.AddNode(p, Node(u)),
        "remove": lambda: c.RemoveNode(p, u),
        "arrow": lambda: c.AddArrow(p, u, v),
        "unarrow": lambda: c.RemoveArrow(p, u, v),
        "reverse": lambda: c.ReverseArrow(p, u, v),
        "proxy": lambda: c.AddProxy(p, u, v),
        "kind": lambda: c.SetKind(p, u, kind),
        "propose": lambda: c.SetProposed(p, [u]),
    }[op]()


@settings(max_examples=80, deadline=None)
@given(ops)
def test_no_sequence_of_edits_crashes_and_undo_all_restores(sequence):
    """Property: any edit either applies or is refused with a DiagramError,
    and undoing everything returns the starting saved form."""
    p = base()
    start = saved(p)
    h = c.History()
    for op, u, v, kind in sequence:
        if op == "undo":
            h.undo()
            continue
        if op == "redo":
            h.redo()
            continue
        before = saved(p)
        try:
            h.push(_make(p, op, u, v, kind))
        except DiagramError:
            assert saved(p) == before
    while h.undo():
        pass
    assert saved(p) == start
