"""The model as code: the Python snippet, run on the demo data, gives the
estimate and standard error Covariscope shows; R and Stata are checked for
their structure only (neither is installed where these tests run)."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest

from covariscope.model.project import load_project
from covariscope.study import run_study
from covariscope.views.model_code import model_code, py_name, r_name, stata_name


def _run_python(code: str) -> tuple[np.ndarray, np.ndarray]:
    """Run a snippet as a user would (outside reference: statsmodels fits the
    model the snippet writes) and return the exposure's estimate and SE."""
    namespace: dict = {}
    exec(compile(code, "<model code>", "exec"), namespace)
    return np.atleast_1d(namespace["estimate"]), np.atleast_1d(namespace["se"])


def _same_to_print(a: float, b: float) -> bool:
    """Equal to the three decimals ``check`` prints (and far closer in fact)."""
    return round(a, 3) == round(b, 3) and math.isclose(a, b, rel_tol=1e-6, abs_tol=1e-9)


@pytest.mark.parametrize("family", ["linear", "logistic", "risk_ratio", "cox"])
def test_python_snippet_reproduces_the_estimates_shown(demo_folder, family, capsys):
    project = load_project(demo_folder / "demo_project.json")
    result = run_study(project, family=family)
    codes = model_code(result, project)
    for key in ("recommended", "proposed"):
        fit, code = result.estimates[key], codes[key]
        assert fit is not None
        assert code is not None
        estimate, se = _run_python(code.python)
        assert len(estimate) == 1
        assert _same_to_print(float(estimate[0]), fit.coef), (family, key)
        assert _same_to_print(float(se[0]), fit.se), (family, key)
    capsys.readouterr()  # the snippet prints its summary


@pytest.fixture
def awkward_study(demo_folder, tmp_path):
    """The demo with awkward names: a covariate column that is no identifier,
    an offset (log person-years) and a spline."""
    data = pd.read_csv(demo_folder / "demo_cohort.csv")
    data = data.rename(columns={"income": "income (k€)"})
    rng = np.random.default_rng(3)
    data["log py"] = np.log(rng.uniform(1.0, 5.0, len(data)))
    data.to_csv(tmp_path / "cohort copy.csv", index=False)
    raw = json.loads((demo_folder / "demo_project.json").read_text("utf-8"))
    raw["data"] = {"path": "cohort copy.csv"}
    for node in raw["diagram"]["nodes"]:
        if node["id"] == "income":
            node["column"] = "income (k€)"
    raw["analysis"]["family"] = "risk_ratio"
    raw["analysis"]["family_columns"]["risk_ratio"]["offset"] = "log py"
    raw["analysis"]["spline_knots"] = {"age": 4}
    (tmp_path / "awkward.json").write_text(json.dumps(raw), "utf-8")
    project = load_project(tmp_path / "awkward.json")
    return project, run_study(project)


def test_quoted_names_offset_and_spline_run_and_reproduce(awkward_study, capsys):
    project, result = awkward_study
    code = model_code(result, project)["recommended"]
    assert code is not None
    assert set(result.estimates["recommended"].terms) == {"age", "income"}
    # Python: the name is quoted for patsy, the spline has the sample's knots
    assert 'Q("income (k€)")' in code.python
    assert "cr(age, knots=(" in code.python
    assert 'offset=data["log py"]' in code.python
    assert 'cov_type="HC0"' in code.python
    estimate, se = _run_python(code.python)
    fit = result.estimates["recommended"]
    assert _same_to_print(float(estimate[0]), fit.coef)
    assert _same_to_print(float(se[0]), fit.se)
    capsys.readouterr()
    # R: backticks, natural spline with the same knots, offset, HC0 sandwich
    knots = result.model_terms["age"].knots
    assert len(knots) == 4
    assert "`income (k€)`" in code.r
    assert f"Boundary.knots = c({knots[0]!r}, {knots[-1]!r})" in code.r
    assert "offset(`log py`)" in code.r
    assert 'vcovHC(fit, type = "HC0")' in code.r
    assert 's[rownames(s) == "dust", , drop = FALSE]' in code.r
    assert 'na.strings = c("", "NA")' in code.r  # an empty cell is missing, as in pandas
    assert 'read.csv("' in code.r
    assert "check.names = FALSE" in code.r
    assert code.formula.startswith("low_lung ~ dust + ")
    # Stata: names made valid and said so, restricted cubic spline, offset, robust SE
    assert "income__k__" in code.stata
    assert '"income (k€)" is named income__k__' in code.stata
    assert f"mkspline age_s = age, cubic knots({' '.join(repr(k) for k in knots)})" in code.stata
    assert "offset(log_py) vce(robust)" in code.stata
    assert code.stata.count("keep if !missing(") == 1


def test_categorical_terms_keep_their_reference_in_every_language(demo_folder):
    project = load_project(demo_folder / "demo_project.json")
    result = run_study(project, family="cox")
    code = model_code(result, project)["proposed"]
    assert code is not None
    assert 'C(smoke, Treatment(reference="never"))' in code.python
    assert 'relevel(factor(smoke), ref = "never")' in code.r
    # encode numbers the levels alphabetically: current 1, former 2, never 3
    assert "encode smoke, generate(smoke_c)" in code.stata
    assert "ib(3).smoke_c" in code.stata
    assert "stset years_to_dx, failure(dx)" in code.stata
    assert "efron" in code.stata
    assert 'ties = "efron"' in code.r
    assert code.formula.startswith("Surv(years_to_dx, dx) ~ dust + ")


def test_every_snippet_says_it_reads_the_file_as_it_stands(demo_folder):
    """The loader may have cleaned values that the code reads raw: each
    language's snippet says so under its title, as a comment of that language."""
    from covariscope.views.model_code import AS_READ

    project = load_project(demo_folder / "demo_project.json")
    code = model_code(run_study(project), project)["recommended"]
    assert code is not None
    assert code.python.splitlines()[1] == f"# {AS_READ}"
    assert code.r.splitlines()[1] == f"# {AS_READ}"
    assert code.stata.splitlines()[1] == f"* {AS_READ}"


def test_no_data_no_code(demo_folder):
    project = load_project(demo_folder / "demo_project.json")
    project.data = None
    result = run_study(project)
    assert model_code(result, project) == {"recommended": None, "proposed": None}


@pytest.mark.parametrize(
    ("column", "python", "r", "stata"),
    [
        ("age", "age", "age", "age"),
        ("age (years)", 'Q("age (years)")', "`age (years)`", "age__years_"),
        ("2nd", 'Q("2nd")', "`2nd`", "_2nd"),
        ("if", 'Q("if")', "`if`", "if_"),
        ("a.b", 'Q("a.b")', "a.b", "a_b"),
    ],
)
def test_names_are_quoted_where_a_language_needs_it(column, python, r, stata):
    assert py_name(column) == python
    assert r_name(column) == r
    assert stata_name(column) == stata


def test_python_snippet_reproduces_each_contrast_of_a_multilevel_exposure(capsys):
    from pathlib import Path

    demo = Path(__file__).resolve().parents[2] / "demo_data" / "demo_levels_project.json"
    project = load_project(demo)
    result = run_study(project)
    for key in ("recommended", "proposed"):
        fit, code = result.estimates[key], model_code(result, project)[key]
        assert code is not None
        assert 'relevel(factor(dust_level), ref = "low")' in code.formula
        namespace: dict = {}
        exec(compile(code.python, "<model code>", "exec"), namespace)
        names = [namespace["fit"].model.exog_names[i] for i in namespace["rows"]]
        got = {
            n.split("[T.")[1].rstrip("]"): (e, s)
            for n, e, s in zip(names, namespace["estimate"], namespace["se"], strict=True)
        }
        assert set(got) == {c.level for c in fit.contrasts} == {"high", "middle"}
        for c in fit.contrasts:
            assert _same_to_print(float(got[c.level][0]), c.coef), (key, c.level)
            assert _same_to_print(float(got[c.level][1]), c.se), (key, c.level)
        assert 'startsWith(rownames(s), "relevel(factor(dust_level), ref = \\"low\\")")' in code.r
    capsys.readouterr()
