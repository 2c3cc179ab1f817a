"""Files the project reads are protected; leftovers of interrupted saves go."""

from __future__ import annotations

import json
import os
import time

import pytest

from covariscope.errors import CovariscopeError, ProjectFileError
from covariscope.model import files
from covariscope.model.diagram import Diagram, Node
from covariscope.model.files import check_output_path, read_project_bytes, remove_stale_temporaries
from covariscope.model.project import DataRef, Project, load_project, save_project


def _old(path, seconds=3600):
    past = time.time() - seconds
    os.utime(path, (past, past))


def test_stale_temporaries_of_our_own_pattern_are_removed(tmp_path):
    target = tmp_path / "study.json"
    stale = [tmp_path / ".study.json.ab12cd_9.tmp", tmp_path / ".study.json.ZZZZZZZZ.tmp"]
    fresh = tmp_path / ".study.json.fresh123.tmp"  # a save in progress elsewhere
    others = [
        tmp_path / ".study.json.toolong123.tmp",  # not 8 characters
        tmp_path / ".other.json.ab12cd90.tmp",  # another project's
        tmp_path / "study.json.ab12cd90.tmp",  # no leading dot
        tmp_path / ".study.json.ab12cd90.bak",
    ]
    for p in [*stale, fresh, *others]:
        p.write_text("x")
    for p in [*stale, *others]:
        _old(p)
    assert remove_stale_temporaries(target) == 2
    assert not any(p.exists() for p in stale)
    assert fresh.exists()
    assert all(p.exists() for p in others)


def test_a_stale_name_that_is_a_folder_or_link_is_left_alone(tmp_path):
    outside = tmp_path / "keep.txt"
    outside.write_text("mine")
    link = tmp_path / ".p.json.linklink.tmp"
    link.symlink_to(outside)
    folder = tmp_path / ".p.json.folder12.tmp"
    folder.mkdir()
    _old(folder)
    assert remove_stale_temporaries(tmp_path / "p.json", older_than=-1) == 0
    assert outside.read_text() == "mine"
    assert folder.is_dir()


def test_open_and_save_clean_up_leftovers(tmp_path):
    project = Project(Diagram())
    project.diagram.add_node(Node("x", kind="exposure"))
    path = save_project(project, tmp_path / "p.json")
    leftover = tmp_path / ".p.json.abcdefgh.tmp"
    leftover.write_text("half a save")
    _old(leftover)
    load_project(path)
    assert not leftover.exists()
    leftover.write_text("half a save")
    _old(leftover)
    save_project(project)
    assert not leftover.exists()
    assert [p.name for p in tmp_path.iterdir()] == ["p.json"]


def test_a_project_over_the_size_limit_is_refused_unread(tmp_path, monkeypatch):
    monkeypatch.setattr(files, "MAX_PROJECT_BYTES", 100)
    path = tmp_path / "big.json"
    path.write_text(json.dumps({"note": "x" * 200}))
    with pytest.raises(ProjectFileError, match="larger than"):
        read_project_bytes(path)
    assert read_project_bytes(path, limit=1000).startswith(b"{")


def test_saving_keeps_a_symlinked_data_path_as_given(tmp_path):
    real = tmp_path / "store" / "cohort_2024.csv"
    real.parent.mkdir()
    real.write_text("a\n1\n")
    link = tmp_path / "cohort.csv"
    link.symlink_to(real)
    project = Project(Diagram(), DataRef(str(link)))
    save_project(project, tmp_path / "p.json")
    saved = json.loads((tmp_path / "p.json").read_text())
    assert saved["data"]["path"] == "cohort.csv"
    assert load_project(tmp_path / "p.json").data_path() == link


def test_check_output_path_accepts_a_new_file_and_an_earlier_pdf(tmp_path):
    new = tmp_path / "r.pdf"
    assert check_output_path(new, []) == new
    new.write_bytes(b"%PDF-1.4 ...")
    assert check_output_path(new, [("the project file", tmp_path / "p.json")]) == new
    other = tmp_path / "r.txt"
    other.write_text("notes")
    with pytest.raises(CovariscopeError, match="--force"):
        check_output_path(other, [])
    assert check_output_path(other, [], force=True) == other
