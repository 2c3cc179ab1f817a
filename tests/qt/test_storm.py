"""A storm of edits: the window settles to what `check --json` says (issue 9).

200 random edits (moves, ticks, arrows added and removed, columns bound and
unbound, family switches) are pushed through the undo stack without waiting
for the analysis; then the window must settle to the same result as
`covariscope check --json` on the saved project, having run at most one
analysis at a time and no data work on the GUI thread (a stall meter with a
data-work watch runs on it from opening to settling: a count, not a clock).
The study has the issue's 200,000 rows (written by a seeded generator; the
test takes about 15 s on a loaded two-core machine); benchmarks/bench_edits.py
--storm times the same storm's stalls on a wider study.
"""

from __future__ import annotations

import io
import json
import random
import threading
from contextlib import redirect_stdout

import numpy as np
import pandas as pd

from covariscope.cli import main as cli_main
from covariscope.data.loading import file_sha256
from covariscope.model.commands import AddArrow, RemoveArrow, SetProposed, UpdateNode
from covariscope.model.project import project_from_dict, save_project
from covariscope.qt.stall_meter import StallMeter
from covariscope.qt.worker import study_run
from covariscope.views.check_json import study_to_json
from covariscope.views.commands import SetSettings, bind_column

ROWS = 200_000
EDITS = 200
COVARIATES = ("c1", "c2", "c3", "c4", "c5", "grp")


def _write_study(folder):
    rng = np.random.default_rng(21)
    c = {k: rng.normal(size=ROWS) for k in COVARIATES[:5]}
    grp = rng.choice(["north", "south", "east"], size=ROWS)
    x = c["c1"] + 0.5 * c["c2"] + rng.normal(size=ROWS)
    y = x + c["c1"] + c["c3"] + 0.4 * (grp == "east") + rng.normal(size=ROWS)
    frame = pd.DataFrame({"x": x, "y": y, **c, "grp": grp})
    frame["y_bin"] = (y > np.median(y)).astype(int)
    frame.loc[rng.choice(ROWS, 50, replace=False), "c5"] = np.nan
    frame.to_csv(folder / "storm.csv", index=False)
    raw = {
        "format": "covariscope-project",
        "version": 1,
        "data": {"path": "storm.csv", "sha256": file_sha256(folder / "storm.csv")},
        "diagram": {
            "nodes": [
                {
                    "id": v,
                    "kind": {"x": "exposure", "y": "outcome"}.get(v, "covariate"),
                    "column": v,
                    "x": 60.0 * i,
                    "y": 40.0 * (i % 3),
                }
                for i, v in enumerate(("x", "y", *COVARIATES))
            ],
            "arrows": [{"from": a, "to": b} for a, b in (("x", "y"), ("c1", "x"), ("c1", "y"))],
        },
        "analysis": {"family": "linear", "family_columns": {"logistic": {"outcome": "y_bin"}}},
    }
    path = folder / "storm.json"
    save_project(project_from_dict(raw, path), path)
    return path


def _edit(w, rng: random.Random) -> None:
    p = w.project
    d = p.diagram
    node = rng.choice(COVARIATES)
    kind = rng.choice(["move", "move", "tick", "arrow", "arrow", "bind", "family"])
    if kind == "move":
        w.push(UpdateNode(p, node, x=rng.uniform(0, 600), y=rng.uniform(0, 400)))
    elif kind == "tick":
        w.push(SetProposed(p, sorted(set(p.proposed) ^ {node})))
    elif kind == "arrow":
        target = rng.choice(["x", "y", *COVARIATES])
        if d.has_arrow(node, target):
            w.push(RemoveArrow(p, node, target))
        elif target != node and not d.has_arrow(target, node):
            w.push(AddArrow(p, node, target))  # a cycle is refused with a message
    elif kind == "bind":
        command = bind_column(p, node, None if d.node(node).column else node)
        if command is not None:
            w.push(command)
    else:
        family = "logistic" if p.analysis.family == "linear" else "linear"
        w.push(SetSettings(p, f"Use the {family} family", family=family))


def test_edit_storm_settles_to_check_json(qtbot, window, tmp_path, wait_for_analysis, same):
    w = window
    path = _write_study(tmp_path)
    running, most = [0], [0]
    lock = threading.Lock()
    inner = study_run(w.runner.cache)

    def counted(*args):
        with lock:
            running[0] += 1
            most[0] = max(most[0], running[0])
        try:
            return inner(*args)
        finally:
            with lock:
                running[0] -= 1

    w.runner.run_fn = counted
    meter = StallMeter(w, watch=True)
    meter.start()
    try:
        assert w.io.open(str(path))
        wait_for_analysis(qtbot, w)
        rng = random.Random(5)
        for i in range(EDITS):
            _edit(w, rng)
            if i % 10 == 0:  # let the debounce timer and the worker's signals through
                qtbot.wait(1)
        wait_for_analysis(qtbot, w, timeout=180_000)
    finally:
        meter.stop()
    assert meter.log.beats > 2  # the heartbeat ran through the storm
    assert meter.watch is not None
    assert dict(meter.watch.entries) == {}  # the GUI thread did no data work
    assert most[0] == 1
    assert w.io.save()
    out = io.StringIO()
    with redirect_stdout(out):
        assert cli_main(["check", "--json", str(path)]) == 0
    checked = json.loads(out.getvalue())
    shown = json.loads(json.dumps(study_to_json(w.result, w.project), allow_nan=False))
    assert same(shown, checked)
    assert w.result.sample is not None
    assert w.result.sample.rows == ROWS
