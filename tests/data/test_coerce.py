"""Coercion of columns to model values by type."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from covariscope.data.coerce import binary_coding, coerce_column
from covariscope.errors import DataError


def test_continuous_from_text_numbers():
    series = pd.Series(["1.5", " 2", None, "3e2"], name="dose")
    out = coerce_column(series, "continuous")
    assert out.dtype == np.float64
    assert out.name == "dose"
    np.testing.assert_array_equal(out.to_numpy(), [1.5, 2.0, np.nan, 300.0])


def test_text_in_a_numeric_column():
    series = pd.Series(["4", "five", "6", "n/a", "five"], name="parity")
    with pytest.raises(DataError) as info:
        coerce_column(series, "count")
    message = str(info.value)
    assert message.startswith("Text in a numeric column: 'parity'")
    assert "3 of 5 values are not numbers (e.g. 'five', 'n/a')" in message
    assert "Mark the column categorical, or clean the file" in message


def test_count_refuses_negative_values():
    with pytest.raises(DataError, match="cannot be a count"):
        coerce_column(pd.Series([1, -2, 3], name="n"), "count")


def test_binary_zero_one_keeps_its_coding():
    series = pd.Series([0, 1, np.nan, 1], name="smoker")
    np.testing.assert_array_equal(coerce_column(series, "binary").to_numpy(), [0, 1, np.nan, 1])


def test_binary_text_codes_non_reference_as_one():
    series = pd.Series(["yes", "no", None, "yes"], name="diabetes")
    assert binary_coding(series) == ("no", "yes")
    np.testing.assert_array_equal(coerce_column(series, "binary").to_numpy(), [1, 0, np.nan, 1])
    flipped = coerce_column(series, "binary", reference="yes")
    np.testing.assert_array_equal(flipped.to_numpy(), [0, 1, np.nan, 0])


def test_binary_one_two_codes():
    series = pd.Series([1.0, 2.0, 2.0], name="sex")
    assert binary_coding(series) == (1, 2)
    assert coerce_column(series, "binary").tolist() == [0.0, 1.0, 1.0]


def test_binary_with_only_ones_observed():
    series = pd.Series([1, 1, 1], name="event")
    assert coerce_column(series, "binary").tolist() == [1.0, 1.0, 1.0]


def test_binary_refuses_three_levels():
    with pytest.raises(DataError, match="cannot be binary"):
        coerce_column(pd.Series(["a", "b", "c"], name="arm"), "binary")


def test_categorical_puts_reference_first():
    series = pd.Series(["never", "current", "former", None, "never"], name="smoking")
    out = coerce_column(series, "categorical")
    assert list(out.cat.categories) == ["current", "former", "never"]
    out = coerce_column(series, "categorical", reference="never")
    assert list(out.cat.categories) == ["never", "current", "former"]
    assert out.isna().tolist() == [False, False, False, True, False]
    # Treatment coding drops the first category: the reference (pandas get_dummies).
    dummies = pd.get_dummies(out, drop_first=True)
    assert list(dummies.columns) == ["current", "former"]


def test_categorical_from_float_codes_uses_whole_levels():
    series = pd.Series([1.0, 3.0, 2.0, np.nan], name="educ")
    out = coerce_column(series, "categorical", reference=2)
    assert list(out.cat.categories) == [2, 1, 3]
    assert out.iloc[0] == 1


def test_date_and_text():
    dates = coerce_column(pd.Series(["2021-01-02", None], name="d"), "date")
    assert dates.iloc[0] == pd.Timestamp("2021-01-02")
    assert pd.isna(dates.iloc[1])
    assert coerce_column(pd.Series([1, 2], name="id"), "identifier").tolist() == ["1", "2"]


def test_unknown_type():
    with pytest.raises(DataError, match="Unknown column type 'scale'"):
        coerce_column(pd.Series([1.0], name="x"), "scale")


def test_reference_from_the_whole_file_absent_from_a_subset():
    """The analytic sample may lose every row of the reference level."""
    subset = pd.Series(["yes", "yes"], name="diabetes")
    assert coerce_column(subset, "binary", reference="no").tolist() == [1.0, 1.0]
    codes = pd.Series(["b", "c"], name="arm")
    out = coerce_column(codes, "categorical", reference="a")
    assert list(out.cat.categories) == ["a", "b", "c"]
    with pytest.raises(DataError, match="not a level"):
        coerce_column(pd.Series(["x", "y"], name="g"), "binary", reference="z")
