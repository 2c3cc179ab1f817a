"""The column profile's shortcuts give the answers of the plain computations.

Reference: pandas' own ``Series.min``/``Series.max`` for a column's range,
numpy's ``np.all(values == np.round(values))`` for "every value is whole",
which the profile used before it looked at a column's first values first, and
pandas' ``Series.nunique`` for "a single value".
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import covariscope.data.profile as profile_module
from covariscope.data.profile import profile_column

_RNG = np.random.default_rng(11)
_N = 20_000


def _late(values: np.ndarray, at: int, value: float) -> np.ndarray:
    out = values.copy()
    out[at] = value
    return out


COLUMNS = {
    "measurements": pd.Series(_RNG.normal(50, 10, _N)),
    "signed zeros": pd.Series(np.r_[-np.zeros(5), _RNG.normal(size=_N), np.zeros(5)]),
    "negative zero the least": pd.Series(np.r_[-np.zeros(3), _RNG.uniform(1, 2, _N)]),
    "infinities": pd.Series(np.r_[-np.inf, _RNG.normal(size=_N), np.inf]),
    "missing values": pd.Series(np.r_[np.nan, _RNG.normal(size=_N), np.nan]),
    "whole numbers": pd.Series(_RNG.integers(0, 30, _N)),
    "whole floats": pd.Series(_RNG.integers(1, 9, _N).astype(float)),
    "whole floats, one fraction far down": pd.Series(
        _late(_RNG.integers(1, 9, _N).astype(float), _N - 7, 4.5)
    ),
    "nullable integers": pd.Series(pd.array([3, None, 7, -2] * 500, dtype="Int64")),
    "nullable floats": pd.Series(pd.array([0.5, None, -1.25] * 500, dtype="Float64")),
    "one negative value": pd.Series(np.r_[_RNG.uniform(1, 2, _N), -3.5]),
}


@pytest.mark.parametrize("name", list(COLUMNS))
def test_a_numeric_columns_range_is_pandas_min_and_max(name: str) -> None:
    series = COLUMNS[name].rename(name)
    p = profile_column(series)
    present = series.dropna().astype("float64")
    low, high = float(present.min()), float(present.max())  # pandas, the reference
    assert (p.minimum, p.maximum) == (low, high)
    assert (np.signbit(p.minimum), np.signbit(p.maximum)) == (np.signbit(low), np.signbit(high))
    assert isinstance(p.minimum, float)
    assert isinstance(p.maximum, float)


def test_a_fraction_past_the_first_values_still_makes_a_column_continuous() -> None:
    whole = COLUMNS["whole floats"].rename("score")
    late = COLUMNS["whole floats, one fraction far down"].rename("score")
    assert profile_column(whole).type == "categorical"
    assert profile_column(late).type == "continuous"


@settings(max_examples=200, deadline=None)
@given(
    st.lists(
        st.one_of(
            st.integers(-50, 50).map(float),
            st.floats(allow_nan=True, allow_infinity=True),
        ),
        min_size=0,
        max_size=40,
    ),
    st.integers(0, 8),
)
def test_whole_test_equals_numpys(values: list[float], head: int) -> None:
    x = np.array(values, dtype=float)
    with pytest.MonkeyPatch.context() as m:
        m.setattr(profile_module, "_WHOLE_HEAD", head)
        got = profile_module._all_whole(x)
    assert got == bool(np.all(x == np.round(x)))


SINGLE = {
    "one fraction": pd.Series(np.full(5000, 2.75)),
    "one whole number": pd.Series(np.full(5000, 5)),
    "one word": pd.Series(["same"] * 300),
    "one value and gaps": pd.Series([np.nan, 0.5, np.nan, 0.5]),
    "both zeros": pd.Series([0.0, -0.0, 0.0]),
    "one infinity": pd.Series([np.inf, np.inf]),
    "nothing present": pd.Series([np.nan, np.nan]),
    "two fractions": pd.Series(np.r_[np.full(5000, 2.75), 2.5]),
    "two values far apart": pd.Series(np.r_[np.full(5000, 1.0), 3.0]),
    "two words": pd.Series(["a", "b"] * 10),
    "measurements": COLUMNS["measurements"],
    "one level of a category": pd.Series(pd.Categorical(["x"] * 30, categories=["x", "y"])),
}


@pytest.mark.parametrize("name", list(SINGLE))
def test_single_value_is_a_distinct_count_of_one(name: str) -> None:
    series = SINGLE[name].rename("outcome")
    p = profile_column(series)
    assert p.single_value == (series.nunique() == 1)  # pandas, the reference
    assert p.single_value == (p.distinct == 1)
