"""The command line never destroys a file and reports failed outputs plainly.

Table-driven: each case is an output the user might name by mistake; the
command refuses it with one line, exit status 2, and every file the project
reads is left byte for byte as it was.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from covariscope.cli import error_log_path, main
from covariscope.model.demo import write_demo


@pytest.fixture
def demo(tmp_path, qapp):
    """The demo study; ``qapp`` first, so that the report's PDF writer finds a
    full QApplication rather than creating a plain one the GUI tests cannot use."""
    project = write_demo(tmp_path / "study")
    return project, project.parent / "demo_cohort.csv"


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in folder.iterdir() if p.is_file()}


def _refused(capsys, argv, expected):
    code = main(argv)
    out, err = capsys.readouterr()
    assert code == 2, err
    assert expected in err
    assert len(err.strip().splitlines()) == 1
    assert "internal error" not in err
    assert "Traceback" not in err + out


@pytest.mark.parametrize(
    ("output", "extra", "expected"),
    [
        ("demo_cohort.csv", [], "the study's data file"),
        ("demo_project.json", [], "the project file itself"),
        ("./sub/../demo_cohort.csv", [], "the study's data file"),  # same file, other spelling
        ("link_to_data.csv", [], "the study's data file"),  # a symlink to the data
        ("other.csv", ["--data", "other.csv"], "the study's data file"),  # --data wins
        ("notes.txt", [], "is not a PDF"),  # an unrelated existing file
        ("notes.txt", ["--force", "--data", "notes.txt"], "the study's data file"),
        ("sub", [], "a folder"),
        ("missing_folder/r.pdf", [], "does not exist"),
    ],
)
def test_report_refuses_an_output_that_would_destroy_a_file(capsys, demo, output, extra, expected):
    project, data = demo
    folder = project.parent
    (folder / "sub").mkdir()
    (folder / "notes.txt").write_text("my own notes\n")
    (folder / "other.csv").write_bytes(data.read_bytes())
    (folder / "link_to_data.csv").symlink_to(data)
    before = _snapshot(folder)
    cwd = os.getcwd()
    os.chdir(folder)
    try:
        _refused(capsys, ["report", str(project), "-o", output, *extra], expected)
    finally:
        os.chdir(cwd)
    assert _snapshot(folder) == before


def test_report_replaces_an_earlier_pdf_and_forced_other_files(capsys, demo):
    project, data = demo
    folder = project.parent
    data_bytes = data.read_bytes()
    pdf = folder / "rationale.pdf"
    assert main(["report", str(project), "-o", str(pdf)]) == 0
    assert main(["report", str(project), "-o", str(pdf)]) == 0  # an earlier PDF may go
    other = folder / "notes.txt"
    other.write_text("old")
    assert main(["report", str(project), "-o", str(other), "--force"]) == 0
    assert other.read_bytes().startswith(b"%PDF")
    assert data.read_bytes() == data_bytes
    assert not [p for p in folder.iterdir() if p.name.endswith(".tmp")]
    capsys.readouterr()


@pytest.mark.parametrize("argv_tail", [["check"], ["check", "--json"]])
def test_check_to_a_full_disk_says_so(demo, argv_tail):
    if not Path("/dev/full").exists():
        pytest.skip("no /dev/full on this system")
    project, _ = demo
    with open("/dev/full", "w") as full:
        result = subprocess.run(
            [sys.executable, "-m", "covariscope.cli", *argv_tail, str(project)],
            stdout=full,
            stderr=subprocess.PIPE,
            text=True,
            check=False,
        )
    assert result.returncode == 2
    assert "no space left" in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1
    assert "internal error" not in result.stderr


def test_report_to_a_device_is_refused(capsys, demo):
    if not Path("/dev/full").exists():
        pytest.skip("no /dev/full on this system")
    project, _ = demo
    _refused(capsys, ["report", str(project), "-o", "/dev/full"], "not a regular file")


def test_check_into_a_closed_pipe_is_quiet(demo):
    project, _ = demo
    proc = subprocess.Popen(
        [sys.executable, "-m", "covariscope.cli", "check", str(project)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
    )
    assert proc.stdout is not None
    assert proc.stderr is not None
    proc.stdout.read(10)
    proc.stdout.close()  # the reader goes away, as `| head -c 10` does
    err = proc.stderr.read().decode()
    proc.wait()
    assert err == ""
    assert proc.returncode == 0


def test_internal_errors_go_to_the_users_own_log(capsys, monkeypatch, tmp_path):
    import covariscope.cli as cli

    def broken(args):
        raise RuntimeError("on purpose")

    monkeypatch.setattr(cli, "_cmd_check", broken)
    code = main(["check", str(tmp_path / "p.json")])
    err = capsys.readouterr().err
    assert code == 1
    log = error_log_path()
    assert str(log) in err
    assert str(log).startswith(os.environ["HOME"])  # per user, under the test's home
    assert "on purpose" in log.read_text()
