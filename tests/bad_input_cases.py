"""Bad project files, by class, shared by the command-line and window tests.

Each case builds its file in a folder and names a phrase the message must
contain.  Cases go beyond the examples first reported: each class holds
inputs of the same kind that were invented to probe it.
"""

from __future__ import annotations

import json
import os
from collections.abc import Callable
from pathlib import Path
from typing import Any

Builder = Callable[[Path], Path]


def _base() -> dict[str, Any]:
    return {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {
            "nodes": [
                {"id": "x", "kind": "exposure", "x": 0, "y": 0},
                {"id": "y", "kind": "outcome", "x": 100, "y": 0},
                {"id": "c", "x": 50, "y": 80},
                {"id": "d", "x": 50, "y": -80},
            ],
            "arrows": [
                {"from": "c", "to": "x"},
                {"from": "c", "to": "y"},
                {"from": "x", "to": "y"},
            ],
        },
    }


def _text(text: str) -> Builder:
    def build(folder: Path) -> Path:
        path = folder / "bad.json"
        path.write_text(text, encoding="utf-8")
        return path

    return build


def _edited(edit: Callable[[dict[str, Any]], None]) -> Builder:
    data = _base()
    edit(data)
    return _text(json.dumps(data, allow_nan=True))


def _node(key: str, literal: str) -> Builder:
    """A node whose ``key`` holds a raw JSON literal."""
    text = json.dumps(_base()).replace('"x": 0, "y": 0', f'"x": 0, "{key}": {literal}', 1)
    if key == "x":
        text = text.replace('"x": 0, "x": ', '"x": ', 1)
    return _text(text)


def _threshold(key: str, literal: str) -> Builder:
    data = _base()
    data["analysis"] = {"thresholds": {key: 1}}
    return _text(json.dumps(data).replace(f'"{key}": 1', f'"{key}": {literal}'))


def _nested(depth: int, where: str) -> Builder:
    deep = "[" * depth + "]" * depth
    data = json.dumps(_base())
    if where == "note":
        return _text(data.replace('{"id": "c"', '{"note": ' + deep + ', "id": "c"', 1))
    return _text(deep)


def _special(kind: str) -> Builder:
    def build(folder: Path) -> Path:
        path = folder / "special.json"
        if kind == "fifo":
            os.mkfifo(path)
        elif kind == "folder":
            path.mkdir()
        else:
            path.symlink_to(kind)
        return path

    return build


def _many(key: str, count: int) -> Builder:
    data = _base()
    if key == "nodes":
        data["diagram"]["nodes"] += [{"id": f"n{i}"} for i in range(count)]
    else:
        data["diagram"]["arrows"] += [{"from": "c", "to": "x"}] * count
    return _text(json.dumps(data))


def _dup_key() -> Builder:
    text = json.dumps(_base()).replace(
        '{"id": "x", "kind": "exposure"', '{"id": "x", "kind": "covariate", "kind": "exposure"', 1
    )
    return _text(text)


def _proxy(a: str, b: str) -> Builder:
    return _edited(lambda d: d["diagram"].__setitem__("proxies", [{"a": a, "b": b}]))


def _keep(key: str, member: str) -> Builder:
    return _edited(lambda d: d.__setitem__("analysis", {"keep_choices": {key: member}}))


NUMBERS = [
    ("coordinate-400-digits", _node("x", "9" * 400), "diagram.nodes[0].x"),
    ("coordinate-5000-digits", _node("y", "-" + "1" * 5000), "diagram.nodes[0].y"),
    ("coordinate-nan", _node("y", "NaN"), "not a finite number"),
    ("coordinate-infinity", _node("x", "-Infinity"), "diagram.nodes[0].x"),
    ("coordinate-1e400", _node("y", "1e400"), "not a finite number"),
    ("coordinate-far-off", _node("y", "-1e9"), "outside the range"),
    ("threshold-infinity", _threshold("vif", "Infinity"), "analysis.thresholds.vif"),
    ("threshold-nan", _threshold("change_pct", "NaN"), "not a finite number"),
    ("threshold-huge", _threshold("condition_index", "1e300"), "outside the range"),
    ("r2-above-one", _threshold("r2", "1.5"), "analysis.thresholds.r2"),
    (
        "reference-level-nan",
        _text(
            json.dumps({**_base(), "analysis": {"reference_levels": {"c": 1}}}).replace(
                '"c": 1}', '"c": NaN}'
            )
        ),
        "analysis.reference_levels.c",
    ),
]
NESTING = [
    ("root-100000-deep", _nested(100_000, "root"), "nested 100000 levels"),
    ("root-2000-deep", _nested(2000, "root"), "nested 2000 levels"),
    ("note-40-deep", _nested(40, "note"), "nested"),
]
SOURCES = [
    ("fifo", _special("fifo"), "not a regular file"),
    ("folder", _special("folder"), "is a folder"),
    ("dev-zero-link", _special("/dev/zero"), "not a regular file"),
    ("dev-urandom-link", _special("/dev/urandom"), "not a regular file"),
    ("dev-null-link", _special("/dev/null"), "not a regular file"),
    ("dangling-link", _special("/nonexistent/p.json"), "no such file"),
]
CONTRADICTIONS = [
    ("duplicate-key-in-node", _dup_key(), 'the key "kind" appears more than once'),
    (
        "duplicate-top-level-key",
        _text(json.dumps(_base())[:-1] + ', "version": 1}'),
        'the key "version"',
    ),
    (
        "duplicate-key-in-arrow",
        _text(json.dumps(_base()).replace('"to": "y"}', '"to": "y", "to": "c"}', 1)),
        'the key "to"',
    ),
    ("proxy-exposure-outcome", _proxy("x", "y"), "exposure and the outcome"),
    ("proxy-outcome-exposure", _proxy("y", "x"), "diagram.proxies[0]"),
    ("keep-member-outside-group", _keep("c|d", "x"), "is not in its group"),
    ("keep-group-unknown-node", _keep("c|zz", "c"), '"zz"'),
    ("keep-group-names-exposure", _keep("c|x", "c"), "not a covariate"),
    (
        "data-path-is-the-project",
        _edited(lambda d: d.__setitem__("data", {"path": "bad.json"})),
        "names the project file itself",
    ),
    (
        "arrows-to-a-refused-node-named-once",
        _edited(lambda d: d["diagram"]["nodes"][0].__setitem__("kind", "mystery")),
        '"mystery" is not one of',
    ),
]
SIZES = [
    ("too-many-nodes", _many("nodes", 100_000), "100,004 nodes"),
    ("too-many-arrows", _many("arrows", 100_001), "100,004 arrows"),
]

PROJECT_CASES = NUMBERS + NESTING + SOURCES + CONTRADICTIONS + SIZES
