"""Two threads share one study cache through 200 random edits in all (issue 9).

No error, and every result equals a fresh run on an empty cache in a single
thread (the fresh runs are made afterwards, once per distinct project state).
"""

from __future__ import annotations

import contextlib
import json
import random
import threading

import numpy as np
import pandas as pd

from covariscope.errors import DiagramError
from covariscope.model.project import project_from_dict, project_to_dict
from covariscope.study import run_study
from covariscope.study.cache import StudyCache
from covariscope.views.check_json import study_to_json

EDITS = 100  # per thread
COVARIATES = ("c1", "c2", "c3", "c4", "grp")


def _study():
    rng = np.random.default_rng(4)
    n = 300
    c = {k: rng.normal(size=n) for k in COVARIATES[:4]}
    grp = rng.choice(["a", "b", "c"], size=n)
    x = c["c1"] + 0.5 * c["c2"] + rng.normal(size=n)
    y = x + c["c1"] + c["c3"] + 0.3 * (grp == "c") + rng.normal(size=n)
    frame = pd.DataFrame({"x": x, "y": y, **c, "grp": grp})
    frame["y_bin"] = (y > np.median(y)).astype(int)
    frame.loc[rng.choice(n, 15, replace=False), "c4"] = np.nan
    from pathlib import Path

    from covariscope.data.loading import LoadedTable

    table = LoadedTable(frame, Path("threads.csv"), "text", "2" * 64)
    raw = {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {
            "nodes": [
                {
                    "id": v,
                    "kind": {"x": "exposure", "y": "outcome"}.get(v, "covariate"),
                    "column": v,
                }
                for v in ("x", "y", *COVARIATES)
            ],
            "arrows": [{"from": a, "to": b} for a, b in (("x", "y"), ("c1", "x"), ("c1", "y"))],
        },
        "analysis": {"family": "linear", "family_columns": {"logistic": {"outcome": "y_bin"}}},
    }
    return raw, table


def _edit(project, rng: random.Random) -> None:
    d = project.diagram
    # Family switches are left to test_edits: a fresh logistic run per state would be slow.
    kind = rng.choice(["move", "tick", "arrow", "arrow", "bind", "label"])
    node = rng.choice(COVARIATES)
    if kind == "move":
        d.update_node(node, x=rng.uniform(0, 500), y=rng.uniform(0, 500))
    elif kind == "tick":
        ids = set(project.analysis.proposed)
        project.analysis.proposed = sorted(ids ^ {node})
    elif kind == "arrow":
        target = rng.choice(["x", "y", *COVARIATES])
        if d.has_arrow(node, target):
            d.remove_arrow(node, target)
        elif target != node and not d.has_arrow(target, node):
            with contextlib.suppress(DiagramError):  # a refused cycle is a no-op
                d.add_arrow(node, target)
    elif kind == "bind":
        d.update_node(node, column=None if d.node(node).column else node)
    else:
        d.update_node(node, label=f"{node} {rng.randint(0, 3)}")


def _worker(seed, raw, table, cache, out, errors):
    rng = random.Random(seed)
    project = project_from_dict(json.loads(json.dumps(raw)))
    try:
        for _ in range(EDITS):
            _edit(project, rng)
            result = run_study(project, table=table, cache=cache)
            out.append(
                (json.dumps(project_to_dict(project), sort_keys=True), study_to_json(result))
            )
    except Exception as exc:  # reported in the main thread
        errors.append(exc)


def test_two_threads_share_one_cache_and_agree_with_fresh_runs(same):
    raw, table = _study()
    cache = StudyCache()
    outs: list[list] = [[], []]
    errors: list[Exception] = []
    threads = [
        threading.Thread(target=_worker, args=(seed, raw, table, cache, outs[i], errors))
        for i, seed in enumerate((11, 12))
    ]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert errors == []
    assert [len(o) for o in outs] == [EDITS, EDITS]
    fresh: dict[str, dict] = {}
    for state, got in outs[0] + outs[1]:
        if state not in fresh:
            project = project_from_dict(json.loads(state))
            fresh[state] = study_to_json(run_study(project, table=table, cache=StudyCache()))
        assert same(got, fresh[state]), state
    assert cache.count("fit").hits > 0  # the threads did share the cache
