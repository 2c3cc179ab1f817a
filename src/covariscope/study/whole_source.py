"""A study whose data stay with their source (DuckDB, Dask): whole-source stages.

Turns a project's bindings and a loaded table into the analytic sample and
the evidence engine; every problem becomes a plain message and the study
falls back to the diagram alone.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from covariscope.analysis.design import TERM_TYPES, TermSpec
from covariscope.analysis.evidence import EvidenceEngine
from covariscope.data.profile import ColumnProfile
from covariscope.data.sample import AnalyticSample
from covariscope.data.sources.base import DataSource, DesignRequest
from covariscope.data.sources.coding import ColumnUse, term_spec
from covariscope.model.project import Project
from covariscope.study.degenerate import check_question_columns, usable_covariates
from covariscope.study.prepare import bound_covariates, question_columns

__all__ = ["prepare_evidence"]


def prepare_evidence(
    project: Project,
    source: DataSource,
    family: str,
    exposure: str,
    outcome: str,
    messages: list[str],
) -> tuple[AnalyticSample | None, EvidenceEngine | None, list[str]]:
    """Analytic sample and evidence engine, or (None, None, ...) with a message."""
    diagram = project.diagram
    question = question_columns(project, family, exposure, outcome, messages)
    if question is None:
        return None, None, []
    x_col, cols = question
    present = set(source.columns)
    bound = [node_id for node_id, _ in bound_covariates(project, present.__contains__, messages)]
    outcome_cols = [c for c in (cols["outcome"], cols["time"], cols["event"], cols["offset"]) if c]
    needed = list(
        dict.fromkeys([*outcome_cols, x_col, *(diagram.node(b).column or "" for b in bound)])
    )
    missing_cols = [c for c in needed if c not in source.columns]
    if missing_cols:
        messages.append(
            f"The data have no column {', '.join(map(repr, missing_cols))}; only the diagram is analysed. "
            "Bind existing columns."
        )
        return None, None, []
    profiles = source.profiles(
        tuple(needed), project.analysis.column_types, project.analysis.reference_levels
    )
    check_question_columns(diagram, exposure, x_col, cols, profiles, family)
    taken = {x_col: "exposure"} | {c: k for k, c in cols.items() if c}
    bound = usable_covariates(diagram, bound, taken, profiles, messages)
    usable: list[str] = []
    for b in bound:
        column = diagram.node(b).column
        assert column is not None
        kind = profiles[column].type
        if kind not in TERM_TYPES:
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
    sample = source.analytic_sample(tuple(needed))
    request = _request(project, profiles, family, exposure, x_col, bound, cols)
    design = source.design(request, messages)
    return sample, EvidenceEngine(design, family), bound


def _use(column: str, kind: str, reference: Any) -> ColumnUse:
    if kind in ("continuous", "count"):
        return ColumnUse(column, kind)
    if kind == "binary":
        return ColumnUse(column, "binary", reference)
    return ColumnUse(column, "categorical", reference)


def _request(
    project: Project,
    profiles: Mapping[str, ColumnProfile],
    family: str,
    exposure: str,
    x_col: str,
    bound: list[str],
    cols: dict[str, str | None],
) -> DesignRequest:
    """How each column is coerced and which term it makes (the same for every source)."""
    diagram = project.diagram
    uses: dict[str, ColumnUse] = {}
    specs: dict[str, TermSpec] = {}
    for b in bound:
        column = diagram.node(b).column
        assert column is not None
        uses[column] = _use(column, profiles[column].type, profiles[column].reference)
        specs[b] = term_spec(uses[column])
    uses[x_col] = _use(x_col, profiles[x_col].type, profiles[x_col].reference)
    x_spec = term_spec(uses[x_col])
    for key in ("outcome", "event"):
        col = cols[key]
        if col is not None and profiles[col].type == "binary":
            uses[col] = ColumnUse(col, "binary", profiles[col].reference)
    for key in ("time", "offset"):
        col = cols[key]
        if col is not None:
            uses[col] = ColumnUse(col, "continuous")
    out = cols["outcome"]
    if out is not None and profiles[out].type in ("continuous", "count"):
        uses[out] = ColumnUse(out, "continuous")
    for col in (out, cols["time"], cols["event"], cols["offset"]):
        if col is not None and col not in uses:
            uses[col] = ColumnUse(col, "raw")
    return DesignRequest(
        uses=tuple(uses.values()),
        exposure=x_spec,
        covariates=specs,
        family=family,
        exposure_node=exposure,
        outcome=out,
        time=cols["time"],
        event=cols["event"],
        offset=cols["offset"],
    )
