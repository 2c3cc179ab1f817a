"""Help a user can find: the canvas legend (View menu), the glossary (F1,
Help menu) and the words behind them, all from the vocabulary."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtTest import QTest
from PySide6.QtWidgets import QApplication

from covariscope.qt.legend import sample_pixmap
from covariscope.qt.palette import BODY_SHAPES, ROLE_GLYPHS
from covariscope.views.legend import legend_sections
from covariscope.vocabulary import (
    CONCEPT_TERMS,
    REVIEW_COLUMN_TERMS,
    ROLE_TERMS,
    THRESHOLD_TERMS,
    VERDICT_TERMS,
)


def _view_action(w, text):
    return next(a for a in w.actions_.view_menu.actions() if a.text().replace("&", "") == text)


def test_f1_opens_the_glossary_with_every_role_verdict_and_column(qtbot, window):
    w = window
    w.activateWindow()
    qtbot.waitUntil(lambda: QApplication.activeWindow() is w)
    QTest.keyClick(w, Qt.Key.Key_F1)
    qtbot.waitUntil(lambda: w.glossary is not None and w.glossary.isVisible())
    text = " ".join(w.glossary.text().split())
    for term in (*ROLE_TERMS.values(), *VERDICT_TERMS.values(), *CONCEPT_TERMS):
        assert term.label in text, term.code
        assert " ".join(term.explanation.split()) in text, term.code
    for term in THRESHOLD_TERMS.values():
        assert term.label in text
    for column in REVIEW_COLUMN_TERMS.values():
        assert column.label in text
        if column.formula:
            assert column.formula in text, column.code
        if column.ratio_formula:
            assert column.ratio_formula in text, column.code
    assert "a ratio below 1 moves toward 1" in text  # the sign convention for ratios
    # the Help menu opens the same window; a second F1 does not stack windows
    help_menu = w.menuBar().actions()[-1].menu()
    glossary = next(a for a in help_menu.actions() if a.text() == "&Glossary")
    shown = w.glossary
    glossary.trigger()
    assert w.glossary is shown
    w.glossary.close()


def test_legend_is_toggled_from_the_view_menu(qtbot, window):
    w = window
    dock = w.docks["legend"]
    assert not dock.isVisible()
    toggle = _view_action(w, "Legend")
    toggle.trigger()
    qtbot.waitUntil(dock.isVisible)
    toggle.trigger()
    qtbot.waitUntil(lambda: not dock.isVisible())


def test_legend_covers_every_shape_mark_and_line_the_canvas_draws(qtbot, window):
    entries = [e for s in legend_sections() for e in s.entries]
    # every node shape and every role glyph the palette knows has a sample
    assert {e.kind for e in entries if e.sample == "node"} >= set(BODY_SHAPES)
    assert {e.role for e in entries if e.role} == set(ROLE_GLYPHS)
    # frames and marks: boxed, dashed (unmeasured), unbound, verdict chip, path, selection
    assert any(e.proposed for e in entries)
    assert any(not e.measured for e in entries)
    assert any(not e.bound for e in entries)
    assert any(e.verdict for e in entries)
    assert any(e.highlighted for e in entries)
    assert any(e.selected for e in entries)
    assert {e.sample for e in entries} == {"node", "arrow", "path_arrow", "proxy", "suggestion"}
    # each sample is painted, and a mark changes the picture (the canvas's own code draws it)
    images = {}
    for e in entries:
        pix = sample_pixmap(e)
        assert not pix.isNull()
        images[e.title] = pix.toImage()
    assert images["Boxed"] != images["Covariate"]
    assert images["Dashed outline, grey fill"] != images["Covariate"]
    panel = window.docks["legend"].widget()
    assert len(panel.entries) == len(entries)


def test_copy_the_model_as_code_puts_it_on_the_clipboard(qtbot, window, demo, wait_for_analysis):
    w = window
    # before an analysis there is nothing to copy, and the window says so
    assert w.copy_model_code("python") == ""
    w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    analysis = next(a.menu() for a in w.menuBar().actions() if a.text() == "&Analysis")
    code_menu = next(
        a.menu() for a in analysis.actions() if a.menu() is not None and "code" in a.text()
    )
    python = next(a for a in code_menu.actions() if a.text().startswith("&Python"))
    python.trigger()
    text = QApplication.clipboard().text()
    assert "smf.ols('lungfn ~ dust + age + income', data=data).fit()" in text
    assert str(demo / "demo_cohort.csv") in text
    assert "lm(" not in text  # Python only
    w.actions_.copy_code["all"].trigger()
    text = QApplication.clipboard().text()
    for part in ("smf.ols(", "lm(lungfn ~ dust + age + income", "regress lungfn dust age income"):
        assert part in text
    assert w.actions_.copy_code["all"].shortcut().toString() == "Ctrl+Shift+C"
