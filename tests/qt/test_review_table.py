"""The review table and its neighbours: proposed-set ticks shared with the
canvas, open paths highlighted, exports, thresholds, first start."""

from __future__ import annotations

import pytest
from PySide6.QtCore import Qt

from covariscope.views.review import REVIEW_COLUMNS

CHECK = len(REVIEW_COLUMNS) - 1
VERDICT = CHECK - 1


def test_tick_is_one_undoable_proposed_set(qtbot, window, demo, wait_for_analysis):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    before = w.project.proposed
    w.review.set_checked("family_hist", True)
    assert w.project.proposed == [*before, "family_hist"]
    # the canvas's own toggle lands in the table too
    w.scene.proposed_toggled.emit("family_hist", False)
    row = w.review.row_of("family_hist")
    assert w.review.table.item(row, CHECK).checkState() == Qt.CheckState.Unchecked
    w.undo_stack.undo()
    w.undo_stack.undo()
    assert w.project.proposed == before
    wait_for_analysis(qtbot, w)
    # unmeasured covariates cannot be ticked
    row = w.review.row_of("early_life")
    flags = w.review.table.item(row, CHECK).flags()
    assert not flags & Qt.ItemFlag.ItemIsUserCheckable
    # the verdict's reason is the tooltip and the detail line
    w.review.select_node("age")
    reason = w.result.verdicts["age"].reason
    assert w.review.table.item(w.review.row_of("age"), VERDICT).toolTip() == reason
    assert reason in w.review.detail.text()


def test_choosing_an_open_path_highlights_it(qtbot, window, demo, monkeypatch, wait_for_analysis):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    assert w.paths.paths
    seen = []
    monkeypatch.setattr(w.scene, "highlight_path", seen.append)
    w.paths.choose(0)
    assert seen[-1] == list(w.paths.paths[0])


def test_exports(qtbot, window, demo, tmp_path, wait_for_analysis):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    for kind in ("png", "svg", "graphml"):
        target = tmp_path / f"diagram.{kind}"
        w.prompts.answers["save_path"] = str(target)
        assert w.export_diagram(kind), w.prompts.said
        assert target.stat().st_size > 0
    wait_for_analysis(qtbot, w)
    target = tmp_path / "review.csv"
    w.prompts.answers["save_path"] = str(target)
    w.actions_.export_csv.trigger()
    assert target.read_text(encoding="utf-8").count("\n") == 1 + len(w.project.diagram.covariates)


def test_rationale_pdf(qtbot, window, demo, tmp_path, wait_for_analysis):
    pytest.importorskip("covariscope.report.painter")
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    target = tmp_path / "rationale.pdf"
    assert w.save_rationale_pdf(str(target)), w.prompts.said
    assert target.read_bytes().startswith(b"%PDF")


def test_thresholds_are_saved_as_guides(qtbot, window, monkeypatch):
    from covariscope.qt.settings_dialogs import ThresholdsDialog

    w = window

    def accept(dialog):
        dialog.spins["vif"].setValue(5.0)
        return True

    monkeypatch.setattr(ThresholdsDialog, "exec", accept)
    w.actions_.thresholds.trigger()
    assert w.project.analysis.thresholds["vif"] == 5.0
    w.undo_stack.undo()
    assert w.project.analysis.thresholds["vif"] == 10.0
    dialog = ThresholdsDialog(w.project.analysis.thresholds, w)
    qtbot.addWidget(dialog)
    assert "guide" in dialog.windowTitle()


def test_first_start_offers_the_demo(qtbot, monkeypatch):
    from covariscope.qt import app, project_io

    asked = []

    def yes_no(self, title, text):
        asked.append(title)
        return True

    monkeypatch.setattr(project_io.Prompts, "yes_no", yes_no)
    monkeypatch.setattr(project_io.Prompts, "warn", lambda self, title, text: asked.append(title))
    window = app.start_window(None)
    qtbot.addWidget(window)
    try:
        assert asked == ["Open the demo?"]
        assert window.project.path is not None
        assert window.project.path.name == "demo_project.json"
        again = app.start_window(None)
        qtbot.addWidget(again)
        assert asked == ["Open the demo?"]  # only on the first start
        again.close()
    finally:
        window.io.extra_modified = False
        window.undo_stack.setClean()
        window.close()


def _other_member(choice):
    return next(m for m in choice.group if m != choice.kept)


def test_keep_another_member_from_the_table(qtbot, window, demo, wait_for_analysis):
    from covariscope.model.project import project_to_dict

    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    saved_before = project_to_dict(w.project)
    choice = w.review.keep_choice_of("area")
    assert choice is not None
    assert choice.key == "area|income"
    assert w.review.keep_choice_of("age") is None  # not a keep_one_of row
    assert choice.kept in w.result.recommended
    other = _other_member(choice)
    assert other not in w.result.recommended
    strip_before = w.strip.texts()["recommended"]

    menu = w.review.menu_for(other)
    (keep,) = [a for a in menu.actions() if a.objectName() == "keepThisOne"]
    assert keep.isEnabled()
    keep.trigger()
    menu.deleteLater()
    assert w.project.analysis.keep_choices[choice.key] == other
    assert w.isWindowModified()
    wait_for_analysis(qtbot, w)
    assert other in w.result.recommended
    assert choice.kept not in w.result.recommended
    assert w.result.verdicts[other].suggested == other
    assert w.strip.texts()["recommended"] != strip_before
    verdict_cell = w.review.table.item(w.review.row_of(other), VERDICT).text()
    assert verdict_cell.endswith("this one kept (your choice)")
    now = w.review.keep_choice_of(other)
    assert now.saved
    assert now.kept == other
    menu = w.review.menu_for(other)
    (keep,) = [a for a in menu.actions() if a.objectName() == "keepThisOne"]
    assert not keep.isEnabled()  # already the saved choice
    assert any(a.objectName() == "keepSuggested" for a in menu.actions())
    menu.deleteLater()

    w.actions_.undo.trigger()
    assert project_to_dict(w.project) == saved_before
    wait_for_analysis(qtbot, w)
    assert choice.kept in w.result.recommended
    assert w.strip.texts()["recommended"] == strip_before
    w.actions_.redo.trigger()
    assert w.project.analysis.keep_choices[choice.key] == other


def test_edits_update_the_panels_in_place(qtbot, window, demo, wait_for_analysis, monkeypatch):
    """A tick changes its own cell in the same item; a node move rebuilds no
    panel; a new result redraws only the links of nodes whose words changed."""
    from covariscope.model.commands import UpdateNode

    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    row = w.review.row_of("family_hist")
    item = w.review.table.item(row, CHECK)
    label = w.review.table.item(row, 0)
    w.review.set_checked("family_hist", True)
    assert w.review.table.item(row, CHECK) is item  # the same item, its box changed
    assert w.review.table.item(row, 0) is label
    assert item.checkState() == Qt.CheckState.Checked
    filled: list[str] = []
    monkeypatch.setattr(w.review, "_cell", lambda *a: filled.append("review"))
    monkeypatch.setattr(w.data_panel, "_fit_width", lambda: filled.append("data"))
    w.push(UpdateNode(w.project, "age", x=12.0, y=34.0))
    w.review.refresh(w.project, w.result)  # the same rows again: nothing is rewritten
    assert filled == []
    wait_for_analysis(qtbot, w)
    redrawn: list[object] = []
    for arrow in w.scene.arrows.values():
        monkeypatch.setattr(arrow, "update_geometry", lambda a=arrow: redrawn.append(a))
    notes = w.scene.roles, w.scene.verdicts
    w.scene.set_annotations(*notes)  # the same words: no link moves
    assert redrawn == []


def test_a_chosen_path_stays_lit_until_the_next_result(qtbot, window, demo, wait_for_analysis):
    from covariscope.model.commands import SetProposed

    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    assert w.paths.paths
    w.paths.choose(0)
    lit = {n for n, item in w.scene.nodes.items() if item.highlighted}
    assert lit
    w.push(SetProposed(w.project, [*w.project.proposed, "family_hist"]))
    assert {n for n, item in w.scene.nodes.items() if item.highlighted} == lit
    wait_for_analysis(qtbot, w)  # a new result: the paths are listed again, none chosen
    assert not any(item.highlighted for item in w.scene.nodes.values())
