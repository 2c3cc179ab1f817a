"""The command line: bad input ends in one plain line and exit status 2."""

from __future__ import annotations

import json
import os
import subprocess
import sys

import pytest

from covariscope.cli import has_display, main, one_line


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


GOOD = {
    "format": "covariscope-project",
    "version": 1,
    "diagram": {
        "nodes": [{"id": "x", "kind": "exposure"}, {"id": "y", "kind": "outcome"}, {"id": "c"}],
        "arrows": [{"from": "c", "to": "x"}, {"from": "c", "to": "y"}, {"from": "x", "to": "y"}],
    },
}


@pytest.mark.parametrize(
    ("content", "expected"),
    [
        (None, "no such file"),
        ("{not json", "not valid JSON"),
        (json.dumps({**GOOD, "version": 99}), "newer Covariscope"),
        (
            json.dumps(
                {**GOOD, "diagram": {**GOOD["diagram"], "arrows": [{"from": "c", "to": "q"}]}}
            ),
            'diagram.arrows[0].to: unknown node "q"',
        ),
        (
            json.dumps({**GOOD, "diagram": {"nodes": [{"id": "x", "kind": "exposure"}]}}),
            "no outcome",
        ),
    ],
)
def test_bad_input_is_one_line_and_exit_2(tmp_path, capsys, content, expected):
    path = tmp_path / "p.json"
    if content is not None:
        path.write_text(content, encoding="utf-8")
    code, out, err = run(capsys, "check", str(path))
    assert code == 2
    assert expected in err
    assert len(err.strip().splitlines()) == 1
    assert "Traceback" not in err + out


def test_one_line_folds_a_problem_list():
    assert one_line("Problems:\n  - a: b\n  - c: d") == "Problems: a: b; c: d"


def test_offscreen_counts_as_no_display(monkeypatch):
    monkeypatch.setenv("QT_QPA_PLATFORM", "offscreen")
    assert not has_display()


def test_module_runs_as_a_program(tmp_path):
    result = subprocess.run(
        [sys.executable, "-m", "covariscope.cli", "check", str(tmp_path / "missing.json")],
        capture_output=True,
        text=True,
        check=False,
    )
    assert result.returncode == 2
    assert "no such file" in result.stderr


def test_demo_without_a_display_writes_the_review_and_the_rationale(tmp_path):
    """The README's run command on a machine with no screen: it says so, prints
    the review and writes the one-page PDF, with Qt never asked for a display."""
    env = {k: v for k, v in os.environ.items() if k not in ("DISPLAY", "WAYLAND_DISPLAY")}
    env.pop("QT_QPA_PLATFORM", None)
    folder = tmp_path / "demo"
    result = subprocess.run(
        [sys.executable, "-m", "covariscope.cli", "demo", str(folder)],
        capture_output=True,
        text=True,
        check=False,
        env=env,
    )
    assert result.returncode == 0, result.stderr
    assert "No display was found" in result.stdout
    assert "Minimal sufficient sets" in result.stdout
    assert (folder / "demo_project.json").is_file()
    assert (folder / "demo_cohort.csv").is_file()
    pdf = folder / "demo_rationale.pdf"
    assert pdf.read_bytes().startswith(b"%PDF")


def test_demo_keeps_an_existing_project(tmp_path):
    from covariscope.model.demo import write_demo

    first = write_demo(tmp_path)
    edited = first.read_text() + "\n"  # the user's own edit
    first.write_text(edited)
    write_demo(tmp_path)
    assert first.read_text() == edited
    # the multi-level exposure variant is written beside it
    assert (tmp_path / "demo_levels_project.json").is_file()


def test_gui_without_a_display_says_so(capsys, monkeypatch):
    monkeypatch.delenv("DISPLAY", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    code, _, err = run(capsys, "gui")
    assert code == 2
    assert "No display was found" in err


def test_check_on_a_terminal_shows_the_modification_and_residual_tables(
    monkeypatch, tmp_path
) -> None:
    """The tables after the evidence say which model they fit, on standard error."""
    import io
    import shutil
    from pathlib import Path

    import covariscope.cli as cli

    class Terminal(io.StringIO):
        def isatty(self) -> bool:
            return True

    demo = Path(__file__).resolve().parents[1] / "demo_data"
    for name in ("demo_project.json", "demo_cohort.csv"):
        shutil.copyfile(demo / name, tmp_path / name)
    err = Terminal()
    monkeypatch.setattr(cli, "PROGRESS_DELAY", 0.0)  # every line, however quick the run
    monkeypatch.setattr(cli, "PROGRESS_EVERY", 0.0)
    monkeypatch.setattr(sys, "stderr", err)
    monkeypatch.setattr(sys, "stdout", io.StringIO())
    assert main(["check", "--json", str(tmp_path / "demo_project.json")]) == 0
    lines = [line.strip() for line in err.getvalue().split("\r") if line.strip()]
    modification = [line for line in lines if "Checking effect modification: model" in line]
    residual = [line for line in lines if "Checking residual confounding: model" in line]
    # the demo examines ten candidates and two continuous confounders (check --json)
    assert modification[0].endswith("model 1 of 11")
    assert modification[-1].endswith("model 11 of 11")
    assert residual[0].endswith("model 1 of 5")
    assert residual[-1].endswith("model 5 of 5")
    assert lines.index(modification[-1]) < lines.index(residual[0])


def test_progress_goes_to_a_terminal_only_and_only_for_long_runs() -> None:
    import io

    from covariscope.cli import TerminalProgress

    class Terminal(io.StringIO):
        def isatty(self) -> bool:
            return True

    shown = Terminal()
    progress = TerminalProgress(shown, delay=0.0, every=0.0)
    progress(0.5, "Fitting model 3 of 42, pass 2 over the rows")
    assert shown.getvalue() == "\r 50%  Fitting model 3 of 42, pass 2 over the rows"
    progress.close()
    assert shown.getvalue().endswith("\r")  # the line is cleared for the output after it
    short = Terminal()
    TerminalProgress(short, delay=3600.0)(0.5, "quick run")
    assert short.getvalue() == ""
    piped = io.StringIO()
    TerminalProgress(piped, delay=0.0, every=0.0)(0.5, "not a terminal")
    assert piped.getvalue() == ""
