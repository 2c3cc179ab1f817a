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
