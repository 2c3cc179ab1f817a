"""Every bad project the command line refuses reaches the window's user as a
message; the window stays usable and the open project is unchanged."""

from __future__ import annotations

import runpy
import sys
from pathlib import Path

import pytest

from covariscope.model.project import project_to_dict

CASES = runpy.run_path(str(Path(__file__).parents[1] / "bad_input_cases.py"))["PROJECT_CASES"]


@pytest.mark.skipif(sys.platform == "win32", reason="pipes and devices are POSIX here")
@pytest.mark.parametrize(("build", "expected"), [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_opening_a_bad_project_says_why_and_keeps_the_open_one(
    qtbot, window, demo, tmp_path, build, expected
):
    w = window
    assert w.io.open(str(demo / "demo_project.json"))
    before = project_to_dict(w.project)
    path = build(tmp_path)
    assert not w.io.open(str(path))
    assert w.prompts.said, "no message was shown"
    title, text = w.prompts.said[-1]
    assert title == "Cannot open the project"
    assert expected in text
    assert project_to_dict(w.project) == before
    # still usable: an edit goes through and can be undone
    w.project.diagram.update_node("age", note="still here")
    assert w.project.diagram.node("age").note == "still here"
