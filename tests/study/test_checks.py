"""The diagram-check stage on the demo study: claims, JSON, text and the review verdict."""

from __future__ import annotations

from pathlib import Path

import pytest

from covariscope.model.project import load_project, project_from_dict, project_to_dict
from covariscope.study import run_study
from covariscope.study.checks import checks_key
from covariscope.views.check_json import study_to_json
from covariscope.views.check_text import format_study_text

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "demo_project.json"


@pytest.fixture(scope="module")
def demo():
    project = load_project(DEMO)
    return project, run_study(project)


def test_demo_flags_the_planted_missing_link(demo) -> None:
    _, result = demo
    checks = result.diagram_checks
    assert checks is not None
    assert checks.tested > 40
    assert checks.method == "holm"
    top = checks.ranked()[0]
    # demo_data/README.md: leisure activity is drawn as a precision variable, yet it
    # is generated with links to the exposure's causes.
    assert top.failed
    assert "activity" in (top.claim.a, top.claim.b)
    verdict = result.verdicts["activity"]
    assert verdict.code == "review"
    assert "also disagree with the diagram's claim that Leisure activity" in verdict.reason
    assert all(
        "also disagree" not in v.reason for v in result.verdicts.values() if v.code != "review"
    )


def test_json_block_is_sorted_and_complete(demo) -> None:
    _, result = demo
    block = study_to_json(result)["diagram_checks"]
    assert block["method"] == "holm"
    pairs = [(c["a"], c["b"]) for c in block["claims"]]
    assert all(a < b for a, b in pairs)
    assert pairs == sorted(pairs)
    assert block["tested"] == len(block["claims"])
    assert block["failed"] == sum(c["failed"] for c in block["claims"])
    assert all(c["p_adjusted"] >= c["p"] for c in block["claims"])


def test_text_names_the_correction_and_the_caution(demo) -> None:
    _, result = demo
    text = format_study_text(result)
    assert "Holm's step-down correction" in text
    assert "read the strength, not only the p-value" in text
    assert "Perhaps a missing arrow" in text


def test_correction_and_limit_are_project_settings(demo) -> None:
    project, _ = demo
    raw = project_to_dict(project)
    raw["analysis"]["diagram_checks"] = {"correction": "bh", "limit": 5}
    changed = project_from_dict(raw, DEMO)
    result = run_study(changed)
    checks = result.diagram_checks
    assert checks.method == "bh"
    assert checks.tested == 5
    assert checks.omitted > 0
    assert any("raise the limit" in m for m in result.messages)
    assert project_to_dict(changed)["analysis"]["diagram_checks"] == {
        "correction": "bh",
        "limit": 5,
    }


def test_stage_key_ignores_layout_but_not_arrows(demo) -> None:
    from types import SimpleNamespace

    project, _ = demo
    engine = SimpleNamespace(design=SimpleNamespace(key="data digest"))
    G = project.diagram.to_networkx()
    key = checks_key(project, G, engine)
    moved = G.copy()
    for node in moved.nodes:
        moved.nodes[node]["x"] = 0.0
    assert checks_key(project, moved, engine) == key
    fewer = G.copy()
    fewer.remove_edge(*next(iter(G.edges)))
    assert checks_key(project, fewer, engine) != key
    other = SimpleNamespace(design=SimpleNamespace(key="other data"))
    assert checks_key(project, G, other) != key
