"""The project file: round trips exactly, refuses bad files plainly, saves atomically."""

from __future__ import annotations

import contextlib
import json
import os

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from covariscope.errors import ProjectFileError
from covariscope.model.diagram import Diagram, Node
from covariscope.model.project import (
    DataRef,
    Project,
    load_project,
    project_from_dict,
    project_to_dict,
    save_project,
)

EXAMPLE = {
    "format": "covariscope-project",
    "version": 1,
    "diagram": {
        "nodes": [
            {
                "id": "age",
                "label": "Age",
                "kind": "covariate",
                "measured": True,
                "column": "age",
                "x": 0,
                "y": 0,
                "note": "",
            },
            {"id": "smk", "kind": "exposure"},
            {"id": "sbp", "kind": "outcome"},
            {"id": "bmi"},
            {"id": "waist"},
        ],
        "arrows": [
            {"from": "age", "to": "sbp"},
            {"from": "age", "to": "smk"},
            {"from": "smk", "to": "sbp"},
        ],
        "proxies": [{"a": "bmi", "b": "waist"}],
    },
    "data": {"path": "cohort.csv", "sha256": "ab" * 32},
    "analysis": {"family": "linear", "proposed": ["age"]},
}


def write(tmp_path, obj, name="p.json"):
    path = tmp_path / name
    path.write_text(obj if isinstance(obj, str) else json.dumps(obj), encoding="utf-8")
    return path


def test_the_documented_example_loads_with_defaults(tmp_path):
    project = load_project(write(tmp_path, EXAMPLE))
    d = project.diagram
    assert d.node("smk").label == "smk"  # label defaults to the id
    assert d.node("bmi").measured is True
    assert d.proxies == [("bmi", "waist")]
    assert project.proposed == ["age"]
    assert project.data_path() == (tmp_path / "cohort.csv").resolve()


def test_save_then_load_is_identical(tmp_path):
    project = load_project(write(tmp_path, EXAMPLE))
    out = save_project(project, tmp_path / "again.json")
    first = out.read_text(encoding="utf-8")
    again = load_project(out)
    assert project_to_dict(again) == project_to_dict(project)
    save_project(again, out)
    assert out.read_text(encoding="utf-8") == first


def test_data_path_is_kept_relative_to_the_project(tmp_path):
    project = load_project(write(tmp_path, EXAMPLE))
    sub = tmp_path / "sub"
    sub.mkdir()
    save_project(project, sub / "moved.json")
    saved = json.loads((sub / "moved.json").read_text())
    assert saved["data"]["path"] == "../cohort.csv"
    assert load_project(sub / "moved.json").data_path() == (tmp_path / "cohort.csv").resolve()


@pytest.mark.parametrize(
    ("mutate", "expected"),
    [
        (
            lambda o: '{"format": "covariscope-project", "version": 1, "diagr',
            "not valid JSON at line 1",
        ),
        (lambda o: {**o, "version": 7}, "newer Covariscope"),
        (lambda o: {**o, "format": "other"}, "not a Covariscope project"),
        (lambda o: [1, 2], "must hold a JSON object"),
    ],
)
def test_unreadable_files_each_say_why(tmp_path, mutate, expected):
    with pytest.raises(ProjectFileError, match=expected):
        load_project(write(tmp_path, mutate(json.loads(json.dumps(EXAMPLE)))))


def _with(path_keys, value):
    obj = json.loads(json.dumps(EXAMPLE))
    target = obj
    for key in path_keys[:-1]:
        target = target[key]
    target[path_keys[-1]] = value
    return obj


@pytest.mark.parametrize(
    ("obj", "where"),
    [
        (
            _with(["diagram", "arrows"], [{"from": "age", "to": "smok"}]),
            'diagram.arrows[0].to: unknown node "smok"',
        ),
        (
            _with(["diagram", "nodes", 1, "measured"], "yes"),
            "diagram.nodes[1].measured: expected true or false, found text",
        ),
        (
            _with(["diagram", "nodes", 2, "kind"], "exposure"),
            'diagram.nodes[2]: "smk" is already the exposure',
        ),
        (
            _with(
                ["diagram", "arrows"], [{"from": "age", "to": "smk"}, {"from": "smk", "to": "age"}]
            ),
            "diagram.arrows[1]: The arrow smk → age would close the cycle smk → age → smk",
        ),
        (_with(["analysis", "proposed"], ["smk"]), 'analysis.proposed[0]: "smk" is the exposure'),
        (_with(["analysis", "family"], "probit"), 'analysis.family: "probit" is not one of'),
        (
            _with(["diagram", "nodes", 0, "x"], "left"),
            "diagram.nodes[0].x: expected a number, found text",
        ),
    ],
)
def test_invalid_projects_name_the_place(tmp_path, obj, where):
    with pytest.raises(ProjectFileError) as info:
        load_project(write(tmp_path, obj))
    assert any(where in p for p in info.value.problems), info.value.problems


def test_every_problem_is_reported_at_once(tmp_path):
    obj = _with(["diagram", "arrows"], [{"from": "nope", "to": "sbp"}, {"from": "age", "to": 3}])
    obj["analysis"]["family"] = "probit"
    with pytest.raises(ProjectFileError) as info:
        load_project(write(tmp_path, obj))
    assert len(info.value.problems) == 3


def test_save_is_atomic_and_a_failed_save_keeps_the_old_file(tmp_path, monkeypatch):
    project = load_project(write(tmp_path, EXAMPLE))
    target = save_project(project, tmp_path / "p.json")
    original = target.read_text()
    project.diagram.update_node("age", note="changed")

    def broken(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "replace", broken)
    with pytest.raises(ProjectFileError, match="No space left"):
        save_project(project, target)
    assert target.read_text() == original
    assert [p.name for p in tmp_path.iterdir() if p.name.endswith(".tmp")] == []


node_ids = st.text(alphabet="abcdefghij_", min_size=1, max_size=6).filter(lambda s: s[0] != "_")
texts = st.text(max_size=40)


@st.composite
def projects(draw):
    d = Diagram()
    ids = draw(st.lists(node_ids, min_size=2, max_size=8, unique=True))
    for i, node_id in enumerate(ids):
        kind = "exposure" if i == 0 else "outcome" if i == 1 else "covariate"
        d.add_node(
            Node(
                node_id,
                label=draw(texts) or node_id,
                kind=kind,
                measured=draw(st.booleans()),
                column=draw(st.one_of(st.none(), node_ids)),
                x=draw(st.floats(-1e4, 1e4)),
                y=draw(st.floats(-1e4, 1e4)),
                note=draw(texts),
            )
        )
    for a, b in draw(st.lists(st.tuples(st.sampled_from(ids), st.sampled_from(ids)), max_size=12)):
        with contextlib.suppress(Exception):
            d.add_arrow(a, b)
    covs = ids[2:]
    if len(covs) >= 2 and draw(st.booleans()):
        with contextlib.suppress(Exception):
            d.add_proxy(covs[0], covs[1])
    p = Project(d, DataRef("data.csv", None))
    p.set_proposed(draw(st.lists(st.sampled_from(covs), unique=True)) if covs else [])
    return p


@settings(max_examples=40, deadline=None)
@given(projects())
def test_property_save_then_load_is_identical(tmp_path_factory, project):
    folder = tmp_path_factory.mktemp("rt")
    path = save_project(project, folder / "x.json")
    assert project_to_dict(load_project(path)) == project_to_dict(project)
    assert project_to_dict(project_from_dict(project_to_dict(project))) == project_to_dict(project)


def test_spline_choices_are_saved_and_checked(tmp_path):
    obj = _with(["analysis", "spline_knots"], {"age": 4})
    project = load_project(write(tmp_path, obj))
    assert project.analysis.spline_knots == {"age": 4}
    again = load_project(save_project(project, tmp_path / "again.json"))
    assert again.analysis.spline_knots == {"age": 4}
    # a linear project writes no spline entry at all
    assert "spline_knots" not in project_to_dict(load_project(write(tmp_path, EXAMPLE)))["analysis"]
    with pytest.raises(ProjectFileError) as info:
        load_project(write(tmp_path, _with(["analysis", "spline_knots"], {"age": 12})))
    assert any("analysis.spline_knots.age" in p and "3 to 7" in p for p in info.value.problems)
