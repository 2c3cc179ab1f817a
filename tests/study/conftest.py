"""Shared checks for the study tests."""

from __future__ import annotations

import json
from collections.abc import Callable
from typing import Any

import pytest


def same_json(a: Any, b: Any) -> bool:
    """Equal JSON, numbers to 1e-9 relative (an extended cross-product sums in another order)."""
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(same_json(a[k], b[k]) for k in a)
    if isinstance(a, list) and isinstance(b, list):
        return len(a) == len(b) and all(same_json(x, y) for x, y in zip(a, b, strict=True))
    if isinstance(a, float) and isinstance(b, float):
        return a == pytest.approx(b, rel=1e-9, abs=1e-12, nan_ok=True)
    return json.dumps(a) == json.dumps(b)


@pytest.fixture
def same() -> Callable[[Any, Any], bool]:
    """:func:`same_json` for a test to call."""
    return same_json
