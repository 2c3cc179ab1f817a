"""Data and design failures that `check` reports reach the window's user as
a message; the window stays usable and the project unchanged."""

from __future__ import annotations

import json
import os
import sys

import numpy as np
import pandas as pd
import pytest

from covariscope.model.project import project_to_dict


def _study(folder, *, binds=None, data=None):
    rng = np.random.default_rng(2)
    c = rng.normal(size=80)
    x = c + rng.normal(size=80)
    frame = pd.DataFrame({"x": x, "y": x + c + rng.normal(size=80), "c": c})
    binds = binds or {"x": "x", "y": "y", "c": "c"}
    target = folder / "data.csv"
    if data is None:
        frame.to_csv(target, index=False)
    else:
        data(target, frame)
    project = {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {
            "nodes": [
                {"id": "x", "kind": "exposure", "column": binds["x"]},
                {"id": "y", "kind": "outcome", "column": binds["y"]},
                {"id": "c", "column": binds["c"]},
            ],
            "arrows": [
                {"from": "c", "to": "x"},
                {"from": "c", "to": "y"},
                {"from": "x", "to": "y"},
            ],
        },
        "data": {"path": "data.csv"},
    }
    path = folder / "p.json"
    path.write_text(json.dumps(project))
    return path


def _fifo(target, frame):
    os.mkfifo(target)


def _zero_tail(target, frame):
    target.write_bytes(frame.to_csv(index=False).encode() + b"\0" * 100_000)


def _linear(target, frame):
    frame.assign(y=2 * frame.x + 1).to_csv(target, index=False)


CASES = [
    ("same-column", {"binds": {"x": "x", "y": "x", "c": "c"}}, 'both the column "x"'),
    ("outcome-function-of-exposure", {"data": _linear}, "exact linear function"),
    ("fifo-data", {"data": _fifo}, "not a regular file"),
    ("zero-tail", {"data": _zero_tail}, "zero bytes"),
]


@pytest.mark.skipif(sys.platform == "win32", reason="pipes are POSIX here")
@pytest.mark.parametrize(("kw", "expected"), [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_the_window_says_what_check_says(qtbot, window, tmp_path, kw, expected):
    w = window
    path = _study(tmp_path, **kw)
    assert w.io.open(str(path))
    before = project_to_dict(w.project)
    qtbot.waitUntil(lambda: expected in w.error_label.toolTip(), timeout=60_000)
    after = project_to_dict(w.project)
    # (loading records the data file's SHA-256 once; nothing else changes)
    assert (after["diagram"], after["analysis"]) == (before["diagram"], before["analysis"])
    # still usable: an edit goes through
    w.project.diagram.update_node("c", note="checked")
    assert w.project.diagram.node("c").note == "checked"
