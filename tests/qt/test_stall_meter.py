"""The stall meter: the gaps of a heartbeat, and the watch that counts data
work on the thread it is installed on (issue 9: the GUI thread never does
data work).  Times are fed by hand: no test here reads a clock."""

from __future__ import annotations

import gc
import threading
from pathlib import Path

import pandas as pd

from covariscope.data.loading import LoadedTable
from covariscope.qt.stall_meter import DataWorkWatch, StallLog, StallMeter
from covariscope.study.prepare import table_profiles
from covariscope.study.source import TableSource


def test_stall_log_keeps_the_longest_gap_and_every_stall():
    log = StallLog(beat=0.01, stall=0.05)
    for t in (1.0, 1.01, 1.02, 1.32, 1.33, 1.40, 1.41):
        log.tick(t)
    assert log.beats == 7
    assert log.longest == 1.32 - 1.02
    assert [round(g, 2) for _, g in log.stalls] == [0.30, 0.07]
    assert log.over(0.1) == 1
    log.restart()
    log.tick(5.0)
    assert (log.beats, log.longest, log.stalls) == (1, 0.0, [])


def _table() -> LoadedTable:
    frame = pd.DataFrame({"a": [1.0, 2.0, None], "b": ["u", "v", "u"]})
    return LoadedTable(frame, Path("t.csv"), "text", "3" * 64)


def test_watch_counts_data_work_on_its_own_thread_only():
    from covariscope.study.cache import StudyCache

    table = _table()
    watch = DataWorkWatch()
    other = threading.Thread(
        target=lambda: table_profiles(StudyCache(), TableSource(table), {}, {})
    )
    watch.install()
    try:
        other.start()
        other.join()  # data work on another thread: not counted
        rows = table.rows  # reading a loaded table (a frozen dataclass): not counted
        table_profiles(StudyCache(), TableSource(table), {}, {})
    finally:
        watch.remove()
    assert rows == 3
    # one entry each; what they call in turn is not counted again
    assert dict(watch.entries) == {
        "covariscope.study.source.TableSource.__init__": 1,
        "covariscope.study.cache.StudyCache.__init__": 1,
        "covariscope.study.prepare.table_profiles": 1,
    }
    assert watch.total == 3


def test_meter_beats_on_the_event_loop(qtbot):
    meter = StallMeter(beat_ms=1)
    meter.start()
    qtbot.waitUntil(lambda: meter.log.beats >= 5)
    meter.stop()
    beats = meter.log.beats
    qtbot.wait(20)
    assert meter.log.beats == beats  # stopped


def test_the_window_start_warms_the_slow_imports_in_the_background():
    import sys

    from covariscope.qt.app import WARM_MODULES, start_warmup, warm_imports

    # a module that is not installed is left to fail where it is used
    assert warm_imports(("covariscope.no_such_module", "json")) == ["json"]
    thread = start_warmup()
    assert thread.daemon
    thread.join(120)
    assert not thread.is_alive()
    assert all(name in sys.modules for name in WARM_MODULES)
    gc.unfreeze()  # the other tests' objects go back to the collector


def test_the_warm_up_pauses_the_collector_then_freezes_what_start_up_made(monkeypatch):
    from covariscope.qt import app

    seen: list[bool] = []
    monkeypatch.setattr(app, "warm_imports", lambda modules: seen.append(gc.isenabled()) or [])
    before = gc.get_freeze_count()
    try:
        app.warm_up(("json",))
        assert seen == [False]  # no full collection in the middle of the imports
        assert gc.isenabled()
        assert gc.get_freeze_count() > before
    finally:
        gc.unfreeze()
        gc.enable()
