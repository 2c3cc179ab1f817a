"""How the columns of the analytic sample become the numbers a model reads.

The same rules whether the rows are in memory or arrive in batches: each
column is coerced by its type (:func:`~covariscope.data.coerce.coerce_column`,
with the reference level chosen on the whole file), then each term is coded
by the rules of :func:`~covariscope.analysis.design.plan_term`.  A batch
source first learns the levels present in the whole analytic sample (one
pass), so that every batch is coded with the same dummy columns.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from covariscope.analysis.design import TermCoding, TermSpec, code_term
from covariscope.analysis.rows import RowBatch
from covariscope.data.coerce import coerce_column

__all__ = ["BatchPlan", "ColumnUse", "code_batch", "coerce_frame", "term_spec"]


@dataclass(frozen=True)
class ColumnUse:
    """One column the models read: its name, how it is coerced, its reference level."""

    column: str
    kind: str
    reference: Any = None


def coerce_frame(frame: pd.DataFrame, uses: tuple[ColumnUse, ...]) -> pd.DataFrame:
    """A copy of ``frame`` with every used column coerced as the models read it."""
    work = frame.copy()
    for use in uses:
        if use.kind in ("continuous", "count"):
            work[use.column] = coerce_column(work[use.column], use.kind)
        elif use.kind == "binary":
            work[use.column] = coerce_column(work[use.column], "binary", use.reference)
        elif use.kind == "categorical":
            work[use.column] = coerce_column(work[use.column], "categorical", use.reference)
    return work


def term_spec(use: ColumnUse) -> TermSpec:
    """The model term of a coerced column (a coerced binary column is 0/1, reference 0)."""
    if use.kind == "binary":
        return TermSpec(use.column, "binary", 0.0)
    if use.kind == "categorical":
        return TermSpec(use.column, "categorical", use.reference)
    return TermSpec(use.column, use.kind)


@dataclass(frozen=True)
class BatchPlan:
    """Everything needed to code one batch of raw rows (sent to cluster workers as is)."""

    uses: tuple[ColumnUse, ...]
    terms: tuple[TermCoding, ...]
    outcome: str | None
    offset: str | None


def code_batch(frame: pd.DataFrame, plan: BatchPlan) -> RowBatch:
    """The design rows of one batch of complete rows: terms in order, outcome last."""
    work = coerce_frame(frame, plan.uses)
    vectors: list[np.ndarray] = []
    for coding in plan.terms:
        vectors.extend(code_term(work, coding))
    if plan.outcome is not None:
        vectors.append(work[plan.outcome].to_numpy(dtype=np.float64))
    values = np.empty((len(work), len(vectors)))
    for j, vector in enumerate(vectors):
        values[:, j] = vector
    offset = None if plan.offset is None else work[plan.offset].to_numpy(dtype=np.float64)
    return RowBatch(values, offset)


def level_values(frame: pd.DataFrame, uses: tuple[ColumnUse, ...]) -> dict[str, set[Any]]:
    """The distinct coerced values of every binary or categorical column of one batch."""
    if len(frame) == 0:
        return {}
    work = coerce_frame(frame, uses)
    return {
        use.column: set(pd.unique(work[use.column]).tolist())
        for use in uses
        if use.kind in ("binary", "categorical")
    }


def merge_levels(a: Mapping[str, set[Any]], b: Mapping[str, set[Any]]) -> dict[str, set[Any]]:
    """Union of two batches' distinct values, column by column."""
    return {k: set(a.get(k, set())) | set(b.get(k, set())) for k in {*a, *b}}
