"""The runnable examples in the data layer's docstrings stay true."""

from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = [
    "covariscope.data.coerce",
    "covariscope.data.loading",
    "covariscope.data.profile",
    "covariscope.data.progress",
    "covariscope.data.readers",
    "covariscope.data.sample",
    "covariscope.data.scan",
    "covariscope.data.text",
    "covariscope.data.values",
]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    result = doctest.testmod(importlib.import_module(name), optionflags=doctest.ELLIPSIS)
    assert result.failed == 0
