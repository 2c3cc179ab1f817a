"""The window on a file read where it lies (DuckDB): engine choice, profiles
that arrive column by column with progress and cancel, the engine and its
memory in the status bar, and diagnostics plots that say they show a sample."""

from __future__ import annotations

import json
import threading
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from PySide6.QtWidgets import QApplication

ROWS = 24_000  # more complete rows than the plots draw (20,000)
COLUMNS = ("x", "y", "age", "dose", "score", "region")


def _study(folder: Path, engine: str) -> Path:
    rng = np.random.default_rng(15)
    age = rng.normal(50, 10, ROWS)
    dose = rng.normal(size=ROWS)
    x = 0.02 * age + 0.5 * dose + rng.normal(size=ROWS)
    y = 0.4 * x + 0.03 * age + 0.3 * dose + rng.normal(size=ROWS)
    frame = pd.DataFrame(
        {
            "x": x,
            "y": y,
            "age": age,
            "dose": dose,
            "score": rng.normal(size=ROWS),
            "region": rng.choice(["north", "south", "east"], ROWS),
        }
    )
    frame.loc[::97, "age"] = np.nan
    frame.to_parquet(folder / "cohort.parquet")
    nodes = [
        {"id": "x", "label": "x", "kind": "exposure", "column": "x", "x": 0, "y": 0},
        {"id": "y", "label": "y", "kind": "outcome", "column": "y", "x": 300, "y": 0},
        {"id": "age", "label": "age", "column": "age", "x": 0, "y": -160},
        {"id": "dose", "label": "dose", "column": "dose", "x": 300, "y": -160},
    ]
    arrows = [{"from": "x", "to": "y"}]
    for c in ("age", "dose"):
        arrows += [{"from": c, "to": "x"}, {"from": c, "to": "y"}]
    project = {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {"nodes": nodes, "arrows": arrows},
        "data": {"path": "cohort.parquet"},
        "analysis": {"family": "linear", "proposed": ["age", "dose"], "engine": engine},
    }
    path = folder / "study.json"
    path.write_text(json.dumps(project), encoding="utf-8")
    return path


@pytest.fixture
def large(tmp_path: Path) -> Path:
    return _study(tmp_path, "duckdb")


def _window(qtbot, fake_prompts, size=(1366, 768)):
    from covariscope.qt.main_window import MainWindow

    w = MainWindow(prompts=fake_prompts(), debounce_ms=20)
    qtbot.addWidget(w)
    w.resize(*size)
    w.show()
    return w


def _close(w) -> None:
    for dialog in list(w.dialogs.values()):
        dialog.close()
    w.io.extra_modified = False
    w.undo_stack.setClean()
    w.close()


@pytest.mark.parametrize("size", [(1366, 768), (1920, 1080)])
def test_a_file_read_where_it_lies_names_its_engine_and_memory(
    qtbot, large, fake_prompts, wait_for_analysis, shots, size
):
    from covariscope.data.sources.duck import DuckSource
    from covariscope.views.format import DASH

    w = _window(qtbot, fake_prompts, size)
    assert w.io.open(str(large))
    wait_for_analysis(qtbot, w)
    QApplication.processEvents()
    assert isinstance(w.data.source, DuckSource)
    assert w.engine_label.text().startswith("DuckDB · ")
    assert w.engine_label.text().endswith(" MB")
    assert "read where they lie" in w.engine_label.toolTip()
    assert "read where it lies (DuckDB)" in w.data_panel.file_label.text()
    assert [r.name for r in w.data_panel.rows] == list(COLUMNS)
    assert all(r.type != DASH for r in w.data_panel.rows)
    assert w.rows_label.text() == f"{ROWS - ROWS // 97 - 1:,} of {ROWS:,} rows used"
    assert w.review.table.rowCount() == 2
    assert not w.progress.isVisible()
    w.grab().save(str(shots / f"large_data_{size[0]}x{size[1]}.png"))
    _close(w)


def test_profiles_arrive_column_by_column_with_progress(qtbot, large, fake_prompts):
    w = _window(qtbot, fake_prompts)
    seen: list[int] = []
    steps: list[str] = []
    w.data.profiler.profiled.connect(lambda found: seen.append(len(w.data.profiles)))
    w.data.profiler.progress.connect(lambda f, column: steps.append(w.progress_label.text()))
    assert w.io.open(str(large))
    qtbot.waitUntil(lambda: w.data.source is not None and not w.data.loading, timeout=60_000)
    assert seen == sorted(seen)
    assert len(seen) > 1
    assert seen[-1] == len(COLUMNS)
    assert any(text.startswith("Profiling region") for text in steps)
    _close(w)


def test_profiling_is_cancelled_while_the_canvas_takes_edits(
    qtbot, large, fake_prompts, monkeypatch, shots
):
    from covariscope.data.sources.duck import DuckSource

    release = threading.Event()
    original = DuckSource.profiles

    def slow(self, columns, *args, **kwargs):
        release.wait(30)  # each column waits until the test lets it go
        return original(self, columns, *args, **kwargs)

    monkeypatch.setattr(DuckSource, "profiles", slow)
    w = _window(qtbot, fake_prompts)
    assert w.io.open(str(large))
    qtbot.waitUntil(lambda: w.data.profiler.running, timeout=60_000)
    # the GUI thread is free: an edit on the canvas is drawn at once
    before = len(w.project.diagram)
    w.add_node_at_centre()
    assert len(w.project.diagram) == before + 1
    assert len(w.scene.items()) > 0
    assert w.state_label.text() == "Waiting for the data"
    assert w.cancel_button.isVisible()
    w.grab().save(str(shots / "large_data_profiling.png"))
    w.cancel_work()
    release.set()
    assert not w.data.loading
    assert not w.progress.isVisible()
    qtbot.waitUntil(lambda: w.data.profiler.pool.activeThreadCount() == 0, timeout=30_000)
    assert len(w.data.profiles) < len(COLUMNS)
    _close(w)


def test_the_engine_is_chosen_in_the_window_and_saved(qtbot, tmp_path, fake_prompts, shots):
    from covariscope.data.sources.duck import DuckSource
    from covariscope.qt.settings_dialogs import EngineDialog

    path = _study(tmp_path, "auto")
    w = _window(qtbot, fake_prompts)
    assert w.io.open(str(path))
    qtbot.waitUntil(lambda: w.data.table is not None and not w.data.loading, timeout=60_000)
    assert w.data.source is None  # a small file: in memory
    dialog = EngineDialog("auto", "", w)
    dialog.show()
    dialog.grab().save(str(shots / "engine_dialog.png"))
    dialog.engine.setCurrentIndex(dialog.engine.findData("dask"))
    assert dialog.scheduler.isEnabled()
    dialog.scheduler.setText(" tcp://host:8786 ")
    assert dialog.values() == ("dask", "tcp://host:8786")
    dialog.engine.setCurrentIndex(dialog.engine.findData("duckdb"))
    assert not dialog.scheduler.isEnabled()
    assert dialog.values() == ("duckdb", "")
    dialog.close()
    assert w.data.set_engine(*dialog.values())
    qtbot.waitUntil(lambda: isinstance(w.data.source, DuckSource), timeout=60_000)
    assert w.io.save_as(str(tmp_path / "saved.json"))
    saved = json.loads((tmp_path / "saved.json").read_text(encoding="utf-8"))
    assert saved["analysis"]["engine"] == "duckdb"
    w.undo_stack.undo()
    assert w.project.analysis.engine == "auto"
    qtbot.waitUntil(
        lambda: w.data.table is not None and w.data.source is None and not w.data.loading,
        timeout=60_000,
    )
    _close(w)


def test_diagnostics_plots_say_they_draw_a_random_sample(
    qtbot, large, fake_prompts, wait_for_analysis, shots
):
    w = _window(qtbot, fake_prompts, (1920, 1080))
    assert w.io.open(str(large))
    wait_for_analysis(qtbot, w)
    used = ROWS - ROWS // 97 - 1
    covariate = w.open_diagnostics("dose")
    assert covariate is not None
    title = covariate.data_figure.axes[0].get_title()
    # the scatter thins the 20,000 sampled rows further, and says of how many rows in all
    assert f"random sample of 3,000 of {used:,} rows" in title
    covariate.grab().save(str(shots / "large_data_covariate.png"))
    exposure = w.open_diagnostics("x")
    assert exposure is not None
    assert f"random sample of 20,000 of {used:,} rows" in exposure.figure.axes[0].get_title()
    _close(w)


def test_a_file_too_large_for_memory_is_read_where_it_lies_by_itself(
    qtbot, tmp_path, fake_prompts, wait_for_analysis, monkeypatch
):
    from covariscope.data.sources import choose
    from covariscope.data.sources.duck import DuckSource

    path = _study(tmp_path, "auto")
    monkeypatch.setattr(choose, "available_memory", lambda: 2**20)  # 1 MB free
    w = _window(qtbot, fake_prompts)
    assert w.io.open(str(path))
    wait_for_analysis(qtbot, w)
    assert isinstance(w.data.source, DuckSource)
    assert w.project.analysis.engine == "auto"  # chosen for this file, not saved
    assert any("read where it lies (DuckDB)" in m for m in w.result.messages)
    _close(w)
