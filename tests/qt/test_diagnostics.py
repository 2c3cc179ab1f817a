"""The diagnostics dialog shows the numbers ``check --json`` gives for the
node; its note is saved into the project (undoable); a screenshot."""

from __future__ import annotations

import shutil

from PySide6.QtWidgets import QApplication


def test_dialog_shows_the_json_numbers(qtbot, window, demo, wait_for_analysis):
    from covariscope.model.project import load_project
    from covariscope.study import run_study
    from covariscope.views.check_json import study_to_json
    from covariscope.views.format import number, percent

    w = window
    js = study_to_json(run_study(load_project(demo / "demo_project.json")))
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    for node in ("age", "income"):
        c = js["covariates"][node]
        name = w.project.diagram.node(node).label
        dialog = w.open_diagnostics(node)
        cells = {
            dialog.models.item(r, 0).text(): [dialog.models.item(r, k).text() for k in range(1, 5)]
            for r in range(dialog.models.rowCount())
        }
        assert cells["Crude"][0] == number(js["estimates"]["crude"]["coef"])
        assert cells[f"Crude + {name}"][2] == percent(c["added"]["change_pct"])
        assert cells[f"Crude + {name}"][3] == percent(c["added"]["se_inflation_pct"])
        assert cells["Full"][2] == percent(c["dropped"]["change_pct"])
        figures = {
            dialog.figures.item(r, 0).text(): dialog.figures.item(r, 1).text()
            for r in range(dialog.figures.rowCount())
        }
        assert figures[f"VIF of {name} in the full model"] == number(c["vif"])
        assert figures["Tolerance (1 / VIF)"] == number(c["tolerance"], 3)
        assert c["label"] in dialog.verdict.text()
        assert c["reason"] in dialog.verdict.text()
        # the scatter shows the rows the models used, not every row of the file
        points = dialog.data_figure.axes[0].collections[0].get_offsets()
        assert len(points) == js["sample"]["used"] < js["sample"]["rows"]
        dialog.close()


def test_note_is_saved_undoably_and_follows_the_analysis(qtbot, window, demo, wait_for_analysis):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    dialog = w.open_diagnostics("smoke")
    dialog.note.setPlainText("Kept for precision, as the analysis plan says.")
    dialog.save_note_button.click()
    assert w.project.diagram.node("smoke").note == "Kept for precision, as the analysis plan says."
    assert w.isWindowModified()
    w.undo_stack.undo()
    assert w.project.diagram.node("smoke").note == ""
    # the dialog follows the model after the next analysis
    w.scene.select_ids(["activity"])
    w.actions_.toggle_measured.trigger()
    wait_for_analysis(qtbot, w)
    assert dialog.note.toPlainText() == ""
    assert "activity" in w.result.verdicts
    assert w.result.verdicts["activity"].code == "unmeasured"
    dialog.close()


def test_endpoint_dialog_changes_the_family(qtbot, window, demo, wait_for_analysis):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    dialog = w.open_diagnostics(w.project.diagram.exposure.id)
    assert dialog.missing.text().endswith("% of the rows")
    index = dialog.family.findData("logistic")
    dialog.family.setCurrentIndex(index)
    dialog.family.activated.emit(index)
    assert w.project.analysis.family == "logistic"
    w.undo_stack.undo()
    assert w.project.analysis.family == "linear"
    dialog.close()


def test_screenshot_of_the_dialog(qtbot, window, demo, tmp_path, wait_for_analysis, shots):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    for node, name in (("income", "diagnostics.png"), ("smoke", "diagnostics_levels.png")):
        dialog = w.open_diagnostics(node)
        QApplication.processEvents()
        shot = tmp_path / name
        assert dialog.grab().save(str(shot))
        shutil.copyfile(shot, shots / name)
        dialog.close()


def test_dialog_keeps_another_member_of_the_group(qtbot, window, demo, wait_for_analysis):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    before = dict(w.project.analysis.keep_choices)
    dialog = w.open_diagnostics("area")
    assert dialog.keep is not None
    assert dialog.keep.key == "area|income"
    assert dialog.keep_box.isVisibleTo(dialog)
    suggested = dialog.keep.kept
    assert dialog.keep_member.currentData() == suggested
    other = next(m for m in dialog.keep.group if m != suggested)
    dialog.choose_kept(other)
    assert w.project.analysis.keep_choices["area|income"] == other
    wait_for_analysis(qtbot, w)
    assert other in w.result.recommended
    # the dialog follows the analysis: the choice is shown as the user's
    assert dialog.keep_member.currentData() == other
    assert dialog.keep.saved
    w.undo_stack.undo()
    assert w.project.analysis.keep_choices == before
    wait_for_analysis(qtbot, w)
    assert dialog.keep_member.currentData() == suggested
    assert not dialog.keep.saved
    # a covariate with another verdict has no member to choose
    plain = w.open_diagnostics("age")
    assert plain.keep is None
    assert not plain.keep_box.isVisibleTo(plain)
    plain.close()
    dialog.close()


def test_collinearity_picture_renders(qtbot, window, demo, wait_for_analysis, shots):
    # Image test: the dialog of a member of a collinear group draws the joint
    # region (its outline colour is on the canvas) and says what it shows.
    from PySide6.QtGui import QColor

    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    dialog = w.open_diagnostics("income")
    dialog.plots.setCurrentIndex(1)
    QApplication.processEvents()
    assert dialog.plots.isTabEnabled(1)
    assert dialog.state is not None
    assert dialog.state.pictures
    assert "carry an effect of" in dialog.joint_note.text()
    dialog.joint_canvas.draw()
    image = dialog.joint_canvas.grab().toImage()
    outline = QColor("#0072B2")
    hits = sum(
        image.pixelColor(x, y) == outline
        for x in range(0, image.width(), 2)
        for y in range(0, image.height(), 2)
    )
    assert hits > 20
    assert dialog.grab().save(str(shots / "diagnostics_collinearity.png"))
    dialog.close()
    # a covariate in no collinear group has the tab switched off
    plain = w.open_diagnostics("age")
    assert not plain.plots.isTabEnabled(1)
    plain.close()


def test_effect_modification_tab_draws_the_strata(qtbot, window, demo, wait_for_analysis, shots):
    # The forest plot has one point per level, and the sentence says that
    # modification is not confounding.
    from covariscope.views.modification import NOT_CONFOUNDING

    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    dialog = w.open_diagnostics("smoke")
    dialog.plots.setCurrentIndex(2)
    QApplication.processEvents()
    assert dialog.plots.isTabEnabled(2)
    strata = w.result.modification["smoke"].strata
    points = dialog.modification_figure.axes[0].lines[0].get_xdata()
    assert len(points) == len(strata) == 3
    assert NOT_CONFOUNDING in dialog.modification_note.text()
    assert dialog.grab().save(str(shots / "diagnostics_modification.png"))
    dialog.close()


def test_form_chooser_enters_a_covariate_as_a_spline(qtbot, window, demo, wait_for_analysis):
    # One undo step; the analysis then treats the basis as one term, and the
    # figures table shows the residual-confounding check.
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    dialog = w.open_diagnostics("age")
    assert dialog.form_box.isVisibleTo(dialog)
    labels = [dialog.figures.item(r, 0).text() for r in range(dialog.figures.rowCount())]
    assert any(t.startswith("… with Age as a spline (4 knots)") for t in labels)
    dialog.choose_form(5)
    assert w.project.analysis.spline_knots == {"age": 5}
    wait_for_analysis(qtbot, w)
    assert w.result.evidence.covariates["age"].df == 4
    assert w.result.residual_confounding["age"].knots == 5
    w.undo_stack.undo()
    assert w.project.analysis.spline_knots == {}
    wait_for_analysis(qtbot, w)
    # a binary covariate has no form to choose
    plain = w.open_diagnostics("family_hist")
    assert not plain.form_box.isVisibleTo(plain)
    plain.close()
    dialog.close()


def test_dialog_plots_are_saved_with_the_collinearity_picture(
    qtbot, window, demo, tmp_path, wait_for_analysis
):
    w = window
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    dialog = w.open_diagnostics("income")
    w.prompts.answers["save_path"] = str(tmp_path / "income.png")
    dialog.save_plots_button.click()
    names = sorted(p.name for p in tmp_path.glob("income-*.png"))
    assert names == [
        "income-collinearity.png",
        "income-data.png",
        "income-estimates.png",
        "income-modification.png",
    ]
    assert all((tmp_path / n).stat().st_size > 1000 for n in names)
    dialog.close()


def test_multilevel_exposure_dialog_fits_its_screen(qtbot, window, demo, wait_for_analysis):
    """One row per model and contrast, the plot grouped by contrast, and a dialog
    no taller than the screen it opens on (its body scrolls)."""
    w = window
    w.io.open(str(demo / "demo_levels_project.json"))
    wait_for_analysis(qtbot, w)
    dialog = w.open_diagnostics("age")
    titles = [dialog.models.item(r, 0).text() for r in range(dialog.models.rowCount())]
    assert "Crude + Age: high vs low" in titles
    assert "Full − Age: middle vs low" in titles
    legend = dialog.estimate_figure.axes[0].get_legend()
    assert legend is not None
    assert [t.get_text() for t in legend.get_texts()] == ["high vs low", "middle vs low"]
    room = dialog.screen().availableGeometry()
    assert dialog.height() <= room.height()
    assert dialog.width() <= room.width()
    dialog.close()
