"""Data preparation for a study: bound columns, analytic sample, design.

Turns a project's bindings and a loaded table into the analytic sample and
the evidence engine; every problem becomes a plain message and the study
falls back to the diagram alone.
"""

from __future__ import annotations

from typing import Any

import pandas as pd

from covariscope.analysis.design import TermSpec, make_design
from covariscope.analysis.evidence import EvidenceEngine
from covariscope.analysis.graph import DiagramAnalysis
from covariscope.data.coerce import coerce_column
from covariscope.data.profile import profile_table
from covariscope.data.sample import AnalyticSample, analytic_sample
from covariscope.model.project import Project

__all__ = ["prepare_evidence"]

_TERM_TYPES = ("continuous", "binary", "count", "categorical")


def _outcome_columns(
    project: Project, family: str, outcome_column: str | None
) -> dict[str, str | None]:
    chosen = dict(project.analysis.family_columns.get(family, {}))
    cols: dict[str, str | None] = {
        "outcome": chosen.get("outcome", outcome_column),
        "time": chosen.get("time"),
        "event": chosen.get("event"),
        "offset": chosen.get("offset"),
    }
    if family == "cox":
        cols["outcome"] = None
    return cols


def prepare_evidence(
    project: Project,
    frame: pd.DataFrame,
    family: str,
    exposure: str,
    outcome: str,
    analysis: DiagramAnalysis,
    messages: list[str],
) -> tuple[AnalyticSample | None, EvidenceEngine | None, list[str]]:
    """Analytic sample and evidence engine, or (None, None, ...) with a message."""
    diagram = project.diagram
    x_col = diagram.node(exposure).column
    y_col = diagram.node(outcome).column
    if x_col is None:
        messages.append(
            f'The exposure "{diagram.node(exposure).label}" is not bound to a data column, so only the diagram is analysed; bind it to a column.'
        )
        return None, None, []
    cols = _outcome_columns(project, family, y_col)
    if family == "cox" and (cols["time"] is None or cols["event"] is None):
        messages.append(
            "The Cox family needs a time and an event column; set them for the project "
            "(analysis.family_columns.cox), or choose another family. Only the diagram is analysed."
        )
        return None, None, []
    if family != "cox" and cols["outcome"] is None:
        messages.append(
            f'The outcome "{diagram.node(outcome).label}" is not bound to a data column, so only the diagram is analysed; bind it to a column.'
        )
        return None, None, []
    bound: list[str] = []
    for node in diagram.covariates:
        if not node.measured or node.column is None:
            continue
        if node.column not in frame.columns:
            messages.append(
                f'"{node.label}" is bound to the column "{node.column}", which is not in the data; it is left out.'
            )
            continue
        bound.append(node.id)
    outcome_cols = [c for c in (cols["outcome"], cols["time"], cols["event"], cols["offset"]) if c]
    needed = list(
        dict.fromkeys([*outcome_cols, x_col, *(diagram.node(b).column or "" for b in bound)])
    )
    missing_cols = [c for c in needed if c not in frame.columns]
    if missing_cols:
        messages.append(
            f"The data have no column {', '.join(map(repr, missing_cols))}; only the diagram is analysed. "
            "Bind existing columns."
        )
        return None, None, []
    types = project.analysis.column_types
    refs = project.analysis.reference_levels
    sub = frame.loc[:, needed]
    profiles = profile_table(
        sub,
        {k: v for k, v in types.items() if k in sub.columns},
        {k: v for k, v in refs.items() if k in sub.columns},
    )
    usable: list[str] = []
    for b in bound:
        column = diagram.node(b).column
        assert column is not None
        kind = profiles[column].type
        if kind not in _TERM_TYPES:
            messages.append(
                f'"{diagram.node(b).label}" is bound to "{column}", a {kind} column, which a model cannot use; '
                "it is left out (set its type if this is wrong)."
            )
            continue
        usable.append(b)
    bound = usable
    needed = list(
        dict.fromkeys([*outcome_cols, x_col, *(diagram.node(b).column or "" for b in bound)])
    )
    sample = analytic_sample(frame, needed)
    work = sample.frame.copy()
    specs: dict[str, TermSpec] = {}
    for b in bound:
        column = diagram.node(b).column
        assert column is not None
        specs[b] = _spec(work, column, profiles[column].type, profiles[column].reference)
    x_spec = _spec(work, x_col, profiles[x_col].type, profiles[x_col].reference)
    for key in ("outcome", "event"):
        col = cols[key]
        if col is not None and profiles[col].type == "binary":
            work[col] = coerce_column(work[col], "binary", profiles[col].reference)
    for key in ("time", "offset"):
        col = cols[key]
        if col is not None:
            work[col] = coerce_column(work[col], "continuous")
    if cols["outcome"] is not None and profiles[cols["outcome"]].type in ("continuous", "count"):
        work[cols["outcome"]] = coerce_column(work[cols["outcome"]], "continuous")
    design = make_design(
        work,
        exposure=x_spec,
        covariates=specs,
        outcome=cols["outcome"],
        family=family,
        time=cols["time"],
        event=cols["event"],
        offset=cols["offset"],
        exposure_node=exposure,
    )
    return sample, EvidenceEngine(design, family), bound


def _spec(work: pd.DataFrame, column: str, kind: str, reference: Any) -> TermSpec:
    if kind in ("continuous", "count"):
        work[column] = coerce_column(work[column], kind)
        return TermSpec(column, kind)
    if kind == "binary":
        work[column] = coerce_column(work[column], "binary", reference)
        return TermSpec(column, "binary", 0.0)
    return TermSpec(column, "categorical", reference)
