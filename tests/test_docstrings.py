"""The runnable examples in the Qt-free core's docstrings stay true."""

from __future__ import annotations

import doctest
import importlib
import pkgutil

import pytest

import covariscope.analysis
import covariscope.model

MODULES = sorted(
    f"{package.__name__}.{info.name}"
    for package in (covariscope.model, covariscope.analysis)
    for info in pkgutil.iter_modules(package.__path__)
)


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    result = doctest.testmod(importlib.import_module(name), optionflags=doctest.ELLIPSIS)
    assert result.failed == 0


def _public_without_docstring(package: str) -> list[str]:
    import ast
    from pathlib import Path

    root = Path(importlib.import_module(package).__file__).parent
    missing = []
    for path in sorted(root.rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in tree.body:
            if (
                isinstance(node, ast.FunctionDef | ast.ClassDef)
                and not node.name.startswith("_")
                and not ast.get_docstring(node)
            ):
                missing.append(f"{path.name}:{node.lineno} {node.name}")
    return missing


@pytest.mark.parametrize(
    "package",
    ["covariscope.model", "covariscope.analysis", "covariscope.data", "covariscope.study"],
)
def test_every_public_function_and_class_says_what_it_is(package):
    assert _public_without_docstring(package) == []
