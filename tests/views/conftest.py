"""The demo study, analysed once for the panel tests."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

DEMO = Path(__file__).resolve().parents[2] / "demo_data"


@pytest.fixture(scope="session")
def demo_folder(tmp_path_factory):
    if not (DEMO / "demo_project.json").exists():
        pytest.skip("the demo study is not there yet")
    folder = tmp_path_factory.mktemp("demo")
    for name in ("demo_project.json", "demo_cohort.csv"):
        shutil.copyfile(DEMO / name, folder / name)
    return folder


@pytest.fixture(scope="session")
def demo_study(demo_folder):
    from covariscope.model.project import load_project
    from covariscope.study import run_study
    from covariscope.views.check_json import study_to_json

    project = load_project(demo_folder / "demo_project.json")
    result = run_study(project)
    return project, result, study_to_json(result)
