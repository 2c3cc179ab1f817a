"""The invented demo study: every planted role and verdict comes out as planted."""

from __future__ import annotations

import hashlib
import importlib.util
import json
import math
from importlib import resources
from pathlib import Path

import pytest

from covariscope.analysis.verdicts import VERDICTS
from covariscope.model.project import load_project
from covariscope.study import run_study

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_data"

PLANTED = {
    "age": ("confounder", "adjust"),
    "income": ("confounder", "keep_one_of"),
    "area": ("confounder", "keep_one_of"),
    "early_life": ("confounder", "unmeasured"),
    "school_yrs": ("confounder_proxy", "consider_proxy"),
    "badge": ("descendant_of_exposure", "exclude_measures_exposure"),
    "inflam": ("mediator", "exclude_pathway"),
    "prior_job": ("instrument", "avoid_instrument"),
    "family_hist": ("precision", "optional_precision"),
    "screen": ("collider", "exclude_collider"),
    "smoke": ("precision", "optional_precision"),
    "activity": ("precision", "review"),
    "inhaler": ("descendant_of_outcome", "exclude_descendant"),
    "canteen": ("unrelated", "not_needed"),
}


def _generator():
    spec = importlib.util.spec_from_file_location("make_demo", DEMO / "make_demo.py")
    assert spec is not None
    assert spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def linear():
    return run_study(load_project(DEMO / "demo_project.json"))


def test_generator_reproduces_the_shipped_files():
    gen = _generator()
    text = gen.simulate().to_csv(index=False, lineterminator="\n")
    shipped = (DEMO / "demo_cohort.csv").read_text(encoding="utf-8")
    assert text == shipped
    for name in ("demo_project.json", "demo_levels_project.json"):
        project = json.loads((DEMO / name).read_text(encoding="utf-8"))
        assert project["data"]["sha256"] == hashlib.sha256(shipped.encode()).hexdigest()
    assert (
        pytest.approx(gen.DIRECT_EFFECT + gen.INFLAM_PER_DUST * gen.LUNG_PER_INFLAM)
        == gen.TRUE_EFFECT
    )


def test_package_data_holds_the_same_demo():
    package = resources.files("covariscope") / "demo"
    for name in ("demo_cohort.csv", "demo_project.json", "demo_levels_project.json"):
        assert (package / name).read_bytes() == (DEMO / name).read_bytes()


def test_every_planted_role_and_verdict(linear):
    got = {c: (linear.diagram.roles[c].role, v.code) for c, v in linear.verdicts.items()}
    assert got == PLANTED
    codes = {v.code for v in linear.verdicts.values()}
    assert codes == set(VERDICTS)  # every verdict of the vocabulary appears
    group = linear.verdicts["income"]
    assert group.group == ("area", "income")
    assert group.suggested in ("area", "income")
    # Prose names variables by their labels (the report's table prints labels).
    screen = linear.verdicts["screen"].reason
    assert (
        "Dust index – Prior dusty job – Entry screen score – Family history – Lung function"
        in screen
    )
    assert "{Area deprivation, Income}" in group.reason
    assert "each member alone gives a sufficient set with {Age}" in group.reason
    assert "is suggested because" in group.reason
    assert linear.verdicts["early_life"].reason.count("Area deprivation | Income") == 1
    assert any(d.startswith("Leisure activity: Review") for d in linear.disagreements)
    for v in linear.verdicts.values():
        assert v.reason.endswith(".")
        assert ". " not in v.reason  # one sentence


def test_recommended_ci_covers_the_truth_and_the_crude_does_not(linear):
    truth = _generator().TRUE_EFFECT
    rec, crude = linear.estimates["recommended"], linear.estimates["crude"]
    assert linear.recommended in (("age", "income"), ("age", "area"))
    assert rec is not None
    assert crude is not None
    assert rec.ci[0] <= truth <= rec.ci[1]
    assert not crude.ci[0] <= truth <= crude.ci[1]
    proposed = linear.estimates["proposed"]
    assert proposed is not None
    assert not proposed.ci[0] <= truth <= proposed.ci[1]  # the mediator and collider mislead
    assert linear.evalue is not None
    assert linear.evalue.estimate > linear.evalue.ci > 1


def test_demo_has_missing_values_and_a_many_level_categorical(linear):
    sample = linear.sample
    assert sample is not None
    assert sum(1 for v in sample.missing_by_column.values() if v > 0) >= 3
    assert sample.used < sample.rows
    assert linear.evidence is not None
    assert linear.evidence.covariates["smoke"].df >= 2  # three or more levels


def _as_rr(family: str, ratio: float) -> float:
    # The demo's binary outcome (lowest quarter) and its diagnoses are common (15% or
    # more), so VanderWeele & Ding (2017) convert: √OR; for HR (1 − 0.5^√HR)/(1 − 0.5^√(1/HR)).
    if family == "logistic":
        return math.sqrt(ratio)
    if family == "cox":
        return (1 - 0.5 ** math.sqrt(ratio)) / (1 - 0.5 ** math.sqrt(1 / ratio))
    return ratio


@pytest.mark.parametrize(
    ("family", "measure", "conversion"),
    [
        ("logistic", "odds ratio", "square root"),
        ("risk_ratio", "risk ratio", "as it is"),
        ("cox", "hazard ratio", "0.5^√HR"),
    ],
)
def test_other_families_run_on_the_demo(family, measure, conversion):
    r = run_study(load_project(DEMO / "demo_project.json"), family=family)
    assert r.effect_measure == measure
    for key in ("crude", "recommended", "full"):
        fit = r.estimates[key]
        assert fit is not None
        assert fit.ok, fit.message
    assert r.evalue is not None
    assert conversion in r.evalue.conversion
    rec = r.estimates["recommended"]
    assert rec is not None
    assert rec.ratio is not None
    rr = _as_rr(family, rec.ratio)
    assert r.evalue.estimate == pytest.approx(rr + math.sqrt(rr * (rr - 1)))
    assert r.verdicts["badge"].code == "exclude_measures_exposure"
    assert r.verdicts["inflam"].code == "exclude_pathway"


def test_written_demo_runs_from_its_new_folder(tmp_path):
    from covariscope.model.demo import write_demo

    project_path = write_demo(tmp_path / "demo")
    r = run_study(load_project(project_path))
    assert r.data_name == "demo_cohort.csv"
    assert not any("changed" in m for m in r.messages)
    assert r.verdicts["activity"].code == "review"


def test_saved_choice_within_a_group_takes_effect():
    project = load_project(DEMO / "demo_project.json")
    free = run_study(project)
    other = "area" if free.verdicts["income"].suggested == "income" else "income"
    project.analysis.keep_choices["area|income"] = other
    chosen = run_study(project)
    assert other in chosen.recommended
    assert chosen.verdicts["income"].suggested == other
    assert chosen.verdicts["area"].suggested == other
    assert "saved choice" in chosen.verdicts["area"].reason
    assert "saved choice" in chosen.recommended_reason


def test_multilevel_variant_recovers_each_contrast():
    """The dust index in thirds: the effect is linear in the index (TRUE_EFFECT per
    unit), so each contrast's truth is about TRUE_EFFECT times the difference in
    mean dust index between its third and the lowest; the recommended model's
    interval covers it and the crude one does not."""
    gen = _generator()
    frame = gen.simulate()
    dust = frame["dust"].astype(float)
    mean = dust.groupby(frame["dust_level"]).mean()
    result = run_study(load_project(DEMO / "demo_levels_project.json"))
    crude = {c.level: c for c in result.estimates["crude"].contrasts}
    adjusted = {c.level: c for c in result.estimates["recommended"].contrasts}
    for level in ("middle", "high"):
        truth = gen.TRUE_EFFECT * (mean[level] - mean["low"])
        name = level
        assert adjusted[name].ci[0] <= truth <= adjusted[name].ci[1]
        assert not crude[name].ci[0] <= truth <= crude[name].ci[1]
    assert result.verdicts["age"].code == "adjust"
