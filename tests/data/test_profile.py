"""Column profiles: inference on a realistic mixed frame, overrides and references."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from covariscope.data.profile import COLUMN_TYPES, profile_column, profile_table
from covariscope.errors import DataError


@pytest.fixture
def cohort() -> pd.DataFrame:
    """An invented, seeded cohort shaped like a typical epidemiological extract."""
    rng = np.random.default_rng(2024)
    n = 300
    frame = pd.DataFrame(
        {
            "study_id": np.arange(1001, 1001 + n),
            "record_key": [f"R{rng.integers(10**6, 10**7)}-{i}" for i in range(n)],
            "age": rng.integers(18, 90, n),
            "sbp": rng.normal(132, 17, n).round(1),
            "diabetes": rng.integers(0, 2, n),
            "sex": rng.choice(["female", "male"], n),
            "smoking": rng.choice(["never", "former", "current"], n),
            "education": rng.integers(1, 6, n),
            "hospital_visits": rng.poisson(0.8, n),
            "treated": rng.choice([True, False], n),
            "sex_code": rng.choice([1, 2], n),
            "visit_date": pd.Series(pd.date_range("2019-01-01", periods=n, freq="D")).dt.strftime(
                "%Y-%m-%d"
            ),
            "enrolled": pd.date_range("2018-01-01", periods=n, freq="h"),
            "ward": rng.choice([f"ward {k}" for k in range(1, 41)], n),
            "crp_text": rng.gamma(2, 3, n).round(2).astype(str),
            "not_collected": np.nan,
            "centre": "A",
        }
    )
    frame.loc[rng.choice(n, 30, replace=False), "sbp"] = np.nan
    frame.loc[[3, 70, 150], "crp_text"] = ["<0.5", "n/a", "<0.5"]
    return frame


EXPECTED = {
    "study_id": "identifier",
    "record_key": "identifier",
    "age": "continuous",
    "sbp": "continuous",
    "diabetes": "binary",
    "sex": "binary",
    "smoking": "categorical",
    "education": "categorical",
    "hospital_visits": "count",
    "treated": "binary",
    "sex_code": "binary",
    "visit_date": "date",
    "enrolled": "date",
    "ward": "text",
    "crp_text": "text",
    "not_collected": "continuous",
    "centre": "categorical",
}


def test_inference_on_a_mixed_frame(cohort):
    profiles = profile_table(cohort)
    assert {k: p.inferred_type for k, p in profiles.items()} == EXPECTED
    assert all(p.type == p.inferred_type for p in profiles.values())
    assert set(EXPECTED.values()) <= set(COLUMN_TYPES)


def test_counts_ranges_and_levels(cohort):
    profiles = profile_table(cohort)
    sbp = profiles["sbp"]
    assert sbp.missing == 30
    assert sbp.missing_pct == pytest.approx(10.0)
    assert sbp.minimum == pytest.approx(cohort["sbp"].min())
    assert sbp.maximum == pytest.approx(cohort["sbp"].max())
    assert sbp.distinct == cohort["sbp"].nunique()
    assert profiles["diabetes"].levels == (0, 1)
    assert profiles["diabetes"].reference == 0
    assert profiles["sex"].levels == ("female", "male")
    assert profiles["smoking"].levels == ("current", "former", "never")
    assert profiles["smoking"].reference == "current"
    assert profiles["education"].levels == (1, 2, 3, 4, 5)
    assert profiles["treated"].levels == (False, True)
    assert profiles["enrolled"].minimum == pd.Timestamp("2018-01-01")
    assert profiles["visit_date"].maximum == pd.Timestamp("2019-01-01") + pd.Timedelta(days=299)


def test_warnings(cohort):
    profiles = profile_table(cohort)
    assert any("All 300 values are missing" in w for w in profiles["not_collected"].warnings)
    assert any("Constant" in w and "'A'" in w for w in profiles["centre"].warnings)
    crp = profiles["crp_text"].warnings
    assert any("Looks numeric, but 3 of 300 values are text" in w and "'<0.5'" in w for w in crp)
    assert any("identifier" in w for w in profiles["study_id"].warnings)
    assert profiles["age"].warnings == ()


def test_mostly_missing_warning():
    series = pd.Series([1.0, np.nan, np.nan, np.nan, 2.5], name="hba1c")
    assert any("60% of values are missing" in w for w in profile_column(series).warnings)


def test_natural_order_of_text_levels():
    series = pd.Series(["grade 10", "grade 2", "Grade 1", "grade 2"], name="grade")
    assert profile_column(series).levels == ("Grade 1", "grade 2", "grade 10")


def test_categorical_dtype_keeps_its_order():
    series = pd.Series(
        pd.Categorical(["low", "high", "mid", "low"], categories=["low", "mid", "high"]), name="ses"
    )
    profile = profile_column(series)
    assert (profile.type, profile.levels, profile.reference) == (
        "categorical",
        ("low", "mid", "high"),
        "low",
    )


def test_small_data_with_unique_ages_is_not_an_identifier():
    series = pd.Series([34, 51, 47, 62, 29], name="age")
    assert profile_column(series).type == "continuous"


def test_small_codes_with_zero_and_no_tail_are_not_counts():
    series = pd.Series([0, 1, 2, 3, 4] * 10, name="severity")
    assert profile_column(series).type == "continuous"


def test_single_value_of_zero_one_is_binary():
    profile = profile_column(pd.Series([0, 0, 0], name="event"))
    assert profile.type == "binary"
    assert any("Constant" in w for w in profile.warnings)


# --- overrides and references -----------------------------------------------------------


def test_override_type_is_used_and_inference_kept(cohort):
    profiles = profile_table(cohort, overrides={"education": "continuous", "smoking": "text"})
    assert profiles["education"].type == "continuous"
    assert profiles["education"].inferred_type == "categorical"
    assert profiles["education"].levels == ()
    assert profiles["smoking"].type == "text"


def test_reference_override_by_value_or_text(cohort):
    profiles = profile_table(cohort, references={"smoking": "never", "education": "3"})
    assert profiles["smoking"].reference == "never"
    assert profiles["education"].reference == 3


def test_reference_must_be_a_level(cohort):
    with pytest.raises(DataError, match=r"'sometimes' is not a level of 'smoking'.*'current'"):
        profile_table(cohort, references={"smoking": "sometimes"})


def test_reference_ignored_when_type_has_no_levels():
    series = pd.Series([1.5, 2.5, 3.5], name="dose")
    assert profile_column(series, reference="2.5").reference is None


def test_continuous_override_on_text_names_count_and_examples():
    series = pd.Series(["12", "15", "high", "low", "9", "high"], name="score")
    with pytest.raises(DataError) as info:
        profile_column(series, override_type="continuous")
    message = str(info.value)
    assert "Text in a numeric column" in message
    assert "'score'" in message
    assert "3 of 6 values are not numbers" in message
    assert "'high', 'low'" in message
    assert "Mark the column categorical, or clean the file" in message


def test_binary_override_with_three_levels():
    series = pd.Series(["a", "b", "c"], name="arm")
    with pytest.raises(DataError, match=r"cannot be binary: it has 3 distinct values.*categorical"):
        profile_column(series, override_type="binary")


def test_count_override_with_fractions():
    series = pd.Series([0, 1.5, 2], name="events")
    with pytest.raises(DataError, match=r"cannot be a count: 1 value\(s\)"):
        profile_column(series, override_type="count")


def test_date_override_on_text():
    series = pd.Series(["2020-01-01", "soon", "2020-02-03"], name="seen")
    with pytest.raises(DataError, match=r"cannot be a date: 1 of 3 values.*'soon'"):
        profile_column(series, override_type="date")


def test_unknown_type_and_unknown_column():
    with pytest.raises(DataError, match=r"Unknown column type 'ordinal'.*continuous, binary"):
        profile_column(pd.Series([1, 2], name="x"), override_type="ordinal")
    with pytest.raises(DataError, match="not in the data: 'bmi'"):
        profile_table(pd.DataFrame({"x": [1]}), overrides={"bmi": "continuous"})


def _labelled_frame() -> pd.DataFrame:
    # invented, seeded: a three-level code with labels, a 0/1 code with labels, a number
    rng = np.random.default_rng(7)
    n = 60
    return pd.DataFrame(
        {
            "region": rng.integers(1, 4, size=n).astype("int8"),
            "smoker": rng.integers(0, 2, size=n).astype("int8"),
            "sbp": rng.normal(130, 15, size=n),
        }
    )


LABELS = {"region": {1: "north", 2: "centre", 3: "south"}, "smoker": {0: "never", 1: "ever"}}


def test_stata_value_labels_name_the_levels_and_the_codes_stay(tmp_path):
    from covariscope.data.coerce import coerce_column
    from covariscope.data.loading import load_table

    frame = _labelled_frame()
    path = tmp_path / "labelled.dta"
    frame.to_stata(path, write_index=False, value_labels=LABELS)
    table = load_table(path)
    profiles = profile_table(table.frame, references={"region": 3}, value_labels=table.value_labels)
    region = profiles["region"]
    assert region.type == "categorical"
    assert region.levels == (1, 2, 3)  # the codes: the design and saved references use them
    assert region.level_labels == {1: "north", 2: "centre", 3: "south"}
    # outside reference: pandas' own Stata reader turns the same codes into the same labels
    by_pandas = pd.read_stata(path, convert_categoricals=True)["region"]
    expected = dict(zip(frame["region"].tolist(), by_pandas.astype(str).tolist(), strict=True))
    assert {v: region.level_labels[v] for v in region.levels} == expected
    assert [region.level_text(v) for v in region.levels] == ["north (1)", "centre (2)", "south (3)"]
    assert region.reference == 3
    coded = coerce_column(table.frame["region"], "categorical", reference=3)
    assert coded.cat.categories.tolist() == [3, 1, 2]
    smoker = profiles["smoker"]
    assert (smoker.type, smoker.levels, smoker.reference) == ("binary", (0, 1), 0)
    assert smoker.level_text(1) == "ever (1)"
    assert coerce_column(table.frame["smoker"], "binary").tolist() == frame["smoker"].tolist()
    sbp = profiles["sbp"]
    assert (sbp.levels, sbp.level_labels, sbp.level_text(1.5)) == ((), {}, "1.5")


def test_spss_value_labels_reach_the_profile(tmp_path):
    pyreadstat = pytest.importorskip("pyreadstat")
    from covariscope.data.loading import load_table

    frame = _labelled_frame().astype({"region": "float64", "smoker": "float64"})
    frame.loc[3, "region"] = np.nan
    path = tmp_path / "labelled.sav"
    # a label for a code that no row uses is not a level
    labels = {**LABELS, "region": {**LABELS["region"], 9: "unknown"}}
    pyreadstat.write_sav(frame, str(path), variable_value_labels=labels)
    table = load_table(path)
    region = profile_table(table.frame, value_labels=table.value_labels)["region"]
    assert region.missing == 1
    assert region.levels == (1, 2, 3)
    assert region.level_labels == {1: "north", 2: "centre", 3: "south"}


def test_unlabelled_levels_read_as_themselves():
    p = profile_column(pd.Series([1, 2, 3, 3], name="grade"), value_labels={1: "low"})
    assert p.level_labels == {1: "low"}
    assert [p.level_text(v) for v in p.levels] == ["low (1)", "2", "3"]
    assert profile_column(pd.Series([1, 2, 3], name="grade")).level_labels == {}
    hash(p)  # a profile stays hashable with its labels
