"""Data and design failures that `check` reports reach the window's user as
a message; the window stays usable and the project unchanged."""

from __future__ import annotations

import json
import os
import runpy
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from covariscope.model.project import project_to_dict


def _study(folder, *, binds=None, data=None, name="data.csv", analysis=None):
    rng = np.random.default_rng(2)
    c = rng.normal(size=80)
    x = c + rng.normal(size=80)
    frame = pd.DataFrame({"x": x, "y": x + c + rng.normal(size=80), "c": c})
    binds = binds or {"x": "x", "y": "y", "c": "c"}
    target = folder / name
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
        "data": {"path": name},
        "analysis": analysis or {},
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


def _nul(target, frame):
    text = frame.to_csv(index=False).encode()
    at = text.index(b"\n", 200) + 3
    target.write_bytes(text[:at] + b"\0" + text[at:])


CASES = [
    ("same-column", {"binds": {"x": "x", "y": "x", "c": "c"}}, 'both the column "x"'),
    ("outcome-function-of-exposure", {"data": _linear}, "exact linear function"),
    ("fifo-data", {"data": _fifo}, "not a regular file"),
    ("zero-tail", {"data": _zero_tail}, "zero bytes"),
    ("nul-inside-a-value", {"data": _nul}, "zero byte (NUL) at line 6"),
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


def _nested_unused(target, frame):
    import pyarrow as pa
    import pyarrow.parquet as pq

    table = pa.Table.from_pandas(frame).append_column("tags", pa.array([[1, 2]] * len(frame)))
    pq.write_table(table, target)


def test_a_parquet_file_with_an_unused_nested_column_is_analysed(qtbot, window, tmp_path):
    """The nested column is left out and said; the window does not wait for
    the data forever, and the other columns are analysed."""
    w = window
    path = _study(tmp_path, data=_nested_unused, name="data.parquet")
    assert w.io.open(str(path))
    qtbot.waitUntil(lambda: w.state_label.text() == "Analysis up to date", timeout=60_000)
    assert w.rows_label.text() == "80 of 80 rows used"
    assert "Column 'tags' holds list" in w.error_label.toolTip()
    assert not w.error_label.text()


# Every degenerate design `check` refuses with exit status 2 (the table of
# tests/test_cli_bad_data.py) reaches the window's user as a problem message.
CLI_REFUSED = runpy.run_path(str(Path(__file__).parents[1] / "test_cli_bad_data.py"))["REFUSED"]


@pytest.mark.parametrize(
    ("build", "kw", "expected"), [c[1:] for c in CLI_REFUSED], ids=[c[0] for c in CLI_REFUSED]
)
def test_every_design_check_refuses_is_said_in_the_window(
    qtbot, window, tmp_path, build, kw, expected
):
    w = window
    path = build(tmp_path, **kw)
    assert w.io.open(str(path))
    before = project_to_dict(w.project)
    qtbot.waitUntil(lambda: expected in w.error_label.toolTip(), timeout=60_000)
    # shown as a problem (the window's own check may name it first, with its fix)
    problems = [m for m in w.messages_bar.messages if m.severity == "problem"]
    assert problems or expected in w.error_label.text()
    after = project_to_dict(w.project)
    assert (after["diagram"], after["analysis"]) == (before["diagram"], before["analysis"])
