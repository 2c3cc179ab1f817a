"""Property: any JSON value given to the project loader ends in a project or
a ProjectFileError, never another exception."""

from __future__ import annotations

import contextlib
import json
import math

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from covariscope.errors import CovariscopeError
from covariscope.model.project import load_project, project_from_dict, project_to_dict

SETTINGS = settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)

scalars = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(min_value=-(10**60), max_value=10**60),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=8),
    st.sampled_from(["x", "y", "c", "exposure", "outcome", "covariate", "linear", "c|d"]),
)
json_values = st.recursive(
    scalars,
    lambda inner: st.one_of(
        st.lists(inner, max_size=4),
        st.dictionaries(
            st.sampled_from(
                [
                    "id",
                    "kind",
                    "x",
                    "y",
                    "from",
                    "to",
                    "a",
                    "b",
                    "nodes",
                    "arrows",
                    "proxies",
                    "thresholds",
                    "vif",
                    "r2",
                    "keep_choices",
                    "column",
                    "note",
                    "path",
                    "zz",
                ]
            ),
            inner,
            max_size=5,
        ),
    ),
    max_leaves=20,
)


def _project_like(diagram, analysis, data):
    return {
        "format": "covariscope-project",
        "version": 1,
        "diagram": diagram,
        "analysis": analysis,
        "data": data,
    }


@SETTINGS
@given(json_values)
def test_any_json_value_is_a_project_or_a_plain_error(value):
    with contextlib.suppress(CovariscopeError):
        project_from_dict(value)


@SETTINGS
@given(json_values, json_values, json_values)
def test_any_project_shaped_value_is_a_project_or_a_plain_error(diagram, analysis, data):
    try:
        project = project_from_dict(_project_like(diagram, analysis, data))
    except CovariscopeError:
        return
    saved = project_to_dict(project)  # what loads, saves as finite JSON
    json.dumps(saved, allow_nan=False)
    for node in saved["diagram"]["nodes"]:
        assert math.isfinite(node["x"])
        assert math.isfinite(node["y"])


@SETTINGS
@given(json_values)
def test_any_file_text_loads_or_fails_plainly(tmp_path_factory, value):
    path = tmp_path_factory.mktemp("p") / "p.json"
    path.write_text(json.dumps(_project_like(value, {}, None), allow_nan=True))
    with contextlib.suppress(CovariscopeError):
        load_project(path)


@SETTINGS
@given(st.binary(max_size=200))
def test_any_bytes_load_or_fail_plainly(tmp_path_factory, raw):
    path = tmp_path_factory.mktemp("p") / "p.json"
    path.write_bytes(raw)
    with contextlib.suppress(CovariscopeError):
        load_project(path)


numbers = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True),
    st.integers(min_value=-(10**400), max_value=10**400),
    scalars,
)
nodes = st.lists(
    st.fixed_dictionaries(
        {"id": st.sampled_from(["x", "y", "c", "d", "e"])},
        optional={
            "kind": st.sampled_from(["exposure", "outcome", "covariate", "zz"]),
            "x": numbers,
            "y": numbers,
            "measured": scalars,
        },
    ),
    max_size=6,
)
links = st.lists(
    st.fixed_dictionaries(
        {
            "from": st.sampled_from(["x", "y", "c", "d", "q"]),
            "to": st.sampled_from(["x", "y", "c", "d"]),
        }
    ),
    max_size=6,
)
proxies = st.lists(
    st.fixed_dictionaries(
        {"a": st.sampled_from(["x", "y", "c", "d"]), "b": st.sampled_from(["x", "y", "c", "d"])}
    ),
    max_size=3,
)
analysis = st.fixed_dictionaries(
    {},
    optional={
        "thresholds": st.dictionaries(
            st.sampled_from(["vif", "r2", "change_pct", "condition_index"]), numbers, max_size=3
        ),
        "keep_choices": st.dictionaries(
            st.sampled_from(["c|d", "c|x", "d|e"]), st.sampled_from(["c", "d", "x"]), max_size=2
        ),
        "reference_levels": st.dictionaries(st.sampled_from(["c", "d"]), numbers, max_size=2),
    },
)


@settings(max_examples=150, deadline=None)
@given(nodes, links, proxies, analysis)
def test_a_project_that_loads_holds_only_usable_values(node_list, arrows, proxy_list, settings_):
    raw = _project_like(
        {"nodes": node_list, "arrows": arrows, "proxies": proxy_list}, settings_, None
    )
    try:
        project = project_from_dict(raw)
    except CovariscopeError:
        return
    saved = project_to_dict(project)
    json.dumps(saved, allow_nan=False)  # raises on NaN or infinity
    for node in saved["diagram"]["nodes"]:
        assert abs(node["x"]) <= 1e7
        assert abs(node["y"]) <= 1e7
    for value in saved["analysis"]["thresholds"].values():
        assert 0 < value < 1e7
    kinds = {n["id"]: n["kind"] for n in saved["diagram"]["nodes"]}
    for link in saved["diagram"]["proxies"]:
        assert {kinds[link["a"]], kinds[link["b"]]} != {"exposure", "outcome"}
    for key, member in saved["analysis"]["keep_choices"].items():
        assert member in key.split("|")
