"""Numeric design: coding of terms and one clear message per bad-data case."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from covariscope.analysis.design import TermSpec, make_design
from covariscope.errors import DataError

C = "continuous"


def _frame(n=20, seed=0):
    rng = np.random.default_rng(seed)
    return pd.DataFrame(
        {
            "x": rng.normal(size=n),
            "sex": rng.choice(["f", "m"], size=n),
            "grp": rng.choice(["a", "b", "c"], size=n),
            "y": rng.normal(size=n),
            "yb": rng.integers(0, 2, size=n),
            "t": rng.uniform(1, 5, size=n),
            "e": rng.integers(0, 2, size=n),
        }
    )


def test_categorical_dummies_against_reference():
    f = _frame()
    d = make_design(
        f,
        exposure=TermSpec("sex", "categorical", reference="m"),
        covariates={"g": TermSpec("grp", "categorical", reference="b"), "z": TermSpec("x", C)},
        outcome="y",
        family="linear",
    )
    assert d.exposure_name == "sex[f]"
    np.testing.assert_array_equal(d.exposure, (f["sex"] == "f").to_numpy(float))
    assert d.blocks["g"].columns == ("grp[a]", "grp[c]")
    np.testing.assert_array_equal(d.blocks["g"].values[:, 1], (f["grp"] == "c").to_numpy(float))
    np.testing.assert_array_equal(d.blocks["z"].values[:, 0], f["x"].to_numpy())
    np.testing.assert_array_equal(d.y, f["y"].to_numpy())
    assert d.values.flags.c_contiguous
    assert d.n == 20


def test_binary_coded_non_reference_as_one():
    f = _frame()
    d = make_design(
        f, exposure=TermSpec("sex", "binary"), covariates={}, outcome="y", family="linear"
    )
    assert d.exposure_name == "sex"
    np.testing.assert_array_equal(d.exposure, (f["sex"] == "m").to_numpy(float))


def test_key_changes_with_data():
    f = _frame()
    spec = {"exposure": TermSpec("x", C), "covariates": {}, "outcome": "y", "family": "linear"}
    k1 = make_design(f, **spec).key
    f.loc[3, "y"] += 1e-9
    assert make_design(f, **spec).key != k1


@pytest.mark.parametrize(
    ("change", "kwargs", "needle"),
    [
        ("const", {}, "exposure column 'x' has the same value in every row"),
        ("multi", {}, "declared binary but has 3 levels"),
        ("logit", {"family": "logistic"}, "coded 0/1"),
        ("few", {}, "too few even for the crude model"),
        (
            "time0",
            {"family": "cox", "outcome": None, "time": "t", "event": "e"},
            "must be positive",
        ),
        ("event2", {"family": "cox", "outcome": None, "time": "t", "event": "e"}, "coded 0/1"),
        ("text", {}, "must be numeric"),
    ],
)
def test_bad_data_gets_one_clear_message(change, kwargs, needle):
    f = _frame()
    exposure = TermSpec("x", C)
    covariates = {"z": TermSpec("y", C)}
    spec = {"outcome": "y", "family": "linear", **kwargs}
    if change == "const":
        f["x"] = 1.0
    elif change == "multi":
        exposure = TermSpec("grp", "binary")
    elif change == "logit":
        f["y"] = f["y"].round() + 3
    elif change == "few":
        f = f.iloc[:2].copy()
        covariates = {"z": TermSpec("t", C)}
    elif change == "time0":
        f.loc[2, "t"] = 0.0
        f.loc[5, "t"] = -1.0
    elif change == "event2":
        f.loc[2, "e"] = 2
    elif change == "text":
        f["x"] = f["x"].astype(object)
        f.loc[4, "x"] = "n/a"
    with pytest.raises(DataError) as info:
        make_design(f, exposure=exposure, covariates=covariates, **spec)
    assert needle in str(info.value)


def test_time_zero_message_counts_rows():
    f = _frame()
    f.loc[[1, 2], "t"] = 0.0
    with pytest.raises(DataError, match="2 zero or negative values"):
        make_design(
            f,
            exposure=TermSpec("x", C),
            covariates={},
            outcome=None,
            family="cox",
            time="t",
            event="e",
        )


def test_unknown_reference_level():
    with pytest.raises(DataError, match="does not occur"):
        make_design(
            _frame(),
            exposure=TermSpec("x", C),
            covariates={"g": TermSpec("grp", "categorical", reference="zz")},
            outcome="y",
            family="linear",
        )


def test_constant_covariate_is_recorded_not_refused():
    # A covariate that never varies fails only its own models (the evidence engine says so).
    f = _frame()
    f["k"] = 1.0
    f["one"] = "a"
    d = make_design(
        f,
        exposure=TermSpec("x", C),
        covariates={"k": TermSpec("k", C), "o": TermSpec("one", "categorical")},
        outcome="y",
        family="linear",
    )
    assert d.constant == ("k", "o")
    assert len(d.messages) == 2
    assert "Column 'k' (covariate k) has the same value in every row" in d.messages[0]
    assert "unbind it or choose another column" in d.messages[0]
