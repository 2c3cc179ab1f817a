"""The GUI thread's turns stay short: one edit made of several parts
refreshes the panels once, and opening a project writes no settings file in
the same turn (issue 9: "the GUI thread never does data work")."""

from __future__ import annotations

from PySide6.QtCore import QSettings

from .conftest import wait_for_analysis


def test_a_macro_refreshes_the_panels_and_asks_for_an_analysis_once(
    qtbot, window, demo, monkeypatch
):
    from covariscope.model.commands import Macro, UpdateNode

    w = window
    assert w.io.open(str(demo / "demo_project.json"))
    wait_for_analysis(qtbot, w)
    calls: list[str] = []
    refresh, request = w.refresh_panels, w.request_analysis
    covariates = [n.id for n in w.project.diagram.nodes if n.kind == "covariate"][:3]
    assert len(covariates) == 3

    def renamed() -> int:
        return sum(w.project.diagram.node(n).label.startswith("Renamed") for n in covariates)

    monkeypatch.setattr(
        w, "refresh_panels", lambda: calls.append(f"refresh {renamed()}") or refresh()
    )
    monkeypatch.setattr(w, "request_analysis", lambda: calls.append("analyse") or request())
    renames = [UpdateNode(w.project, n, label=f"Renamed {n}") for n in covariates]
    assert w.push(Macro("Rename three", renames))
    # once, after every part is applied
    assert calls == ["refresh 3", "analyse"]
    w.undo_stack.undo()  # undo is not batched: one refresh per part, as before
    assert sum(c.startswith("refresh") for c in calls) >= 3
    wait_for_analysis(qtbot, w)


def test_opening_writes_the_recent_files_in_a_later_turn(qtbot, window, demo):
    w = window
    path = demo / "demo_project.json"
    assert w.io.open(str(path))
    opened = str(w.project.path)
    # the settings file (synced to disk twice) is not written in the opening turn
    assert opened not in (QSettings().value("recent_files", []) or [])
    assert w.io.recent_files()[0] == opened
    qtbot.waitUntil(lambda: opened in (QSettings().value("recent_files", []) or []))
    assert w.io.recent_files()[0] == opened
    wait_for_analysis(qtbot, w)
