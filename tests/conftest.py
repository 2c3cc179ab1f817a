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
from collections.abc import Callable
from pathlib import Path
from types import SimpleNamespace as Ns
from typing import Any

import pytest

from covariscope.analysis.adjustment import ProposalReview
from covariscope.analysis.fits import Fit
from covariscope.model import Diagram, Node, Project


@pytest.fixture(autouse=True)
def _isolated_home(tmp_path_factory, monkeypatch):
    """Each test sees an empty home, documents and settings folder."""
    home = tmp_path_factory.mktemp("home")
    monkeypatch.setenv("HOME", str(home))
    monkeypatch.setenv("XDG_CONFIG_HOME", str(home / ".config"))
    monkeypatch.setenv("XDG_DATA_HOME", str(home / ".local" / "share"))
    monkeypatch.setenv("XDG_DOCUMENTS_DIR", str(home / "Documents"))
    return home


# -- Study results built by hand, for the report and report-content tests ----------------
#
# Study results for the report tests, built by hand with the documented fields.
#
# The report reads a study result by attribute only, so these stand-ins let the
# layout be checked on shapes the demo does not have (a 40-node diagram with
# long notes, no data at all, an unsufficient set).

VERDICTS = (
    ("adjust", "Adjust"),
    ("keep_one_of", "Keep one of"),
    ("exclude_measures_exposure", "Exclude — measures the exposure"),
    ("exclude_pathway", "Exclude — on the pathway"),
    ("exclude_descendant", "Exclude — descendant"),
    ("exclude_collider", "Exclude — collider"),
    ("optional_precision", "Optional — precision"),
    ("avoid_instrument", "Avoid — instrument-like"),
    ("consider_proxy", "Consider — proxy of a confounder"),
    ("review", "Review — diagram and data disagree"),
    ("unmeasured", "Unmeasured"),
)
ROLES = (
    "confounder",
    "confounder",
    "mediator",
    "descendant_of_exposure",
    "collider",
    "precision",
    "instrument",
    "confounder_proxy",
    "confounder",
    "unrelated",
    "descendant_of_outcome",
)


def _fit(family: str, terms: tuple[str, ...], coef: float, se: float, n: int) -> Fit:
    return Fit(family, terms, coef, se, (coef - 1.96 * se, coef + 1.96 * se), n)


def make_project(n_covariates: int, note_chars: int = 0, *, seed: int = 3) -> Project:
    rng = random.Random(seed)
    d = Diagram()
    d.add_node(Node("shift", "Night-shift work", kind="exposure", x=0, y=200))
    d.add_node(Node("sbp", "Systolic blood pressure", kind="outcome", x=600, y=200))
    words = [
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
    for i in range(n_covariates):
        note = ""
        if note_chars:
            text = []
            while len(" ".join(text)) < note_chars:
                text.append(rng.choice(words))
            note = " ".join(text)[:note_chars]
        cols = max(1, math.ceil(math.sqrt(n_covariates)))
        d.add_node(
            Node(
                f"c{i}",
                f"Covariate number {i}" if i % 3 else f"Cov {i}",
                measured=i % 9 != 4,
                x=100 + (i % cols) * 400 / cols,
                y=(i // cols) * 60 - 100 + (i % 2) * 20,
                note=note,
            )
        )
        d.add_arrow(f"c{i}", "sbp")
        if i % 2 == 0:
            d.add_arrow(f"c{i}", "shift")
    d.add_arrow("shift", "sbp")
    if n_covariates >= 4:
        d.add_proxy("c0", "c2")
    project = Project(d, path=Path("/studies/night_shift.covariscope.json"))
    project.analysis.proposed = [f"c{i}" for i in range(0, n_covariates, 2)]
    return project


def make_result(project: Project, family: str = "linear", *, data: bool = True) -> Ns:
    covs = [n.id for n in project.diagram.covariates]
    roles = {c: Ns(role=ROLES[i % len(ROLES)], explanation="") for i, c in enumerate(covs)}
    verdicts = {
        c: Ns(
            node=c,
            code=VERDICTS[i % len(VERDICTS)][0],
            label=VERDICTS[i % len(VERDICTS)][1],
            reason="Because.",
            group=(),
            suggested=None,
        )
        for i, c in enumerate(covs)
    }
    proposed = tuple(project.analysis.proposed)
    recommended = tuple(c for c in covs[:6] if roles[c].role == "confounder")
    measure = {"linear": "mean difference", "logistic": "odds ratio"}[family]
    evidence = Ns(
        covariates={
            c: Ns(
                added=Ns(
                    change_pct=12.345 - i, change_pct_ratio=8.04 + i, se_inflation_pct=3.25 * i
                ),
                dropped=None,
                vif=1.0 + i / 7,
            )
            for i, c in enumerate(covs)
            if project.diagram.node(c).measured
        }
    )
    estimates = {
        "crude": _fit(family, (), 0.6123 if family == "logistic" else 4.8361, 0.11, 2400),
        "proposed": _fit(family, proposed, 0.4412 if family == "logistic" else 3.0219, 0.13, 2310),
        "recommended": _fit(
            family, recommended, 0.4012 if family == "logistic" else 2.9987, 0.12, 2310
        ),
        "full": _fit(family, tuple(covs), 0.39, 0.2, 2310),
    }
    return Ns(
        exposure="shift",
        outcome="sbp",
        family=family,
        effect_measure=measure,
        diagram=Ns(
            roles=roles,
            identifiable=True,
            minimal_sets=(recommended,),
            review=ProposalReview(
                proposed=tuple(sorted(proposed)),
                sufficient=False,
                open_paths=(("shift", "c1", "sbp"),),
                open_paths_total=1,
                open_paths_total_exact=True,
                unnecessary=(),
                harmful=("c4",) if len(covs) > 4 else (),
                unmeasured_in_set=(),
            ),
        ),
        proposed=proposed,
        sample=Ns(
            rows=2500,
            used=2310,
            missing_by_column={"c1": 120, "c3": 70},
            lost_by_column={"c1": 120, "c3": 70},
        )
        if data
        else None,
        evidence=evidence if data else None,
        verdicts=verdicts,
        recommended=recommended,
        estimates=estimates if data else {},
        collinear_groups=(("c0", "c2"),) if len(covs) >= 4 else (),
        evalue=Ns(estimate=2.1345, ci=1.55, conversion="standardised mean difference approximation")
        if data
        else None,
        thresholds={
            "change_pct": 10.0,
            "se_inflation_pct": 20.0,
            "vif": 10.0,
            "r2": 0.9,
            "condition_index": 30.0,
        },
        disagreements=tuple(
            f"{c}: the diagram calls it unrelated but adding it moves the estimate 14.2%."
            for c in covs[:3]
        ),
        messages=("Odds ratios can change on adjustment without confounding (non-collapsibility).",)
        if family == "logistic"
        else (),
        data_name="cohort.csv" if data else None,
        data_sha256="0123456789abcdef0123" if data else None,
    )


@pytest.fixture
def small_study():
    project = make_project(8, 120)
    return make_result(project), project


@pytest.fixture
def big_study():
    project = make_project(38, 2000)  # 40 nodes with exposure and outcome
    return make_result(project), project


@pytest.fixture
def make():
    """The stand-in builders: ``make.project(n, note_chars)``, ``make.result(project)``."""
    return Ns(project=make_project, result=make_result)


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
