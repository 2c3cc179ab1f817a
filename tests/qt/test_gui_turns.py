"""The GUI thread's turns stay short: one edit made of several parts
refreshes the panels once, and opening a project writes no settings file in
the same turn (issue 9: "the GUI thread never does data work")."""

from __future__ import annotations

from PySide6.QtCore import QEvent, QObject, QSettings

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


class _Paints(QObject):
    """Counts the paint events a widget receives."""

    def __init__(self) -> None:
        super().__init__()
        self.count = 0

    def eventFilter(self, watched: QObject, event: QEvent) -> bool:
        if event.type() == QEvent.Type.Paint:
            self.count += 1
        return False


def test_progress_is_painted_with_the_window_not_at_once(qtbot, window):
    w = window
    w.show_progress("Loading data", 0.0)
    qtbot.wait(20)
    paints = _Paints()
    w.progress.installEventFilter(paints)
    for k in range(1, 6):
        w.show_progress(f"Fitting model {k} of 5", k / 5)
    assert paints.count == 0  # QProgressBar.setValue alone repaints synchronously
    assert w.progress.value() == 1000
    qtbot.waitUntil(lambda: paints.count > 0)  # and it is painted later all the same
    w.progress.removeEventFilter(paints)


def test_opening_shows_the_canvas_first_and_the_panels_in_later_turns(
    qtbot, window, demo, monkeypatch
):
    w = window
    assert w.io.open(str(demo / "demo_project.json"))
    refreshed: list[str] = []
    for name, panel in (("data", w.data_panel), ("review", w.review)):
        refresh = panel.refresh
        monkeypatch.setattr(
            panel, "refresh", lambda *a, _f=refresh, _n=name: refreshed.append(_n) or _f(*a)
        )
    assert w.io.open(str(demo / "demo_project.json"))
    assert refreshed == []  # no panel refreshed in the opening turn
    assert w.showing.pending
    qtbot.waitUntil(lambda: {"data", "review"} <= set(refreshed))
    wait_for_analysis(qtbot, w)


def test_an_arrow_keeps_its_bounds_in_step_with_its_ends(qtbot, window, demo):
    from covariscope.model.commands import UpdateNode

    w = window
    assert w.io.open(str(demo / "demo_project.json"))
    links = [i for i in w.scene.items() if hasattr(i, "pair")]
    assert links
    link = links[0]
    before = link.boundingRect()
    node = w.project.diagram.node(link.pair[0])
    assert w.push(UpdateNode(w.project, node.id, x=node.x + 200, y=node.y + 150))
    assert link.boundingRect() != before
    assert link.boundingRect() == link.shape().boundingRect().adjusted(-6, -6, 6, 6)
    wait_for_analysis(qtbot, w)
