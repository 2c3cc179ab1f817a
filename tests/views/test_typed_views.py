"""Views that take the typed study result read it by attribute, never by
``getattr`` with a default, nor through a helper that takes a dict or an
object alike (STYLE: typed results across every seam)."""

from __future__ import annotations

import ast
import inspect

import pytest

from covariscope.views import diagnostics, estimates, keep_choice, report_content, review

TYPED = [diagnostics, estimates, keep_choice, report_content, review]


def _tree(module) -> ast.Module:
    return ast.parse(inspect.getsource(module))


def _called_names(tree: ast.Module) -> list[tuple[str, int]]:
    return [
        (node.func.id, node.lineno)
        for node in ast.walk(tree)
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Name)
    ]


@pytest.mark.parametrize("module", TYPED, ids=lambda m: m.__name__)
def test_typed_views_call_no_getattr(module):
    calls = [line for name, line in _called_names(_tree(module)) if name == "getattr"]
    assert calls == []


@pytest.mark.parametrize("module", TYPED, ids=lambda m: m.__name__)
def test_typed_views_define_no_dict_or_object_reader(module):
    # a helper like ``_get(obj, name, default)`` that reads a mapping or an object
    readers = [
        (node.name, node.lineno)
        for node in ast.walk(_tree(module))
        if isinstance(node, ast.FunctionDef)
        and node.name.lstrip("_") in {"get", "get_field", "read", "attr", "field"}
    ]
    assert readers == []


@pytest.mark.parametrize("module", TYPED, ids=lambda m: m.__name__)
def test_typed_views_ask_no_value_whether_it_is_a_mapping(module):
    # ``isinstance(x, Mapping)`` means x may come as a mapping or as an object
    # (a field typed as a union with a dict, such as ``own_coef``, is fine)
    def names(arg: ast.expr) -> set[str]:
        parts = arg.elts if isinstance(arg, ast.Tuple) else [arg]
        return {p.id if isinstance(p, ast.Name) else getattr(p, "attr", "") for p in parts}

    checks = [
        node.lineno
        for node in ast.walk(_tree(module))
        if isinstance(node, ast.Call)
        and isinstance(node.func, ast.Name)
        and node.func.id == "isinstance"
        and len(node.args) == 2
        and names(node.args[1]) & {"Mapping", "MutableMapping", "SimpleNamespace"}
    ]
    assert checks == []


@pytest.mark.parametrize("module", TYPED, ids=lambda m: m.__name__)
def test_typed_views_take_no_any(module):
    hints = [
        (name, str(p.annotation))
        for name, f in inspect.getmembers(module, inspect.isfunction)
        if f.__module__ == module.__name__
        for p in inspect.signature(f).parameters.values()
    ]
    assert [h for h in hints if "Any" in h[1]] == []
