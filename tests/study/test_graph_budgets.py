"""A study on a diagram whose graph work outruns its budgets finishes, and
says so in its messages, the check text and the check JSON (validated
against the shipped schema)."""

from __future__ import annotations

import itertools
import json
import random
from importlib import resources
from pathlib import Path

import jsonschema
import numpy as np
import pandas as pd
import pytest

from covariscope.analysis.claims import CLAIM_SEARCH_BUDGET
from covariscope.data.loading import LoadedTable
from covariscope.model.project import project_from_dict
from covariscope.study import run_study
from covariscope.views.check_json import study_to_json
from covariscope.views.check_text import format_study_text


def _schema() -> dict[str, object]:
    text = (resources.files("covariscope") / "schemas" / "check.schema.json").read_text("utf-8")
    loaded: dict[str, object] = json.loads(text)
    return loaded


def _project(nodes: list[str], arrows: list[tuple[str, str]], bound: set[str] | None = None):  # type: ignore[no-untyped-def]
    kinds = {"x": "exposure", "y": "outcome"}
    return project_from_dict(
        {
            "format": "covariscope-project",
            "version": 1,
            "diagram": {
                "nodes": [
                    {
                        "id": n,
                        "kind": kinds.get(n, "covariate"),
                        "column": n if bound is not None and n in bound else None,
                    }
                    for n in nodes
                ],
                "arrows": [{"from": a, "to": b} for a, b in arrows],
            },
            "analysis": {"family": "linear", "proposed": []},
        }
    )


def _budget_diagram() -> tuple[list[str], list[tuple[str, str]]]:
    """A dead-end ladder of 22 rungs under the collider c (4 million branches
    with no open path) beside 12 backdoor paths each closed by either of two
    covariates (4,096 minimal sets)."""
    rungs = 22
    arrows = [("x", "y"), ("d", "c"), ("d", "y"), ("c", "x")]
    for a in "ab":
        arrows += [(f"{a}0", "x"), (f"{a}{rungs - 1}", "c")]
        arrows += [(f"{b}{i + 1}", f"{a}{i}") for i in range(rungs - 1) for b in "ab"]
    for i in range(12):
        arrows += [(f"q{i}", f"p{i}"), (f"p{i}", "x"), (f"q{i}", "y")]
    nodes = sorted({n for arrow in arrows for n in arrow})
    return nodes, arrows


def test_a_study_past_its_graph_budgets_finishes_and_says_so() -> None:
    nodes, arrows = _budget_diagram()
    result = run_study(_project(nodes, arrows))
    da = result.diagram
    assert not da.minimal_sets_complete
    assert da.review.open_paths_stopped
    said = " ".join(result.messages)
    assert "listing of minimal sufficient sets stopped" in said
    assert "backdoor paths the proposed set leaves open stopped at its work budget" in said
    text = format_study_text(result)
    assert "more exist (see the messages)" in text
    out = study_to_json(result)
    jsonschema.validate(out, _schema())
    assert out["minimal_sets_complete"] is False
    assert out["identifiable"] is True


def test_a_small_study_says_nothing_of_budgets() -> None:
    nodes = ["x", "y", "c", "m"]
    result = run_study(_project(nodes, [("c", "x"), ("c", "y"), ("x", "m"), ("m", "y")]))
    assert result.diagram.minimal_sets_complete
    assert not any("budget" in m for m in result.messages)
    assert study_to_json(result)["minimal_sets_complete"] is True


def test_claims_past_their_budget_are_counted_in_messages_and_json() -> None:
    # a chain of 70 variables with data: 2,346 pairs with no arrow between them
    n = 70
    names = ["x", *(f"v{i:02d}" for i in range(n - 2)), "y"]
    arrows = list(itertools.pairwise(names))
    rng = np.random.default_rng(5)
    values = np.cumsum(rng.normal(size=(120, n)), axis=1)
    frame = pd.DataFrame(values, columns=names)
    project = _project(names, arrows, bound=set(names))
    table = LoadedTable(frame, Path("chain.csv"), "text", "0" * 64)
    result = run_study(project, table=table)
    checks = result.diagram_checks
    assert checks is not None
    pairs = n * (n - 1) // 2 - (n - 1)
    assert checks.unsearched == pairs - CLAIM_SEARCH_BUDGET
    assert any("listing of independence claims stopped" in m for m in result.messages)
    out = study_to_json(result)
    jsonschema.validate(out, _schema())
    assert out["diagram_checks"]["unsearched"] == checks.unsearched


def test_a_proposal_too_large_for_the_pair_check_is_said_in_the_messages() -> None:
    extra = [f"p{i}" for i in range(41)]
    nodes = ["x", "y", "c", *extra]
    arrows = [("c", "x"), ("c", "y"), ("x", "y"), *((p, "y") for p in extra)]
    project = _project(nodes, arrows)
    project.analysis.proposed = ["c", *extra]
    result = run_study(project)
    assert not result.diagram.review.not_together_checked
    assert any("drop them one at a time" in m for m in result.messages)


def test_confounders_left_unsettled_are_said_in_messages_text_and_json(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    from covariscope.analysis import roles

    # three causes each among the earlier nodes; every fifth causes x, every seventh y
    rng = random.Random(3)
    ids = [f"n{i:02d}" for i in range(60)]
    arrows = [("x", "y")]
    for j in range(1, len(ids)):
        arrows += [(ids[i], ids[j]) for i in rng.sample(range(j), min(j, 3))]
    arrows += [(i, "x") for i in ids[::5]] + [(i, "y") for i in ids[::7]]
    project = _project(["x", "y", *ids], arrows)
    assert run_study(project).diagram.roles_unsettled == ()
    monkeypatch.setattr(roles, "CONFOUNDING_BUDGET", 100)
    result = run_study(project)
    unsettled = result.diagram.roles_unsettled
    assert unsettled
    assert all(result.diagram.roles[c].role == "confounder" for c in unsettled)
    said = " ".join(result.messages)
    assert "search for backdoor paths without a collider stopped at its work budget" in said
    assert "taken to be a confounder" in said
    text = format_study_text(result)
    assert f"roles of {len(unsettled)} covariate(s) not settled" in text
    out = study_to_json(result)
    jsonschema.validate(out, _schema())
    assert out["roles_unsettled"] == list(unsettled)
