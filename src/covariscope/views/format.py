"""Number formatting shared by the panels (one place, so every panel and
the CSV export write a number the same way)."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import TypeGuard

from covariscope.analysis.families import family_of
from covariscope.analysis.fits import Fit

__all__ = ["DASH", "fit_ok", "is_number", "number", "percent", "ratio_family", "term_names"]

#: Shown where a value does not exist (unmeasured, not fitted, undefined).
DASH = "—"


def is_number(value: object) -> TypeGuard[int | float]:
    """True for a finite int or float (not a bool)."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        return False
    return math.isfinite(value)


def number(value: object, digits: int = 2) -> str:
    """``1.23456`` → ``"1.23"``; missing or non-finite → a dash."""
    if not is_number(value):
        return DASH
    if abs(value) >= 1e5 or (value != 0 and abs(value) < 10 ** (-digits - 1)):
        return f"{value:.{digits}g}"
    return f"{value:.{digits}f}"


def percent(value: object, digits: int = 1) -> str:
    """A signed percentage without the sign of a zero: ``"+12.3"``, ``"-4.0"``."""
    if not is_number(value):
        return DASH
    text = f"{value:+.{digits}f}"
    return text.replace("+0.0", "0.0").replace("-0.0", "0.0") if abs(value) < 0.05 else text


def ratio_family(family: str | None) -> bool:
    """True when the family's estimate is a ratio (shown on the exp scale)."""
    return family is not None and family_of(family).ratio


def fit_ok(fit: Fit | None) -> bool:
    """True for a fitted model whose exposure estimate can be shown."""
    return fit is not None and fit.ok and is_number(fit.coef)


def term_names(
    columns: Sequence[str], nodes: Sequence[str], names: Mapping[str, str]
) -> dict[str, str]:
    """Design column → the words people read: the node's label, with the
    level after it where a node has several columns (``"Region [north]"``);
    the intercept stays ``"(intercept)"``.

    >>> term_names(["(intercept)", "age", "reg[n]", "reg[s]"],
    ...            ["(intercept)", "age", "reg", "reg"], {"age": "Age", "reg": "Region"})
    {'(intercept)': '(intercept)', 'age': 'Age', 'reg[n]': 'Region [n]', 'reg[s]': 'Region [s]'}
    """
    count: dict[str, int] = {}
    for node in nodes:
        count[node] = count.get(node, 0) + 1
    out = {}
    for column, node in zip(columns, nodes, strict=True):
        label = names.get(node) or node
        if count[node] > 1:
            level = column[column.index("[") :] if "[" in column else f"({column})"
            label = f"{label} {level}"
        out[column] = label
    return out
