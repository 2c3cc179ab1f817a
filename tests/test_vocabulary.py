"""One word, one place: the vocabulary against the JSON Schema, and the demo's
role and verdict words on the canvas, on the page and in ``check``."""

from __future__ import annotations

import json
import re
from importlib import resources
from pathlib import Path

import pytest

from covariscope.vocabulary import (
    CAUTIONS,
    CLAIM_TEST_TERMS,
    COLUMN_TYPE_TERMS,
    CORRECTION_TERMS,
    DEFAULT_THRESHOLDS,
    FAMILY_TERMS,
    KIND_TERMS,
    ROLE_TERMS,
    STRENGTH_TERMS,
    THRESHOLD_TERMS,
    VERDICT_TERMS,
    ClaimTest,
    ColumnType,
    Correction,
    Family,
    Kind,
    ModificationForm,
    Role,
    StrengthKind,
    Threshold,
    VerdictCode,
    change_read,
    group_key,
)

DEMO = Path(__file__).resolve().parents[1] / "demo_data" / "demo_project.json"


def _schema_enums() -> dict[str, list[str]]:
    text = (resources.files("covariscope") / "schemas" / "check.schema.json").read_text("utf-8")
    found: dict[str, list[str]] = {}

    def walk(node: object, path: str) -> None:
        if isinstance(node, dict):
            if "enum" in node:
                found[path] = list(node["enum"])
            for key, value in node.items():
                walk(value, f"{path}/{key}")
        elif isinstance(node, list):
            for value in node:
                walk(value, path)

    walk(json.loads(text), "")
    return found


def test_schema_enums_equal_the_vocabulary():
    enums = _schema_enums()
    roles = [r.value for r in Role]
    assert enums["/properties/roles/additionalProperties"] == roles
    assert enums["/properties/covariates/additionalProperties/properties/role"] == roles
    assert enums["/properties/covariates/additionalProperties/properties/verdict"] == [
        v.value for v in VerdictCode
    ]
    assert enums["/properties/family"] == [f.value for f in Family]
    measures = {t.effect_measure for t in FAMILY_TERMS.values()}
    measures |= {t.count_measure for t in FAMILY_TERMS.values()}
    assert set(enums["/properties/effect_measure"]) == measures
    checks = "/properties/diagram_checks/properties"
    assert enums[f"{checks}/method"] == [c.value for c in Correction]
    claim = f"{checks}/claims/items/properties"
    assert enums[f"{claim}/test"] == [t.value for t in ClaimTest]
    assert enums[f"{claim}/strength_kind"] == [k.value for k in StrengthKind]
    assert enums["/properties/modification/additionalProperties/properties/form"] == [
        f.value for f in ModificationForm
    ]
    assert len(enums) == 9  # a new enum in the schema must be compared here too


@pytest.mark.parametrize(
    ("enum", "table"),
    [
        (Kind, KIND_TERMS),
        (Role, ROLE_TERMS),
        (VerdictCode, VERDICT_TERMS),
        (Family, FAMILY_TERMS),
        (ColumnType, COLUMN_TYPE_TERMS),
        (Threshold, THRESHOLD_TERMS),
        (Correction, CORRECTION_TERMS),
        (StrengthKind, STRENGTH_TERMS),
        (ClaimTest, CLAIM_TEST_TERMS),
    ],
)
def test_every_code_has_its_words(enum, table):
    assert list(table) == list(enum)
    for code, term in table.items():
        assert term.code == code.value
        assert term.label
        assert term.short
        assert term.explanation.endswith(".")
    labels = [t.label for t in table.values()]
    assert len(set(labels)) == len(labels)  # one code, one word


def test_threshold_defaults_are_the_documented_guides():
    # DESIGN §2: change in estimate 10%, SE inflation 20%, VIF 10, condition index 30.
    assert dict(DEFAULT_THRESHOLDS) == {
        "change_pct": 10.0,
        "se_inflation_pct": 20.0,
        "vif": 10.0,
        "r2": 0.9,
        "condition_index": 30.0,
        # effect modification: p < 0.05 is the usual test level; the ratio 1.5 is common practice
        "modification_p": 0.05,
        "modification_ratio": 1.5,
    }


def test_the_threshold_reads_the_ratio_scale_for_ratio_measures():
    assert change_read(12.0, 8.0, ratio=True) == 8.0
    assert change_read(12.0, 8.0, ratio=False) == 12.0
    assert change_read(float("nan"), None, ratio=False) is None


def test_group_key_sorts_and_joins():
    assert group_key(["income", "area"]) == group_key(["area", "income"]) == "area|income"


def test_cautions_say_the_design_cautions():
    text = " ".join(CAUTIONS)
    for words in ("cannot fully test", "guides", "Unmeasured confounding", "does not replace"):
        assert words in text


def test_open_file_filter_offers_every_extension_the_loader_reads():
    from covariscope.data.loading import SUPPORTED_SUFFIXES
    from covariscope.views.data_panel import data_file_filter

    first = data_file_filter().split(";;")[0]
    for suffix in SUPPORTED_SUFFIXES:
        assert f"*{suffix}" in first.split("(")[1].rstrip(")").split()


# -- the demo, on three surfaces ---------------------------------------------------------


@pytest.fixture(scope="module")
def demo_words():
    """Per covariate: its label, its role words and its verdict words."""
    if not DEMO.exists():
        pytest.skip("demo project not present")
    from covariscope.model.project import load_project
    from covariscope.study import run_study

    project = load_project(DEMO)
    result = run_study(project)
    words = {
        node.id: (
            node.label,
            ROLE_TERMS[Role(result.diagram.roles[node.id].role)].label,
            VERDICT_TERMS[VerdictCode(result.verdicts[node.id].code)].label,
        )
        for node in project.diagram.covariates
    }
    return project, result, words


def test_check_text_shows_the_vocabulary_words(demo_words):
    from covariscope.views.check_text import format_study_text

    _, result, words = demo_words
    lines = format_study_text(result).splitlines()
    for label, role, verdict in words.values():
        (row,) = [line for line in lines if line.startswith(f"{label} ")]
        assert re.search(rf"\s{re.escape(role)}\s+{re.escape(verdict)}\s", row), row


def test_page_shows_the_vocabulary_words(demo_words, qapp, tmp_path):
    from pypdf import PdfReader

    from covariscope.report.painter import write_pdf

    project, result, words = demo_words
    pdf = write_pdf(result, project, tmp_path / "page.pdf")
    text = " ".join(PdfReader(pdf).pages[0].extract_text().split())
    for number, (label, role, verdict) in enumerate(words.values(), start=1):
        row = rf"\b{number} {re.escape(label)} (P )?(R )?{re.escape(role)} .*?{re.escape(verdict)}"
        assert re.search(row, text), (label, role, verdict)


def test_canvas_shows_the_vocabulary_words(demo_words, qapp, tmp_path):
    from PySide6.QtGui import QUndoStack

    from covariscope.qt.canvas import DiagramScene, export_svg
    from covariscope.views.diagram import canvas_annotations

    project, result, words = demo_words
    scene = DiagramScene(project, QUndoStack())
    notes = canvas_annotations(result)
    scene.set_annotations(notes.roles, notes.verdicts)
    svg = export_svg(scene, tmp_path / "demo.svg").read_text(encoding="utf-8")
    scene.detach()
    scene.clear()
    texts = [t.strip() for t in re.findall(r">([^<>]+)</text>", svg)]
    for label, role, verdict in words.values():
        at = texts.index(label)
        assert texts[at - 1].split(" · ")[0] == role  # the tag over the label
        assert texts[at + 1] == verdict  # the badge under it
