"""Strict JSON for project files.

Python's ``json`` accepts things a project must not hold: the same key twice
in one object (the later silently wins), the literals ``NaN`` and
``Infinity``, numbers of any length, and nesting deep enough to exhaust the
interpreter's recursion.  :func:`parse_project_json` reads the text with all
of these found and named, and :func:`finite_number` checks one value against
a range, so that every number in a project is finite and usable.
"""

from __future__ import annotations

import json
import math
import re
from typing import Any

import numpy as np

from covariscope.errors import ProjectFileError

__all__ = ["MAX_DEPTH", "ParsedJson", "finite_number", "nesting_depth", "parse_project_json"]

MAX_DEPTH = 16
"""A project nests at most six levels (file, diagram, nodes, node, value);
this bound leaves room for growth and stops a damaged or hostile file long
before the parser's recursion limit."""

_LONGEST_NUMBER = 40
"""Digits past this carry no meaning for a coordinate or threshold."""

_STRING = re.compile(rb'"(?:[^"\\]|\\.)*"', re.DOTALL)


class ParsedJson:
    """A parsed value with the duplicate keys met on the way.

    ``duplicates`` holds one sentence per object that repeated a key.
    """

    def __init__(self, value: Any, duplicates: list[str]) -> None:
        self.value = value
        self.duplicates = duplicates


def nesting_depth(raw: bytes) -> int:
    """The deepest nesting of arrays and objects in JSON text, found without
    parsing (strings are blanked first, so brackets inside text do not count).

    Examples
    --------
    >>> nesting_depth(b'{"a": [1, [2]], "b": "[[["}')
    3
    """
    blanked = _STRING.sub(b'""', raw)
    codes = np.frombuffer(blanked, dtype=np.uint8)
    step = np.zeros(codes.shape, dtype=np.int32)
    step[(codes == ord("[")) | (codes == ord("{"))] = 1
    step[(codes == ord("]")) | (codes == ord("}"))] = -1
    if step.size == 0:
        return 0
    return int(np.cumsum(step).max(initial=0))


def _describe(pairs: list[tuple[str, Any]]) -> str:
    for key, value in pairs:
        if key == "id" and isinstance(value, str):
            return f'the object with "id": "{value}"'
    keys = ", ".join(f'"{k}"' for k, _ in pairs[:4])
    return f"the object with keys {keys}"


def _big_int(text: str) -> int | float:
    if len(text.lstrip("-")) > _LONGEST_NUMBER:
        return -math.inf if text.startswith("-") else math.inf
    return int(text)


def parse_project_json(raw: bytes, name: str) -> ParsedJson:
    """Parse a project file's bytes strictly.

    ``NaN``/``Infinity`` literals and numbers too long to mean anything are
    read as non-finite floats, which :func:`finite_number` then reports with
    their key; duplicate keys are collected.

    Raises
    ------
    ProjectFileError
        Not UTF-8, not JSON, or nested deeper than :data:`MAX_DEPTH`.
    """
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise ProjectFileError(
            f"{name}: not a text file in UTF-8 (byte {exc.start}); a project file is JSON "
            "text — choose the .json file Covariscope saved."
        ) from None
    depth = nesting_depth(raw)
    if depth > MAX_DEPTH:
        raise ProjectFileError(
            f"{name}: arrays or objects are nested {depth} levels deep; a project nests at "
            f"most {MAX_DEPTH}. The file is damaged or is not a Covariscope project."
        )
    duplicates: list[str] = []

    def pairs_hook(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
        seen: dict[str, Any] = {}
        for key, value in pairs:
            if key in seen:
                duplicates.append(
                    f'the key "{key}" appears more than once in {_describe(pairs)}; '
                    "keep one (otherwise the last would silently win)"
                )
            seen[key] = value
        return seen

    try:
        value = json.loads(
            text,
            object_pairs_hook=pairs_hook,
            parse_constant=float,
            parse_int=_big_int,
        )
    except json.JSONDecodeError as exc:
        raise ProjectFileError(
            f"{name}: not valid JSON at line {exc.lineno}, column {exc.colno} ({exc.msg}); "
            "the file may be truncated or edited by hand."
        ) from None
    except (RecursionError, ValueError) as exc:
        raise ProjectFileError(
            f"{name}: cannot be read as JSON ({exc}); the file is damaged or is not a "
            "Covariscope project."
        ) from None
    return ParsedJson(value, duplicates)


def finite_number(value: Any, low: float, high: float) -> str | None:
    """What is wrong with ``value`` as a number in [low, high], or None.

    Examples
    --------
    >>> finite_number(float("nan"), 0, 1)
    'is not a finite number (NaN or Infinity); give a plain number'
    >>> finite_number(5, 0, 1)
    'is 5, outside the range 0 to 1'
    """
    if isinstance(value, bool) or not isinstance(value, int | float):
        return None  # the type check reports it
    try:
        as_float = float(value)
    except OverflowError:
        as_float = math.inf
    if not math.isfinite(as_float):
        return "is not a finite number (NaN or Infinity); give a plain number"
    if not low <= as_float <= high:
        return f"is {value:g}, outside the range {low:g} to {high:g}"
    return None
