"""Project life: save and reopen, recovery after a crash, asking before
losing work, the data file's fingerprint and a missing data file."""

from __future__ import annotations


def test_save_then_reopen_is_identical(qtbot, window, demo, tmp_path):
    from covariscope.model.project import load_project, project_to_dict

    w = window
    assert w.io.open(str(demo / "demo_project.json"))
    w.scene.select_ids(["smoke"])
    w.actions_.toggle_measured.trigger()
    target = tmp_path / "saved" / "copy.json"
    target.parent.mkdir()
    w.prompts.answers["save_path"] = str(target)
    w.actions_.save_as.trigger()
    assert not w.isWindowModified()
    saved = project_to_dict(w.project)
    again = load_project(target)
    assert project_to_dict(again) == saved
    assert again.data_path() == (demo / "demo_cohort.csv").resolve()
    assert w.io.recent_files()[0] == str(target.resolve())
    # and through the window
    assert w.io.open(str(target))
    assert project_to_dict(w.project) == saved


def test_recovery_is_offered_and_restores(qtbot, demo, tmp_path, monkeypatch, fake_prompts):
    from covariscope.model.project import project_to_dict
    from covariscope.qt.main_window import MainWindow
    from covariscope.qt.project_io import AUTOSAVE_MS, recovery_folder
    from covariscope.views import recovery

    first = MainWindow(prompts=fake_prompts(), debounce_ms=20)
    qtbot.addWidget(first)
    assert first.io.autosave_timer.interval() == AUTOSAVE_MS == 60_000
    first.io.open(str(demo / "demo_project.json"))
    first.scene.select_ids(["activity"])
    first.actions_.toggle_measured.trigger()
    written = first.io.autosave()
    assert written is not None
    assert written.exists()
    kept = project_to_dict(first.project)
    # a crash: the file stays behind and its writer is gone
    crashed = written.with_name("recovery-crashed.json")
    crashed.write_bytes(written.read_bytes())
    first.io.extra_modified = False
    first.undo_stack.setClean()
    first.runner.shutdown()
    first.close()
    assert not written.exists()  # a clean close removes its own file
    monkeypatch.setattr(recovery, "_alive", lambda pid: False)

    prompts = fake_prompts()
    prompts.answers["Recover unsaved work"] = True
    second = MainWindow(prompts=prompts, debounce_ms=20)
    qtbot.addWidget(second)
    assert second.io.offer_recovery()
    assert prompts.said[0][0] == "Recover unsaved work"
    assert project_to_dict(second.project) == kept
    assert second.isWindowModified()
    assert not crashed.exists()
    # the recovered work is autosaved again at once under this window's name
    assert recovery.recovery_path(recovery_folder()).exists()
    second.io.extra_modified = False
    second.close()


def test_closing_with_changes_asks(qtbot, window, demo):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    w.scene.select_ids(["age"])
    w.actions_.toggle_measured.trigger()
    w.prompts.answers["save_changes"] = "cancel"
    assert not w.close()
    assert w.isVisible()
    w.prompts.answers["save_changes"] = "discard"
    assert w.io.new()
    assert len(w.project.diagram) == 0


def test_changed_data_is_warned_about(qtbot, window, demo):
    path = demo / "demo_cohort.csv"
    path.write_text(path.read_text(encoding="utf-8") + "", encoding="utf-8")
    text = (demo / "demo_project.json").read_text(encoding="utf-8")
    import json

    body = json.loads(text)
    body["data"]["sha256"] = "0" * 64
    (demo / "demo_project.json").write_text(json.dumps(body), encoding="utf-8")
    w = window
    w.io.open(str(demo / "demo_project.json"))
    qtbot.waitUntil(lambda: w.data.table is not None, timeout=60_000)
    titles = [t for t, _ in w.prompts.said]
    assert "The data file has changed" in titles
    assert "SHA-256" in w.error_label.text()


def test_missing_data_can_be_relocated(qtbot, window, demo, tmp_path):
    moved = tmp_path / "elsewhere"
    moved.mkdir()
    (demo / "demo_cohort.csv").rename(moved / "cohort.csv")
    w = window
    w.prompts.answers["Data file missing"] = True
    w.prompts.answers["open_path"] = str(moved / "cohort.csv")
    w.io.open(str(demo / "demo_project.json"))
    qtbot.waitUntil(lambda: w.data.table is not None, timeout=60_000)
    assert w.project.data_path() == (moved / "cohort.csv").resolve()
    assert w.isWindowModified()
    assert not [t for t, _ in w.prompts.said if t == "The data file has changed"]


def test_command_line_project_opens_and_joins_recent_files(qtbot, demo, monkeypatch):
    """``covariscope PROJECT`` opens the project; it then heads Open recent,
    whose entry opens it again; autosave runs every minute."""
    from covariscope.qt import app, project_io

    monkeypatch.setattr(project_io.Prompts, "yes_no", lambda self, title, text: False)
    monkeypatch.setattr(project_io.Prompts, "warn", lambda self, title, text: None)
    path = demo / "demo_project.json"
    window = app.start_window(str(path))
    qtbot.addWidget(window)
    try:
        assert window.project.path.resolve() == path.resolve()
        assert window.io.recent_files()[0] == str(window.project.path)
        assert window.io.autosave_timer.interval() == 60_000
        assert window.io.autosave_timer.isActive()
        window.io.new()
        assert window.project.path is None
        window.actions_.fill_recent()
        entry = next(a for a in window.actions_.recent_menu.actions() if a.text() == str(path))
        entry.trigger()
        assert window.project.path is not None
        assert window.project.path.name == "demo_project.json"
    finally:
        window.io.extra_modified = False
        window.undo_stack.setClean()
        window.close()


def test_panel_edits_undo_and_redo_through_the_window_actions(qtbot, window, demo):
    """Edits made outside the canvas (type, reference level, family,
    binding, unbinding, kind, measured) each undo and redo to the saved form."""
    from covariscope.model.project import project_to_dict

    w = window
    w.io.open(str(demo / "demo_project.json"))
    qtbot.waitUntil(lambda: w.data.table is not None, timeout=30_000)
    w.runner._timer.setInterval(3_600_000)  # no analysis needed here: keep the test quick
    edits = [
        lambda: w.data_panel.type_requested.emit("prior_job", "categorical"),
        lambda: w.data_panel.reference_requested.emit("smoke", "former"),
        lambda: w.actions_.family["risk_ratio"].trigger(),
        lambda: w.data_panel.unbind_requested.emit("age"),
        lambda: w.data_panel.bind_requested.emit("income", "worker"),
        lambda: (w.scene.select_ids(["age"]), w.actions_.make_outcome.trigger()),
        lambda: (w.scene.select_ids(["income"]), w.actions_.toggle_measured.trigger()),
    ]
    for edit in edits:
        before = project_to_dict(w.project)
        count = w.undo_stack.count()
        edit()
        assert w.undo_stack.count() == count + 1
        after = project_to_dict(w.project)
        assert after != before
        w.actions_.undo.trigger()
        assert project_to_dict(w.project) == before
        w.actions_.redo.trigger()
        assert project_to_dict(w.project) == after
