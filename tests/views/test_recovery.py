"""Recovery files: written, found after the writer is gone, read back."""

from __future__ import annotations

from covariscope.model.diagram import Node
from covariscope.model.project import DataRef, Project, project_to_dict
from covariscope.views import recovery


def test_live_writer_is_not_offered(tmp_path):
    p = Project()
    recovery.write_recovery(tmp_path, p)
    assert recovery.find_orphans(tmp_path) == []


def test_orphan_is_found_and_restored(tmp_path, monkeypatch):
    p = Project(path=tmp_path / "study.json")
    p.diagram.add_node(Node("x", kind="exposure", x=3.0))
    p.data = DataRef("data.csv", "f00")
    path = recovery.write_recovery(tmp_path / "rec", p, pid=4242)
    monkeypatch.setattr(recovery, "_alive", lambda pid: pid != 4242)
    found = recovery.find_orphans(tmp_path / "rec")
    assert [f.path for f in found] == [path]
    back = recovery.read_recovery(found[0])
    assert back.path == tmp_path / "study.json"
    assert back.diagram.to_dict() == p.diagram.to_dict()
    # the data path is kept absolute so it resolves from anywhere
    assert back.data_path() == (tmp_path / "data.csv").resolve()
    assert project_to_dict(back) == project_to_dict(p)


def test_damaged_files_are_ignored(tmp_path):
    (tmp_path / "recovery-1.json").write_text("{not json", encoding="utf-8")
    assert recovery.find_orphans(tmp_path) == []
