"""Test set-up shared by the whole suite.

Qt runs offscreen and every test gets its own settings folder, so the suite
never touches the user's configuration and needs no display.
"""

from __future__ import annotations

import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
os.environ.setdefault("MPLBACKEND", "Agg")

import json
import math
import random
from collections.abc import Callable, Sequence
from functools import partial
from pathlib import Path
from types import SimpleNamespace as Ns
from typing import Any

import networkx as nx
import numpy as np
import pandas as pd
import pytest

from covariscope.model import Diagram, Node, Project
from covariscope.model.project import DataRef
from covariscope.study import StudyResult, run_study


@pytest.fixture(autouse=True)
def _isolated_home(tmp_path_factory, monkeypatch):
    """Each test sees an empty home, documents and settings folder."""
    home = tmp_path_factory.mktemp("home")
    monkeypatch.setenv("HOME", str(home))
    monkeypatch.setenv("XDG_CONFIG_HOME", str(home / ".config"))
    monkeypatch.setenv("XDG_DATA_HOME", str(home / ".local" / "share"))
    monkeypatch.setenv("XDG_DOCUMENTS_DIR", str(home / "Documents"))
    return home


# -- Studies for the report and report-content tests ------------------------------------
#
# A diagram of any size with every role in it, data simulated from the diagram
# itself (a linear structural model: each arrow has weight 0.5, so the true
# effects are known by construction), and the real pipeline run on them: the
# page is checked on shapes the demo does not have (a 40-node diagram with long
# notes, no data at all, a proposed set that is not sufficient).

#: arrows of the first eight covariates ("x"/"y": into the exposure/outcome;
#: "from x"/"from y": out of them)
PATTERN = (
    ("x", "y"),  # confounder, proposed
    ("x", "y"),  # confounder left out of the proposed set: a backdoor path stays open
    ("y",),  # outcome cause; covariate 2 also causes covariate 0, closely (a collinear pair)
    ("from x", "y"),  # mediator
    ("y",),  # outcome cause, not measured
    ("from x", "from y"),  # descendant of the outcome
    ("x", "y"),  # confounder, proposed
    ("x",),  # exposure cause only (instrument-like); in the data it moves the outcome too
)
#: arrows of the covariates after the first eight, by i % 5: no more confounders
MORE = (("y",), ("from x", "y"), ("from x", "from y"), ("x",), ())
_ENDS = {"x": "shift", "y": "sbp"}
NOTE_WORDS = [
    "because",
    "the",
    "diagram",
    "says",
    "this",
    "variable",
    "opens",
    "a",
    "backdoor",
    "path",
    "and",
    "data",
    "agree",
]


def _arrow(covariate: str, link: str) -> tuple[str, str]:
    end = _ENDS[link[-1]]
    return (end, covariate) if link.startswith("from") else (covariate, end)


def make_project(n_covariates: int, note_chars: int = 0, *, seed: int = 3) -> Project:
    """A project of ``n_covariates`` covariates with the roles of :data:`PATTERN`
    (then :data:`MORE`); the even, measured ones among the first eight and the even,
    measured outcome causes after them are proposed."""
    rng = random.Random(seed)
    d = Diagram()
    d.add_node(Node("shift", "Night-shift work", kind="exposure", x=0, y=200))
    d.add_node(Node("sbp", "Systolic blood pressure", kind="outcome", x=600, y=200))
    cols = max(1, math.ceil(math.sqrt(n_covariates)))
    for i in range(n_covariates):
        note = ""
        if note_chars:
            text: list[str] = []
            while len(" ".join(text)) < note_chars:
                text.append(rng.choice(NOTE_WORDS))
            note = " ".join(text)[:note_chars]
        d.add_node(
            Node(
                f"c{i}",
                f"Covariate number {i}" if i % 3 else f"Cov {i}",
                measured=i % 8 != 4,
                x=100 + (i % cols) * 400 / cols,
                y=(i // cols) * 60 - 100 + (i % 2) * 20,
                note=note,
            )
        )
        for link in PATTERN[i] if i < len(PATTERN) else MORE[i % len(MORE)]:
            d.add_arrow(*_arrow(f"c{i}", link))
    if n_covariates >= 3:
        d.add_arrow("c2", "c0")
    d.add_arrow("shift", "sbp")
    if n_covariates >= 12:
        d.add_proxy("c13", "c14")
    project = Project(d, path=Path("/studies/night_shift.covariscope.json"))
    project.analysis.proposed = [
        f"c{i}"
        for i in range(0, n_covariates, 2)
        if i % 8 != 4 and (i < len(PATTERN) or MORE[i % len(MORE)] == ("y",))
    ]
    return project


def _simulate(project: Project, rows: int, seed: int, close_pair: bool) -> pd.DataFrame:
    """Every node drawn from its parents in the diagram (weight 0.5 each, unit
    normal noise); with ``close_pair`` covariate 0 is nearly covariate 2 again;
    covariate 7 also moves the outcome, which the diagram does not say."""
    rng = np.random.default_rng(seed)
    d = project.diagram
    graph = nx.DiGraph(list(d.arrows))
    graph.add_nodes_from(n.id for n in d.nodes)
    if "c7" in graph:
        graph.add_edge("c7", "sbp")  # in the data only
    values: dict[str, np.ndarray] = {}
    for node in nx.topological_sort(graph):
        noise = rng.normal(size=rows)
        weights = {p: (1.5 if (p, node) == ("c7", "sbp") else 0.5) for p in graph.pred[node]}
        values[node] = sum((w * values[p] for p, w in weights.items()), noise)
        if close_pair and node == "c0" and "c2" in values:
            values[node] = values["c2"] + 0.15 * noise
    frame = pd.DataFrame({n.id: values[n.id] for n in d.nodes if n.measured}).round(4)
    frame["sbp_high"] = (values["sbp"] > np.median(values["sbp"])).astype(int)
    order = rng.permutation(rows)
    for column, lost in (("c1", order[:120]), ("c3", order[120:190])):
        if column in frame:
            frame.loc[lost, column] = np.nan
    return frame


def bind_simulated_data(
    project: Project, folder: Path, *, rows: int = 2500, seed: int = 11, close_pair: bool = True
) -> Path:
    """Write the simulated cohort to ``folder/cohort.csv`` and bind every
    measured node to its column (``sbp_high``, the outcome split at its
    median, is the outcome of the ratio families)."""
    path = folder / "cohort.csv"
    _simulate(project, rows, seed, close_pair).to_csv(path, index=False)
    for node in project.diagram.nodes:
        if node.measured:
            project.diagram.update_node(node.id, column=node.id)
    project.data = DataRef(str(path))
    binary = {"outcome": "sbp_high"}
    project.analysis.family_columns = {"logistic": dict(binary), "risk_ratio": dict(binary)}
    return path


@pytest.fixture(scope="session")
def _study_folders(tmp_path_factory):
    return lambda: tmp_path_factory.mktemp("study")


def _result(
    folders: Callable[[], Path],
    project: Project,
    family: str = "linear",
    *,
    data: bool = True,
    close_pair: bool = True,
) -> StudyResult:
    if data:
        bind_simulated_data(project, folders(), close_pair=close_pair)
    return run_study(project, family=family)


@pytest.fixture(scope="session")
def small_study(_study_folders):
    """8 covariates with notes of 120 characters: (StudyResult, Project)."""
    project = make_project(8, 120)
    return _result(_study_folders, project), project


@pytest.fixture(scope="session")
def big_study(_study_folders):
    """40 nodes with notes of 2,000 characters: (StudyResult, Project).

    Every independence claim is tested and no two confounders are collinear,
    so the findings are few enough to be listed whole beside the long notes
    (with the default claim limit and a collinear pair the letter page caps them).
    """
    project = make_project(38, 2000)
    project.analysis.claim_limit = 1000
    return _result(_study_folders, project, close_pair=False), project


@pytest.fixture
def make(_study_folders):
    """``make.project(n, note_chars)``; ``make.result(project, family="linear",
    data=True)`` binds simulated data to the project and runs the study."""
    return Ns(project=make_project, result=partial(_result, _study_folders))


def same_json(a: Any, b: Any) -> bool:
    """Equal JSON, numbers to 1e-7 relative.

    A cached answer may come another way than a fresh one: an extended
    cross-product sums in another order, and an iterative fit warm-started
    from another model stops at another point within its tolerance (about
    1e-10 on the coefficients, more on a percentage of their ratio).
    """
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(same_json(a[k], b[k]) for k in a)
    if isinstance(a, list) and isinstance(b, list):
        return len(a) == len(b) and all(same_json(x, y) for x, y in zip(a, b, strict=True))
    if isinstance(a, float) and isinstance(b, float):
        return a == pytest.approx(b, rel=1e-7, abs=1e-10, nan_ok=True)
    return json.dumps(a) == json.dumps(b)


@pytest.fixture
def same() -> Callable[[Any, Any], bool]:
    """:func:`same_json` for a test to call."""
    return same_json


@pytest.fixture
def count_calls(monkeypatch: pytest.MonkeyPatch) -> Callable[[Any, str], list[int]]:
    """``count_calls(owner, name)`` replaces ``owner.name`` by a wrapper that
    counts its calls (in the returned one-item list) and calls it."""

    def count(owner: Any, name: str) -> list[int]:
        calls = [0]
        real = getattr(owner, name)

        def counting(*args: Any, **kw: Any) -> Any:
            calls[0] += 1
            return real(*args, **kw)

        monkeypatch.setattr(owner, name, counting)
        return calls

    return count


def _path_open(G: nx.DiGraph, p: Sequence[str], z: set[str]) -> bool:
    """Whether the path ``p`` of diagram ``G`` is open given ``z``, by the
    definition of d-separation (Pearl 2009, ch. 1; the chapter from memory):
    every collider in ``z`` or with a descendant in it, no other node in ``z``.
    The reference the graph code is held to."""
    anz = set(z).union(*(nx.ancestors(G, v) for v in z)) if z else set()
    for i in range(1, len(p) - 1):
        collider = G.has_edge(p[i - 1], p[i]) and G.has_edge(p[i + 1], p[i])
        if (p[i] not in anz) if collider else (p[i] in z):
            return False
    return True


@pytest.fixture
def path_open() -> Callable[[nx.DiGraph, Sequence[str], set[str]], bool]:
    """The reference test of an open path (`_path_open`)."""
    return _path_open
