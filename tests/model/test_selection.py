"""Copy and paste of part of a diagram, without a window: what a copied
selection holds, how pasted copies are named and placed, which links come
along, and how strictly a payload read back from the clipboard is checked."""

from __future__ import annotations

import json

import pytest

from covariscope.model import commands as c
from covariscope.model.diagram import Node
from covariscope.model.project import Project, project_to_dict
from covariscope.model.selection import (
    MAX_SELECTION_BYTES,
    PASTE_OFFSET,
    SELECTION_FORMAT,
    copied_selection,
    paste_command,
    selection_from_json,
    selection_text,
)


def saved(project: Project) -> str:
    return json.dumps(project_to_dict(project), sort_keys=True)


def base() -> Project:
    """Exposure x, outcome y; a -> x, a -> y, x -> m -> y, b -> y; a and b proxies."""
    p = Project()
    h = c.History()
    for node in (
        Node("x", kind="exposure", x=0),
        Node("y", kind="outcome", x=300),
        Node("a", x=100, y=-80),
        Node("b", x=200, y=-80),
        Node("m", x=150, y=60),
    ):
        h.push(c.AddNode(p, node))
    for arrow in (("a", "x"), ("a", "y"), ("x", "m"), ("m", "y"), ("b", "y")):
        h.push(c.AddArrow(p, *arrow))
    h.push(c.AddProxy(p, "a", "b"))
    return p


def test_a_copy_holds_the_chosen_nodes_and_only_the_links_among_them():
    p = base()
    clip = copied_selection(p.diagram, ["a", "x", "b"])
    assert clip["format"] == SELECTION_FORMAT
    assert [n["id"] for n in clip["nodes"]] == ["a", "x", "b"]
    # a -> y, x -> m and b -> y leave the selection: they stay behind
    assert clip["arrows"] == [["a", "x"]]
    assert clip["proxies"] == [["a", "b"]]
    assert clip["nodes"][0] == p.diagram.to_dict()["nodes"][2]
    assert selection_text(clip) == "a\nx\nb"
    # the copy travels as JSON and comes back the same
    back = selection_from_json(json.dumps(clip).encode())
    assert back is not None
    assert (back["nodes"], back["arrows"], back["proxies"]) == (
        clip["nodes"],
        clip["arrows"],
        clip["proxies"],
    )


def test_paste_makes_fresh_ids_shifted_with_their_links():
    p = base()
    clip = copied_selection(p.diagram, ["a", "b", "m"])
    pasted = paste_command(p, clip)
    assert pasted is not None
    assert pasted.ids == ("a_2", "b_2", "m_2")
    assert pasted.command.text == "Paste 3 nodes"
    h = c.History()
    h.push(pasted.command)
    d = p.diagram
    for old, new in zip(("a", "b", "m"), pasted.ids, strict=True):
        assert (d.node(new).x, d.node(new).y) == (
            d.node(old).x + PASTE_OFFSET,
            d.node(old).y + PASTE_OFFSET,
        )
        assert d.node(new).label == d.node(old).label
    # a -> x, x -> m and m -> y have an end outside the selection: not pasted
    assert {a for a in d.arrows if a[0] in pasted.ids or a[1] in pasted.ids} == set()
    assert ("a_2", "b_2") in d.proxies
    # pasting the same copy again takes the next free ids
    again = paste_command(p, clip, (0.0, 10.0))
    assert again is not None
    assert again.ids == ("a_3", "b_3", "m_3")
    h.push(again.command)
    assert p.diagram.node("a_3").y == p.diagram.node("a").y + 10.0


def test_paste_is_one_undo_step():
    p = base()
    before = saved(p)
    pasted = paste_command(p, copied_selection(p.diagram, ["a", "x", "m"]))
    assert pasted is not None
    h = c.History()
    h.push(pasted.command)
    assert ("a_2", "x_2") in p.diagram.arrows
    assert ("x_2", "m_2") in p.diagram.arrows
    h.undo()
    assert saved(p) == before


def test_a_second_exposure_or_outcome_comes_in_as_a_covariate():
    p = base()
    pasted = paste_command(p, copied_selection(p.diagram, ["x", "y"]))
    assert pasted is not None
    c.History().push(pasted.command)
    assert [p.diagram.node(i).kind for i in pasted.ids] == ["covariate", "covariate"]
    assert p.diagram.exposure is not None
    assert p.diagram.exposure.id == "x"
    # into an empty diagram they keep their kinds (only the first of each)
    empty = Project()
    clip = copied_selection(p.diagram, ["x", "x_2", "y"])
    into = paste_command(empty, clip)
    assert into is not None
    c.History().push(into.command)
    assert [empty.diagram.node(i).kind for i in into.ids] == ["exposure", "covariate", "outcome"]


def test_an_empty_selection_pastes_nothing():
    p = base()
    assert paste_command(p, copied_selection(p.diagram, [])) is None


# moved from tests/qt/test_clipboard_payloads: the checks are the model's
@pytest.mark.parametrize(
    "raw",
    [
        b"[" * 100_000 + b"]" * 100_000,  # nested past any recursion limit
        json.dumps(
            {"nodes": [{"id": "a", "note": [[[[[[[[[[[[[[[[[[[[1]]]]]]]]]]]]]]]]]]]]}]}
        ).encode(),
        b'{"nodes": [{"id": "a", "x": NaN}]}',
        b'{"nodes": [{"id": "a", "x": 1e400}]}',
        b'{"nodes": [{"id": "a", "x": ' + b"9" * 5000 + b"}]}",
        b'{"nodes": [{"id": "a", "id": "b"}]}',
        b'{"nodes": [{"x": 1}]}',  # no id
        b'{"nodes": ["a"]}',
        b'{"nodes": []}',
        b'{"nodes": [{"id": "a"}, {"id": "b"}], "arrows": [["a"]]}',
        b'{"nodes": [{"id": "a"}, {"id": "b"}], "arrows": [["a", "b"], ["b", "a"]]}',  # cycle
        b'{"nodes": [{"id": "a", "kind": "boss"}]}',
        b"\xff\xfe not text",
        b"",
        b'{"nodes": [{"id": "a"}], "pad": "' + b" " * MAX_SELECTION_BYTES + b'"}',
    ],
)
def test_a_bad_payload_is_no_selection(raw):
    assert selection_from_json(raw) is None


def test_a_good_payload_comes_back_checked():
    good = {"nodes": [{"id": "a", "x": 1.0, "y": 2.0}, {"id": "b"}], "arrows": [["a", "b"]]}
    clip = selection_from_json(json.dumps(good).encode())
    assert clip is not None
    assert [n["id"] for n in clip["nodes"]] == ["a", "b"]
    assert clip["arrows"] == [["a", "b"]]
    assert clip["proxies"] == []


def test_a_link_to_a_node_not_pasted_stays_behind():
    p = base()
    clip = copied_selection(p.diagram, ["a", "b"])
    clip["arrows"].append(["a", "x"])  # x is not in the selection
    clip["proxies"].append(["m", "b"])
    pasted = paste_command(p, clip)
    assert pasted is not None
    c.History().push(pasted.command)
    assert [a for a in p.diagram.arrows if "a_2" in a or "b_2" in a] == []
    assert [q for q in p.diagram.proxies if "a_2" in q or "b_2" in q] == [("a_2", "b_2")]
