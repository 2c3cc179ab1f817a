"""The Qt layer reads the study result, the project and the column profiles
by attribute: no ``getattr`` with a default, no parameter for them typed
``Any`` (STYLE: typed results across every seam).  Every module of
``covariscope.qt`` is checked from its source, so a new widget is covered the
day it is added."""

from __future__ import annotations

import ast
import importlib.util
from pathlib import Path

import pytest

#: modules that may call getattr, and why
GETATTR_ALLOWED = {
    # the canvas view's own zoom flag and the window's shutting-down flag
    "main_window.py",
    # reads dataclass parameters off any frame it samples
    "stall_meter.py",
}
#: parameters that carry the project, the result, the profiles or a verdict
TYPED_PARAMETERS = {"project", "result", "profiles", "verdict"}


def _qt_sources() -> list[Path]:
    spec = importlib.util.find_spec("covariscope.qt")
    assert spec is not None
    assert spec.submodule_search_locations
    return sorted(Path(next(iter(spec.submodule_search_locations))).rglob("*.py"))


SOURCES = _qt_sources()


def _tree(path: Path) -> ast.Module:
    return ast.parse(path.read_text(encoding="utf-8"))


def test_every_widget_is_checked():
    names = {p.name for p in SOURCES}
    assert {"review_table.py", "diagnostics.py", "estimates_strip.py", "drawing.py"} <= names
    assert names >= GETATTR_ALLOWED  # an allowance outlives no module


@pytest.mark.parametrize(
    "path", [p for p in SOURCES if p.name not in GETATTR_ALLOWED], ids=lambda p: p.name
)
def test_qt_calls_no_getattr(path):
    calls = [
        node.lineno
        for node in ast.walk(_tree(path))
        if isinstance(node, ast.Call)
        and isinstance(node.func, ast.Name)
        and node.func.id == "getattr"
    ]
    assert calls == []


@pytest.mark.parametrize("path", SOURCES, ids=lambda p: p.name)
def test_qt_types_the_result_it_shows(path):
    loose = [
        (node.name, arg.arg)
        for node in ast.walk(_tree(path))
        if isinstance(node, ast.FunctionDef)
        for arg in node.args.args + node.args.kwonlyargs
        if arg.arg in TYPED_PARAMETERS
        and (arg.annotation is None or "Any" in ast.unparse(arg.annotation))
    ]
    assert loose == []
