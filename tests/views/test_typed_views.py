"""Views read the typed study result, the project and the column profiles by
attribute: never ``getattr`` with a default, nor a helper that takes a dict
or an object alike, nor parameters typed ``Any`` (STYLE: typed results
across every seam).  Every module of ``covariscope.views`` is checked, so a
new view is covered the day it is added."""

from __future__ import annotations

import ast
import importlib
import inspect
import pkgutil

import pytest

import covariscope.views

#: modules left out of a check, and why
EXEMPT = {
    # the settings command remembers, for undo, the fields it changes, by name
    "covariscope.views.commands": {"getattr"},
}

VIEWS = [
    importlib.import_module(f"covariscope.views.{m.name}")
    for m in pkgutil.iter_modules(covariscope.views.__path__)
]


def _tree(module) -> ast.Module:
    return ast.parse(inspect.getsource(module))


def _checked(rule: str) -> list:
    return [m for m in VIEWS if rule not in EXEMPT.get(m.__name__, set())]


def test_every_view_is_checked():
    names = {m.__name__ for m in VIEWS}
    assert {"covariscope.views.report_content", "covariscope.views.data_panel"} <= names
    assert set(EXEMPT) <= names  # an exemption outlives no module
    assert len(_checked("getattr")) >= len(VIEWS) - 1


@pytest.mark.parametrize("module", _checked("getattr"), ids=lambda m: m.__name__)
def test_views_call_no_getattr(module):
    calls = [
        node.lineno
        for node in ast.walk(_tree(module))
        if isinstance(node, ast.Call)
        and isinstance(node.func, ast.Name)
        and node.func.id == "getattr"
    ]
    assert calls == []


@pytest.mark.parametrize("module", VIEWS, ids=lambda m: m.__name__)
def test_views_define_no_dict_or_object_reader(module):
    # a helper like ``_get(obj, name, default)`` that reads a mapping or an object
    readers = [
        (node.name, node.lineno)
        for node in ast.walk(_tree(module))
        if isinstance(node, ast.FunctionDef)
        and node.name.lstrip("_") in {"get", "get_field", "read", "attr", "field"}
    ]
    assert readers == []


@pytest.mark.parametrize("module", VIEWS, ids=lambda m: m.__name__)
def test_views_ask_no_value_whether_it_is_a_mapping(module):
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


@pytest.mark.parametrize("module", _checked("any"), ids=lambda m: m.__name__)
def test_views_take_no_any(module):
    hints = [
        (name, str(p.annotation))
        for name, f in inspect.getmembers(module, inspect.isfunction)
        if f.__module__ == module.__name__
        for p in inspect.signature(f).parameters.values()
    ]
    assert [h for h in hints if "Any" in h[1]] == []
