"""Data panel state: rows, bindings by name, nodes without a column."""

from __future__ import annotations

import pandas as pd

from covariscope.data.profile import profile_table
from covariscope.model.diagram import Node
from covariscope.model.project import Project
from covariscope.views.data_panel import (
    column_rows,
    matching_bindings,
    nodes_without_column,
    unbound_summary,
)


def _project() -> Project:
    p = Project()
    p.diagram.add_node(Node("Age"))
    p.diagram.add_node(Node("bmi", column="bmi_kg"))
    p.diagram.add_node(Node("smoking", label="smoke"))
    p.diagram.add_node(Node("genes", measured=False))
    return p


def test_names_that_match_bind_themselves():
    p = _project()
    # exact before case-insensitive; label counts; a taken column is left alone
    assert matching_bindings(p, ["age", "bmi_kg", "smoke", "genes"]) == {
        "Age": "age",
        "smoking": "smoke",
    }


def test_ambiguous_case_match_is_not_guessed():
    p = Project()
    p.diagram.add_node(Node("age"))
    p.diagram.add_node(Node("x"))
    assert matching_bindings(p, ["AGE", "Age"]) == {}


def test_nodes_without_column_skip_unmeasured():
    p = _project()
    assert nodes_without_column(p) == ["Age", "smoking"]
    assert "Age, smoking" in unbound_summary(p, has_data=True)


def test_rows_show_overrides_and_bindings():
    p = _project()
    p.analysis.column_types["smoke"] = "categorical"
    p.analysis.reference_levels["smoke"] = "never"
    # 80 rows, one smoking status missing: 1.25% (shown to one decimal, Python's rounding)
    frame = pd.DataFrame(
        {
            "smoke": ["current", "never"] * 39 + ["never", None],
            "bmi_kg": [21.5 + i / 10 for i in range(80)],
        }
    )
    prof = profile_table(frame)
    assert (prof["smoke"].type, prof["smoke"].reference) == ("binary", "current")
    rows = {r.name: r for r in column_rows(p, ["bmi_kg", "smoke"], prof)}
    assert rows["smoke"].cells() == ("smoke", "categorical*", f"{1.25:.1f}%", "", "never")
    assert rows["smoke"].cells()[2] == "1.2%"
    assert rows["bmi_kg"].bound_to == "bmi"
    assert rows["bmi_kg"].cells() == ("bmi_kg", "continuous", "0.0%", "bmi", "")


def test_a_column_not_profiled_yet_shows_dashes():
    p = _project()
    (row,) = column_rows(p, ["bmi_kg"], {})
    assert row.cells() == ("bmi_kg", "—", "—", "bmi", "")


def test_value_labels_name_the_levels_and_the_reference():
    """A Stata/SPSS column with value labels reads "north (1)", while the
    reference kept in the project stays the code."""
    frame = pd.DataFrame({"region": [1, 2, 3, 1, 2, 3, 1, 2] * 3})
    labels = {"region": {1: "north", 2: "south", 3: "east"}}
    profiles = profile_table(frame, {"region": "categorical"}, {}, value_labels=labels)
    (row,) = column_rows(Project(), ["region"], profiles)
    assert row.reference == "1"
    assert row.reference_text == "north (1)"
    assert row.level_texts == ("north (1)", "south (2)", "east (3)")
    assert row.cells()[-1] == "north (1)"
