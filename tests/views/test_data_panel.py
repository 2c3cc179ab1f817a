"""Data panel state: rows, bindings by name, nodes without a column."""

from __future__ import annotations

from types import SimpleNamespace

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
    prof = {
        "smoke": SimpleNamespace(
            type="binary", missing_pct=1.25, levels=("current", "never"), reference="current"
        ),
        "bmi_kg": SimpleNamespace(type="continuous", missing_pct=0.0, levels=(), reference=None),
    }
    rows = {r.name: r for r in column_rows(p, ["bmi_kg", "smoke"], prof)}
    assert rows["smoke"].cells() == ("smoke", "categorical*", "1.2%", "", "never")
    assert rows["bmi_kg"].bound_to == "bmi"


def test_value_labels_name_the_levels_and_the_reference():
    """A Stata/SPSS column with value labels reads "north (1)", while the
    reference kept in the project stays the code."""
    import pandas as pd

    from covariscope.data.profile import profile_table

    frame = pd.DataFrame({"region": [1, 2, 3, 1, 2, 3, 1, 2] * 3})
    labels = {"region": {1: "north", 2: "south", 3: "east"}}
    profiles = profile_table(frame, {"region": "categorical"}, {}, value_labels=labels)
    (row,) = column_rows(Project(), ["region"], profiles)
    assert row.reference == "1"
    assert row.reference_text == "north (1)"
    assert row.level_texts == ("north (1)", "south (2)", "east (3)")
    assert row.cells()[-1] == "north (1)"
