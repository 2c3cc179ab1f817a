"""`covariscope check --json` validates against the shipped JSON Schema."""

from __future__ import annotations

import itertools
import json
from importlib import resources
from pathlib import Path

import jsonschema
import pytest

from covariscope.cli import main

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def schema():
    text = (resources.files("covariscope") / "schemas" / "check.schema.json").read_text("utf-8")
    loaded = json.loads(text)
    jsonschema.Draft202012Validator.check_schema(loaded)
    return loaded


def _check(capsys, *args):
    code = main(["check", *args, "--json"])
    out = capsys.readouterr().out
    assert code == 0
    return json.loads(out)


def test_demo_output_validates(schema, capsys):
    out = _check(capsys, str(ROOT / "demo_data" / "demo_project.json"))
    jsonschema.validate(out, schema)
    assert out["family"] == "linear"
    assert out["sample"]["used"] < out["sample"]["rows"]
    assert out["covariates"]["early_life"]["added"] is None
    assert out["evalue"]["estimate"] >= 1
    assert out["keep_one_groups"] == out["collinear_groups"] == [["area", "income"]]
    for member in ("area", "income"):
        assert out["covariates"][member]["group"] == ["area", "income"]
    code = out["model_code"]["recommended"]
    assert code["members"] == ["age", "income"]
    assert code["formula"] == "lungfn ~ dust + age + income"
    assert "smf.ols('lungfn ~ dust + age + income'" in code["python"]
    assert "lm(lungfn ~ dust + age + income, data = d)" in code["r"]
    assert "regress lungfn dust age income" in code["stata"]
    broken = json.loads(json.dumps(out))
    broken["model_code"]["proposed"]["python"] = 1
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(broken, schema)
    del broken["model_code"]
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(broken, schema)


def test_binary_exposure_keeps_its_single_contrast_fields(schema, capsys):
    out = _check(capsys, str(ROOT / "demo_data" / "demo_project.json"))
    assert out["exposure_levels"] is None
    for fit in out["estimates"].values():
        assert fit["contrast"] is None
        assert fit["contrasts"] is None
    assert all(c["joint"] is None for c in out["covariates"].values())


@pytest.mark.parametrize("family", ["linear", "logistic"])
def test_multilevel_exposure_output_validates(schema, capsys, family):
    out = _check(capsys, str(ROOT / "demo_data" / "demo_levels_project.json"), "--family", family)
    jsonschema.validate(out, schema)
    assert out["exposure_levels"] == {"reference": "low", "levels": ["low", "high", "middle"]}
    for fit in out["estimates"].values():
        levels = [c["level"] for c in fit["contrasts"]]
        assert levels == ["high", "middle"]
        # the top-level estimate is the contrast it names
        named = next(c for c in fit["contrasts"] if c["level"] == fit["contrast"])
        assert (fit["coef"], fit["se"]) == (named["coef"], named["se"])
    age = out["covariates"]["age"]
    assert age["joint"]["moved_most"] in ("high", "middle")
    assert age["joint"]["wald"]["df"] == 2
    assert f"{age['joint']['moved_most']} vs low" in age["reason"]
    assert out["modification"] == {}


@pytest.mark.parametrize("family", ["logistic", "risk_ratio", "cox"])
def test_ratio_family_output_validates(schema, capsys, family):
    out = _check(capsys, str(ROOT / "demo_data" / "demo_project.json"), "--family", family)
    jsonschema.validate(out, schema)
    assert out["family"] == family
    assert out["estimates"]["recommended"]["ratio"] is not None
    assert out["covariates"]["age"]["added"]["change_pct_ratio"] is not None
    assert out["evalue"]["conversion"]


def test_diagram_without_data_validates(schema, capsys, tmp_path):
    project = {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {
            "nodes": [
                {"id": "x", "kind": "exposure"},
                {"id": "y", "kind": "outcome"},
                {"id": "c"},
                {"id": "u", "measured": False},
            ],
            "arrows": [
                {"from": "c", "to": "x"},
                {"from": "c", "to": "y"},
                {"from": "u", "to": "y"},
                {"from": "x", "to": "y"},
            ],
        },
        "analysis": {"proposed": ["c"]},
    }
    path = tmp_path / "graph_only.json"
    path.write_text(json.dumps(project), encoding="utf-8")
    out = _check(capsys, str(path))
    jsonschema.validate(out, schema)
    for key in ("sample", "evalue", "data"):
        assert key in out
        assert out[key] is None
    assert all(v is None for v in out["estimates"].values())
    assert out["covariates"]["c"]["verdict"] == "adjust"


def test_schema_rejects_a_missing_field(schema, capsys):
    out = _check(capsys, str(ROOT / "demo_data" / "demo_project.json"))
    del out["covariates"]["age"]["dropped"]
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(out, schema)


def test_capped_open_paths_validate_with_their_count(schema, capsys, tmp_path):
    # every arrow of a twelve-node causal order: more open paths than are listed
    # and than the count's budget covers
    order = ["n0", "n1", "n2", "n3", "x", "n5", "n6", "n7", "n8", "n9", "n10", "y"]
    kinds = {"x": "exposure", "y": "outcome"}
    project = {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {
            "nodes": [{"id": n, "kind": kinds.get(n, "covariate")} for n in order],
            "arrows": [{"from": a, "to": b} for a, b in itertools.combinations(order, 2)],
        },
    }
    path = tmp_path / "dense.json"
    path.write_text(json.dumps(project), encoding="utf-8")
    out = _check(capsys, str(path))
    jsonschema.validate(out, schema)
    assert len(out["open_paths"]) == 500
    assert out["open_paths_total"] > 500
    assert out["open_paths_total_exact"] is False
    for key in ("open_paths_total", "open_paths_total_exact"):
        broken = dict(out)
        del broken[key]
        with pytest.raises(jsonschema.ValidationError):
            jsonschema.validate(broken, schema)


def test_members_to_drop_either_one_not_both_are_grouped(schema, capsys, tmp_path):
    demo = ROOT / "demo_data"
    raw = json.loads((demo / "demo_project.json").read_text("utf-8"))
    raw["analysis"]["proposed"] = ["age", "income", "area", "smoke"]
    (tmp_path / "demo_cohort.csv").write_bytes((demo / "demo_cohort.csv").read_bytes())
    path = tmp_path / "either.json"
    path.write_text(json.dumps(raw), encoding="utf-8")
    out = _check(capsys, str(path))
    jsonschema.validate(out, schema)
    assert out["proposed_sufficient"] is True
    assert set(out["unnecessary"]) == {"area", "income", "smoke"}
    # a script must not drop both measures of the one confounder
    assert out["unnecessary_not_together"] == [["area", "income"]]
    main(["check", str(path)])
    text = capsys.readouterr().out
    assert "unnecessary: Smoking; either Area deprivation or Income, not both" in text
