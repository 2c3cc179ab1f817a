"""Splines for continuous covariates: the model with a spline term equals
statsmodels with the same patsy basis, GVIF treats the basis as one term
(Fox & Monette 1992), and a planted curved confounder is caught by the
residual-confounding check."""

from __future__ import annotations

import numpy as np
import pandas as pd
import patsy
import pytest
import statsmodels.api as sm
from statsmodels.duration.hazard_regression import PHReg

import covariscope.analysis.spline_basis as spline_basis_module
from covariscope.analysis.design import TermSpec, make_design
from covariscope.analysis.evidence import EvidenceEngine, compute_evidence
from covariscope.analysis.spline_basis import KNOT_QUANTILES, knot_positions, spline_basis
from covariscope.analysis.splines import residual_confounding, residual_table

TRUE_EFFECT = 1.0


def _curved(n: int = 4000, seed: int = 5) -> pd.DataFrame:
    """Invented simulation: age confounds through a U-shaped curve (true exposure effect 1)."""
    rng = np.random.default_rng(seed)
    age = rng.uniform(20, 70, n)
    u = ((age - 45) / 12) ** 2
    z = rng.normal(size=n)
    x = u + 0.5 * z + rng.normal(size=n)
    y = TRUE_EFFECT * x + 2.0 * u + 0.5 * z + rng.normal(size=n)
    yb = (rng.random(n) < 1 / (1 + np.exp(-(-1 + 0.3 * x + 0.5 * u)))).astype(float)
    t = rng.exponential(1 / np.exp(0.3 * x + 0.4 * u))
    return pd.DataFrame({"x": x, "age": age, "z": z, "y": y, "yb": yb, "t": t, "d": 1.0})


def _design(frame: pd.DataFrame, family: str, knots: int = 0):
    outcome = {"linear": "y", "logistic": "yb", "cox": None}[family]
    return make_design(
        frame,
        exposure=TermSpec("x", "continuous"),
        covariates={
            "age": TermSpec("age", "continuous", knots=knots),
            "z": TermSpec("z", "continuous"),
        },
        outcome=outcome,
        family=family,
        time="t" if family == "cox" else None,
        event="d" if family == "cox" else None,
    )


def test_knots_sit_at_harrells_quantiles() -> None:
    x = np.random.default_rng(0).normal(size=1000)
    np.testing.assert_allclose(knot_positions(x, 5), np.quantile(x, KNOT_QUANTILES[5]))
    with pytest.raises(ValueError, match="3 to 7"):
        knot_positions(x, 9)


@pytest.mark.parametrize("family", ["linear", "logistic", "cox"])
def test_spline_model_equals_statsmodels_with_the_same_basis(family: str) -> None:
    frame = _curved(1500)
    design = _design(frame, family, knots=4)
    assert design.blocks["age"].df == 3
    fit = EvidenceEngine(design).fit(["age", "z"])
    # the same basis, built by patsy in the test: cr() with knots at the quantiles
    k = np.quantile(frame["age"], KNOT_QUANTILES[4])
    basis = np.asarray(
        patsy.dmatrix(
            "cr(age, knots=inner, lower_bound=lo, upper_bound=hi, constraints='center') - 1",
            {"age": frame["age"], "inner": k[1:-1], "lo": k[0], "hi": k[-1]},
        )
    )
    X = np.column_stack([frame["x"], basis, frame["z"]])
    if family == "linear":
        ref = sm.OLS(frame["y"], sm.add_constant(X)).fit()  # Reference: statsmodels OLS
        b, se = np.asarray(ref.params)[1], np.asarray(ref.bse)[1]
    elif family == "logistic":
        ref = sm.Logit(frame["yb"], sm.add_constant(X)).fit(disp=0)  # Reference: statsmodels Logit
        b, se = np.asarray(ref.params)[1], np.asarray(ref.bse)[1]
    else:
        ref = PHReg(frame["t"], X, status=frame["d"], ties="efron").fit()  # Reference: PHReg
        b, se = np.asarray(ref.params)[0], np.asarray(ref.bse)[0]
    assert fit.coef == pytest.approx(b, rel=1e-6)
    assert fit.se == pytest.approx(se, rel=1e-5)


def test_gvif_treats_the_basis_as_one_term() -> None:
    frame = _curved(1500)
    design = _design(frame, "linear", knots=4)
    table = compute_evidence(EvidenceEngine(design), candidates=["age", "z"], added=["age", "z"])
    ev = table.covariates["age"]
    assert ev.df == 3
    # Fox & Monette (1992): GVIF = det(R11) det(R22) / det(R), R the correlation
    # matrix of the regressors, 1 = the term's columns, 2 = the others
    R = np.corrcoef(design.values[:, :-1], rowvar=False)
    term = list(design.blocks["age"].index)
    rest = [j for j in range(R.shape[0]) if j not in term]
    expected = (
        np.linalg.det(R[np.ix_(term, term)])
        * np.linalg.det(R[np.ix_(rest, rest)])
        / np.linalg.det(R)
    )
    assert ev.gvif == pytest.approx(expected, rel=1e-8)
    assert ev.gvif_root == pytest.approx(expected ** (1 / 6), rel=1e-8)


def test_planted_curved_confounder_is_flagged_and_the_spline_covers_the_truth() -> None:
    frame = _curved()
    design = _design(frame, "linear")
    check = residual_confounding(design, ["age", "z"], "age", frame["age"].to_numpy())
    assert check.flagged
    ref_lin = sm.OLS(frame["y"], sm.add_constant(frame[["x", "age", "z"]])).fit()
    assert check.linear == pytest.approx(ref_lin.params["x"], rel=1e-8)
    lo, hi = ref_lin.conf_int().loc["x"]
    assert not lo <= TRUE_EFFECT <= hi  # linear adjustment leaves residual confounding
    spline = EvidenceEngine(_design(frame, "linear", knots=4)).fit(["age", "z"])
    assert spline.coef == pytest.approx(check.spline, rel=1e-8)
    assert spline.ci[0] <= TRUE_EFFECT <= spline.ci[1]
    # a confounder with a straight-line effect is not flagged
    assert not residual_table(design, ["age", "z"], ["z"])["z"].flagged


def test_spline_of_a_column_with_few_values_is_refused_plainly() -> None:
    frame = _curved(200)
    frame["age"] = (frame["age"] > 45).astype(float) * 10
    with pytest.raises(Exception, match="cannot enter as a spline"):
        _design(frame, "linear", knots=4)
    assert spline_basis(np.linspace(0, 1, 30), 3).shape == (30, 2)


def _patsy_cr(x: np.ndarray, knots: int) -> np.ndarray:
    """Reference: patsy's cr() with the centring constraint, knots at Harrell's quantiles."""
    where = knot_positions(x, knots)
    basis = patsy.cr(
        x, knots=where[1:-1], lower_bound=where[0], upper_bound=where[-1], constraints="center"
    )
    return np.ascontiguousarray(np.asarray(basis, dtype=float))


@pytest.mark.parametrize("knots", [3, 4, 5, 6, 7])
@pytest.mark.parametrize("shape", ["normal", "skewed", "whole numbers", "constant tail"])
def test_spline_basis_equals_patsy_cr_to_the_last_bit(
    knots: int, shape: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    # Reference: patsy.cr (patsy 1.0, the mgcv "cr" basis, Wood 2017 §5.3.1).
    # Bit for bit, not to a tolerance: check --json prints every estimate in full.
    # Built a few thousand rows at a time here, so the blocks' seams are crossed.
    monkeypatch.setattr(spline_basis_module, "_BLOCK_ROWS", 4099)
    rng = np.random.default_rng(knots)
    n = 20_011
    x = {
        "normal": rng.normal(size=n),
        "skewed": rng.exponential(size=n) ** 2,
        "whole numbers": rng.integers(0, 40, n).astype(float),
        "constant tail": np.r_[rng.normal(size=n // 2), np.full(n - n // 2, 3.0)],
    }[shape]
    try:
        expected = _patsy_cr(x, knots)
    except ValueError:
        with pytest.raises(ValueError):
            spline_basis(x, knots)
        return
    got = spline_basis(x, knots)
    assert got.shape == expected.shape
    assert got.flags.c_contiguous
    np.testing.assert_array_equal(got, expected)
