"""The panels that show a study result read it by attribute: no ``getattr``
with a default, no parameters typed ``Any`` for the project, the result or
the column profiles (STYLE: typed results across every seam)."""

from __future__ import annotations

import ast
import importlib.util
from pathlib import Path

import pytest

PANELS = [
    "covariscope.qt.canvas.drawing",
    "covariscope.qt.claims_panel",
    "covariscope.qt.data_panel",
    "covariscope.qt.diagnostics",
    "covariscope.qt.estimates_strip",
    "covariscope.qt.output",
    "covariscope.qt.review_table",
]
#: parameters that carry the project, the result or the profiles
TYPED_PARAMETERS = {"project", "result", "profiles", "verdict"}


def _tree(name: str) -> ast.Module:
    spec = importlib.util.find_spec(name)
    assert spec is not None
    assert spec.origin is not None
    return ast.parse(Path(spec.origin).read_text(encoding="utf-8"))


@pytest.mark.parametrize("name", PANELS)
def test_panels_call_no_getattr(name):
    calls = [
        node.lineno
        for node in ast.walk(_tree(name))
        if isinstance(node, ast.Call)
        and isinstance(node.func, ast.Name)
        and node.func.id == "getattr"
    ]
    assert calls == []


@pytest.mark.parametrize("name", PANELS)
def test_panels_type_the_result_they_show(name):
    loose = [
        (node.name, arg.arg)
        for node in ast.walk(_tree(name))
        if isinstance(node, ast.FunctionDef)
        for arg in node.args.args + node.args.kwonlyargs
        if arg.arg in TYPED_PARAMETERS
        and (arg.annotation is None or "Any" in ast.unparse(arg.annotation))
    ]
    assert loose == []
