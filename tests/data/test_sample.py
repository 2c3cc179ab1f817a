"""Analytic sample: complete cases, counts checked against pandas' own dropna."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from covariscope.data.sample import analytic_sample
from covariscope.errors import DataError


def frame_with_gaps(seed: int, n: int, columns: int, rate: float) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    data = {f"v{i}": rng.normal(size=n) for i in range(columns)}
    frame = pd.DataFrame(data)
    frame["group"] = rng.choice(["a", "b"], n)
    mask = rng.random(frame.shape) < rate
    return frame.mask(mask)


@settings(max_examples=40, deadline=None)
@given(
    seed=st.integers(0, 10_000),
    n=st.integers(1, 60),
    columns=st.integers(1, 5),
    rate=st.floats(0.0, 0.4),
    pick=st.integers(1, 6),
)
def test_counts_match_pandas_dropna(seed, n, columns, rate, pick):
    frame = frame_with_gaps(seed, n, columns, rate)
    chosen = list(frame.columns[:pick])
    reference = frame[chosen].dropna()  # reference: pandas DataFrame.dropna
    if reference.empty:
        with pytest.raises(DataError):
            analytic_sample(frame, chosen)
        return
    sample = analytic_sample(frame, chosen)
    assert sample.rows == n
    assert sample.used == len(reference)
    pd.testing.assert_frame_equal(sample.frame, reference)
    assert sample.missing_by_column == {c: int(frame[c].isna().sum()) for c in chosen}
    for c in chosen:
        others = [o for o in chosen if o != c]
        only_here = frame[c].isna() & frame[others].notna().all(axis=1)
        assert sample.lost_by_column[c] == int(only_here.sum())
    assert sum(sample.lost_by_column.values()) + sample.lost_to_several == n - sample.used


def test_message_and_index_preserved():
    frame = pd.DataFrame(
        {
            "y": [1.0, 2.0, np.nan, 4.0, 5.0, 6.0],
            "x": [0, 1, 1, np.nan, 1, 0],
            "bmi": [22.0, np.nan, np.nan, 25.0, 30.0, 28.0],
        },
        index=pd.RangeIndex(6),
    )
    sample = analytic_sample(frame, ["y", "x", "bmi", "x"])
    assert sample.columns == ("y", "x", "bmi")
    assert sample.frame.index.tolist() == [0, 4, 5]
    assert (sample.rows, sample.used, sample.dropped) == (6, 3, 3)
    assert sample.lost_by_column == {"y": 0, "x": 1, "bmi": 1}
    assert sample.lost_to_several == 1
    assert sample.message == (
        "3 of 6 rows used (complete on all 3 columns); 3 dropped (50.0%): "
        "x missing in 1; bmi missing in 1; 1 missing more than one."
    )


def test_all_complete_message():
    sample = analytic_sample(pd.DataFrame({"y": [1, 2]}), ["y"])
    assert sample.message == "All 2 rows are complete and used."


def test_unknown_column_suggests_a_name():
    with pytest.raises(DataError, match=r"Not in the data: 'agee' \(did you mean 'age'\?\)"):
        analytic_sample(pd.DataFrame({"age": [1.0]}), ["agee"])


def test_no_rows_left_names_an_all_missing_column():
    frame = pd.DataFrame({"y": [1.0, 2.0], "ldl": [np.nan, np.nan]})
    with pytest.raises(DataError, match="'ldl' is missing in every row"):
        analytic_sample(frame, ["y", "ldl"])


def test_no_rows_left_names_the_columns_responsible():
    frame = pd.DataFrame({"y": [1.0, np.nan, 3.0], "z": [np.nan, 2.0, np.nan], "w": [1, 2, 3]})
    with pytest.raises(DataError) as info:
        analytic_sample(frame, ["y", "z", "w"])
    message = str(info.value)
    assert "every one of the 3 rows misses at least one of 'z' (2 missing), 'y' (1 missing)" in (
        message
    )
    assert "'w'" not in message


def test_a_sample_widened_by_complete_columns_equals_one_counted_afresh():
    # Reference: complete_cases counting every mask, the complete ones included.
    import numpy as np

    from covariscope.data.sample import complete_cases, with_complete_columns

    rng = np.random.default_rng(4)
    masks = {c: rng.random(500) < p for c, p in (("y", 0.05), ("x", 0.1), ("a", 0.0))}
    masks["b"] = np.zeros(500, dtype=bool)
    narrow = complete_cases({c: masks[c] for c in ("y", "x", "a")}, 500)
    for columns in (("y", "x", "a", "b"), ("y", "x", "b"), ("b", "y", "x")):
        wide = with_complete_columns(narrow, columns)
        fresh = complete_cases({c: masks[c] for c in columns}, 500)
        np.testing.assert_array_equal(wide.keep, fresh.keep)
        assert (wide.columns, wide.used, wide.message) == (fresh.columns, fresh.used, fresh.message)
        assert wide.missing_by_column == fresh.missing_by_column
        assert wide.lost_by_column == fresh.lost_by_column
        assert wide.lost_to_several == fresh.lost_to_several
