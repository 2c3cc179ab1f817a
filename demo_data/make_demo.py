"""Generate the invented demo study: a cohort of kiln-works employees.

Everything here is invented: the works, the people, the measures and the
numbers.  The generator is seeded, so running it again writes the same files:

    python demo_data/make_demo.py

It writes ``demo_cohort.csv`` and ``demo_project.json`` beside itself and a
copy of both into ``src/covariscope/demo/`` (package data, so an installed
Covariscope can write the demo).

The question: the effect of cumulative dust exposure (``dust``, an index
with SD about 1) on a lung-function score (``lungfn``).

**True total effect: TRUE_EFFECT = −1.8 lung-function points per unit of
the dust index** (−1.2 directly and −0.6 through airway inflammation).

Structure written into the generator (→ is a cause), and what the demo's
diagram says about each variable:

=============  ==============================================  ======================
variable       in the generator                                planted verdict
=============  ==============================================  ======================
age            → dust, → lungfn, → activity, → school_yrs        adjust
income, area   two measures of socio-economic position S;       keep_one_of
               S → dust, S → lungfn (proxy-linked)
early_life     unmeasured; → S, → lungfn                       unmeasured
school_yrs     years since leaving school, from age            consider_proxy
badge          personal dust-monitor reading: dust + noise     exclude_measures_exposure
inflam         dust → inflam → lungfn (mediator)               exclude_pathway
prior_job      → dust, → screen (instrument-like)              avoid_instrument
family_hist    → lungfn, → screen                              optional_precision
screen         pre-employment screen score: collider of        exclude_collider
               prior_job and family_hist (M-structure)
smoke          never / former / current; → lungfn              optional_precision
activity       → lungfn, and age → activity, an arrow the      review
               diagram leaves out
inhaler        from lungfn (descendant of the outcome)         exclude_descendant
canteen        linked to nothing (unrelated)                   not_needed
=============  ==============================================  ======================

The multi-level exposure variant (``demo_levels_project.json``) asks the same
question of the dust index in thirds (``dust_level``: low, the reference;
middle; high).  The effect is linear in the index, so each contrast's true
effect is about TRUE_EFFECT times the difference in mean dust index between
its level and the low one.

Outcome versions: ``low_lung`` (lung-function score in the lowest quarter,
for the logistic and risk-ratio families) and ``years_to_dx`` / ``dx`` (years
to a respiratory diagnosis and its indicator, censored at 12 years, for the
Cox family).  About 2–4% of values are missing completely at random in
income, smoke, activity and screen.
"""

from __future__ import annotations

import hashlib
import json
import shutil
from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20240611
N = 3000
#: True total effect of one unit of the dust index on the lung-function score.
TRUE_EFFECT = -1.8
DIRECT_EFFECT = -1.2
#: dust → inflam (0.6) × inflam → lungfn (−1.0) = −0.6
INFLAM_PER_DUST = 0.6
LUNG_PER_INFLAM = -1.0

#: The multi-level variant's exposure: the dust index in thirds, reference first.
DUST_LEVELS = ("low", "middle", "high")

HERE = Path(__file__).resolve().parent
PACKAGE_DEMO = HERE.parent / "src" / "covariscope" / "demo"
CSV_NAME = "demo_cohort.csv"
PROJECT_NAME = "demo_project.json"
LEVELS_PROJECT_NAME = "demo_levels_project.json"


def simulate(seed: int = SEED, n: int = N) -> pd.DataFrame:
    """Draw the cohort (returns the table as written, with missing values)."""
    rng = np.random.default_rng(seed)
    age = rng.normal(45.0, 10.0, n).clip(20, 70)
    az = (age - 45.0) / 10.0
    early_life = rng.normal(size=n)  # unmeasured: never written to the file
    ses = 0.5 * early_life + rng.normal(0.0, np.sqrt(0.75), n)
    income = 32.0 + 8.0 * (ses + rng.normal(0.0, 0.12, n))
    area = 50.0 - 10.0 * (ses + rng.normal(0.0, 0.12, n))
    school_yrs = (age - 17.0 + rng.normal(0.0, 6.0, n)).clip(0, None)
    prior_job = rng.binomial(1, 0.38, n)
    family_hist = rng.binomial(1, 0.25, n)
    smoke = rng.choice(["never", "former", "current"], size=n, p=[0.5, 0.25, 0.25])
    activity_z = -0.6 * az + rng.normal(0.0, 0.8, n)
    activity = 3.0 + 1.5 * activity_z

    dust = 0.5 * az - 0.4 * ses + 0.6 * prior_job + rng.normal(0.0, np.sqrt(0.6), n)
    badge = dust + rng.normal(0.0, 0.3, n)
    inflam = INFLAM_PER_DUST * dust + rng.normal(0.0, 0.8, n)
    screen = 0.9 * prior_job + 0.9 * family_hist + rng.normal(0.0, 0.5, n)

    smoke_effect = np.select([smoke == "former", smoke == "current"], [-1.0, -3.0], 0.0)
    lungfn = (
        100.0
        + DIRECT_EFFECT * dust
        + LUNG_PER_INFLAM * inflam
        - 2.5 * az
        + 2.0 * ses
        + 1.5 * early_life
        - 2.0 * family_hist
        + smoke_effect
        + 2.0 * activity_z
        + rng.normal(0.0, 3.0, n)
    )
    inhaler = rng.binomial(1, 1.0 / (1.0 + np.exp((lungfn - 93.0) / 2.0)))
    low_lung = (lungfn < np.quantile(lungfn, 0.25)).astype(int)
    hazard = 0.03 * np.exp(-0.15 * (lungfn - 100.0))
    event_time = rng.exponential(1.0 / hazard)
    censor_time = np.minimum(12.0, rng.uniform(4.0, 30.0, n))
    years_to_dx = np.minimum(event_time, censor_time).clip(0.01, None)
    dx = (event_time <= censor_time).astype(int)

    frame = pd.DataFrame(
        {
            "worker": [f"W{i:05d}" for i in range(1, n + 1)],
            "age": age.round(1),
            "income": income.round(2),
            "area": area.round(2),
            "school_yrs": school_yrs.round(1),
            "prior_job": prior_job,
            "family_hist": family_hist,
            "smoke": smoke,
            "activity": activity.round(2),
            "dust": dust.round(3),
            "badge": badge.round(3),
            "inflam": inflam.round(3),
            "screen": screen.round(3),
            "lungfn": lungfn.round(2),
            "inhaler": inhaler,
            "low_lung": low_lung,
            "years_to_dx": years_to_dx.round(3),
            "dx": dx,
        }
    )
    for column, share in (
        ("income", 0.03),
        ("smoke", 0.02),
        ("activity", 0.025),
        ("screen", 0.015),
    ):
        holes = rng.random(n) < share
        frame[column] = frame[column].astype(object).where(~holes, None)
    # Drawn last so that adding it left every other value as it was.
    frame.insert(frame.columns.get_loc("inhaler") + 1, "canteen", rng.binomial(1, 0.6, n))
    # The dust index in thirds, for the multi-level exposure variant (no draw).
    frame["dust_level"] = pd.qcut(dust, 3, labels=list(DUST_LEVELS)).astype(str)
    return frame


# Node: id, label, x, y, measured, note.  Exposure left, outcome right;
# confounders above the exposure-outcome line, the pathway on it, the
# M-structure below, outcome descendants to the right.
NODES = [
    ("dust", "Dust index", "exposure", 60, 300, True, ""),
    ("lungfn", "Lung function", "outcome", 760, 300, True, ""),
    ("age", "Age", "covariate", 410, 60, True, ""),
    ("income", "Income", "covariate", 250, 150, True, ""),
    ("area", "Area deprivation", "covariate", 250, 40, True, ""),
    ("early_life", "Early-life setting", "covariate", 560, 130, False, "Not recorded."),
    ("school_yrs", "Years since school", "covariate", 590, 30, True, ""),
    ("badge", "Dust monitor", "covariate", 60, 430, True, ""),
    ("inflam", "Airway inflammation", "covariate", 410, 300, True, ""),
    ("prior_job", "Prior dusty job", "covariate", 160, 560, True, ""),
    ("family_hist", "Family history", "covariate", 660, 560, True, ""),
    ("screen", "Entry screen score", "covariate", 410, 520, True, ""),
    ("smoke", "Smoking", "covariate", 760, 440, True, ""),
    ("activity", "Leisure activity", "covariate", 640, 200, True, ""),
    ("inhaler", "Inhaler use", "covariate", 930, 300, True, ""),
    ("canteen", "Uses the canteen", "covariate", 930, 560, True, ""),
]
# The analyst's diagram.  It omits age → activity on purpose (the review case).
ARROWS = [
    ("dust", "lungfn"),
    ("age", "dust"),
    ("age", "lungfn"),
    ("age", "school_yrs"),
    ("income", "dust"),
    ("income", "lungfn"),
    ("early_life", "income"),
    ("early_life", "lungfn"),
    ("dust", "badge"),
    ("dust", "inflam"),
    ("inflam", "lungfn"),
    ("prior_job", "dust"),
    ("prior_job", "screen"),
    ("family_hist", "screen"),
    ("family_hist", "lungfn"),
    ("smoke", "lungfn"),
    ("activity", "lungfn"),
    ("lungfn", "inhaler"),
]
PROXIES = [("income", "area"), ("badge", "dust")]
#: A plausible first guess, with two mistakes: the mediator and the collider.
PROPOSED = ["age", "income", "area", "inflam", "screen", "smoke"]


def project_dict(csv_sha256: str) -> dict[str, object]:
    """The demo's project file, in Covariscope's project format."""
    nodes = []
    for node_id, label, kind, x, y, measured, note in NODES:
        nodes.append(
            {
                "id": node_id,
                "label": label,
                "kind": kind,
                "measured": measured,
                "column": node_id if measured else None,
                "x": x,
                "y": y,
                "note": note,
            }
        )
    return {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {
            "nodes": nodes,
            "arrows": [{"from": a, "to": b} for a, b in ARROWS],
            "proxies": [{"a": a, "b": b} for a, b in PROXIES],
        },
        "data": {"path": CSV_NAME, "sha256": csv_sha256},
        "analysis": {
            "family": "linear",
            "proposed": list(PROPOSED),
            "thresholds": {
                "change_pct": 10.0,
                "se_inflation_pct": 20.0,
                "vif": 10.0,
                "r2": 0.9,
                "condition_index": 30.0,
            },
            "column_types": {
                "prior_job": "binary",
                "family_hist": "binary",
                "smoke": "categorical",
                "inhaler": "binary",
                "canteen": "binary",
            },
            "reference_levels": {"smoke": "never"},
            "family_columns": {
                "logistic": {"outcome": "low_lung"},
                "risk_ratio": {"outcome": "low_lung"},
                "cox": {"time": "years_to_dx", "event": "dx"},
            },
            "keep_choices": {},
        },
    }


def levels_project_dict(csv_sha256: str) -> dict[str, object]:
    """The multi-level exposure variant: the same study with the dust index in
    thirds (low, the reference; middle; high) as the exposure."""
    project = project_dict(csv_sha256)
    diagram = project["diagram"]
    assert isinstance(diagram, dict)
    for node in diagram["nodes"]:
        if node["id"] == "dust":
            node["label"] = "Dust level (thirds)"
            node["column"] = "dust_level"
    analysis = project["analysis"]
    assert isinstance(analysis, dict)
    analysis["column_types"] = {**analysis["column_types"], "dust_level": "categorical"}
    analysis["reference_levels"] = {**analysis["reference_levels"], "dust_level": DUST_LEVELS[0]}
    return project


def write(folder: Path = HERE, package_copy: Path | None = PACKAGE_DEMO) -> tuple[Path, Path, Path]:
    """Write the CSV and the project files (and their package-data copies)."""
    frame = simulate()
    csv_path = folder / CSV_NAME
    text = frame.to_csv(index=False, lineterminator="\n")
    csv_path.write_text(text, encoding="utf-8")
    sha = hashlib.sha256(csv_path.read_bytes()).hexdigest()
    project_path = folder / PROJECT_NAME
    project_path.write_text(
        json.dumps(project_dict(sha), indent=2, ensure_ascii=False) + "\n", encoding="utf-8"
    )
    levels_path = folder / LEVELS_PROJECT_NAME
    levels_path.write_text(
        json.dumps(levels_project_dict(sha), indent=2, ensure_ascii=False) + "\n",
        encoding="utf-8",
    )
    if package_copy is not None:
        package_copy.mkdir(parents=True, exist_ok=True)
        for path in (csv_path, project_path, levels_path):
            shutil.copyfile(path, package_copy / path.name)
    return csv_path, project_path, levels_path


if __name__ == "__main__":
    for written in write():
        print(f"wrote {written}")
