"""Every class of bad project file ends in one plain line and exit status 2.

The cases are in ``bad_input_cases.py``, shared with the window's tests.
"""

from __future__ import annotations

import runpy
import sys
from pathlib import Path

import pytest

from covariscope.cli import main

CASES = runpy.run_path(str(Path(__file__).parent / "bad_input_cases.py"))["PROJECT_CASES"]


@pytest.mark.skipif(sys.platform == "win32", reason="pipes and devices are POSIX here")
@pytest.mark.parametrize(("build", "expected"), [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_check_refuses_a_bad_project_in_one_line(tmp_path, capsys, build, expected):
    path = build(tmp_path)
    code = main(["check", str(path)])
    out, err = capsys.readouterr()
    assert code == 2, err
    assert expected in err
    assert len(err.strip().splitlines()) == 1
    assert "internal error" not in err
    assert "Traceback" not in out + err
    # a refused node is named once, not again by every arrow that touches it
    assert "unknown node" not in err
