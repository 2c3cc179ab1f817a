"""Views that take the typed study result read it by attribute, never by
``getattr`` with a default (STYLE: typed results across every seam)."""

from __future__ import annotations

import ast
import inspect

import pytest

from covariscope.views import diagnostics, estimates, keep_choice, review

TYPED = [diagnostics, estimates, keep_choice, review]


@pytest.mark.parametrize("module", TYPED, ids=lambda m: m.__name__)
def test_typed_views_call_no_getattr(module):
    tree = ast.parse(inspect.getsource(module))
    calls = [
        node.lineno
        for node in ast.walk(tree)
        if isinstance(node, ast.Call)
        and isinstance(node.func, ast.Name)
        and node.func.id == "getattr"
    ]
    assert calls == []


@pytest.mark.parametrize("module", TYPED, ids=lambda m: m.__name__)
def test_typed_views_take_no_any(module):
    hints = [
        (name, str(p.annotation))
        for name, f in inspect.getmembers(module, inspect.isfunction)
        if f.__module__ == module.__name__
        for p in inspect.signature(f).parameters.values()
    ]
    assert [h for h in hints if "Any" in h[1]] == []
