"""Sums over the rows of a design that is not held in memory.

Every number the comparison models need is a sum over rows: the linear
models need the means and co-moments of the design columns; each Newton step
of a logistic or Poisson fit needs the weighted cross product X'WX, the score
X'(y − μ) and the deviance at the current coefficients.  A data source that
cannot (or should not) hold the rows in memory hands the engine a
:class:`RowReducer`: it applies a function to each batch of coded rows and
merges the partial results, in whatever order and place it likes (a loop
over record batches of an embedded database, a tree reduction on a
cluster).  The functions and merges here are the statistics; the sources
only move rows.

Partial sums merge exactly: co-moments by the pairwise update of Chan,
Golub & LeVeque (1979) (:func:`~covariscope.analysis.linear.merge_summaries`),
cross products and scores by addition, so any batching gives the same
numbers as one pass over all rows, to rounding.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from functools import partial
from typing import Any, Protocol, TypeVar, runtime_checkable

import numpy as np
import numpy.typing as npt

from covariscope.analysis.families import GlmLink, family_of
from covariscope.analysis.fitting_common import weighted_crossprod
from covariscope.analysis.linear import LinearSummary, linear_summary, merge_summaries

__all__ = [
    "ColumnStats",
    "GlmSums",
    "LinearSummary",
    "RowBatch",
    "RowReducer",
    "SandwichSums",
    "SummingReducer",
    "column_stats",
    "fits_from_rows",
    "glm_link",
    "glm_pass_many",
    "glm_sums",
    "glm_sums_many",
    "merge_column_stats",
    "merge_glm_sums",
    "merge_glm_sums_many",
    "merge_sandwich_sums",
    "reduce_column_stats",
    "rows_in_memory_words",
    "sandwich_pass",
    "sandwich_sums",
]

Array = npt.NDArray[np.float64]
T = TypeVar("T")


@dataclass(frozen=True, eq=False)
class RowBatch:
    """Some rows of a design, coded as the models read them.

    ``values`` is m × q: the exposure, every covariate column, then the
    outcome (when the family has one), as in
    :attr:`~covariscope.analysis.design.Design.values`; ``offset`` the log
    person-time of each row, or None.
    """

    values: Array
    offset: Array | None = None


class RowReducer(Protocol):
    """Applies a function to every batch of rows and merges the results.

    ``merge`` is associative; the batches may be visited in any order and
    the partial results merged in any tree.  ``fn`` and ``merge`` are plain
    module-level functions (or partials of them), so that a cluster can send
    them to its workers.
    """

    def reduce(self, fn: Any, merge: Any) -> Any:
        """``merge`` of ``fn(batch)`` over every batch (``fn`` of an empty batch when none)."""


@runtime_checkable
class SummingReducer(Protocol):
    """A :class:`RowReducer` that computes the three standard sums where the rows lie.

    An analytic database sums faster, and in far less memory, than it can
    hand its rows out: such a source computes :func:`column_stats`,
    :func:`glm_sums` and :func:`sandwich_sums` itself, as aggregate queries,
    with the same definitions (the sums below say what each one means).
    """

    def reduce(self, fn: Any, merge: Any) -> Any:
        """As :meth:`RowReducer.reduce`, for any other function."""

    def column_stats(self) -> ColumnStats:
        """:func:`column_stats` over every row."""

    def glm_sums(
        self, columns: tuple[int, ...], params: Array, family: str, ylogy: bool
    ) -> GlmSums:
        """:func:`glm_sums` over every row."""

    def sandwich_sums(self, columns: tuple[int, ...], params: Array) -> SandwichSums:
        """:func:`sandwich_sums` over every row."""


# ------------------------------------------------------------------ column statistics


@dataclass(frozen=True, eq=False)
class ColumnStats:
    """Means, co-moments, ranges and outcome counts of the design columns."""

    summary: LinearSummary
    low: Array
    high: Array
    #: rows whose outcome (last column) is neither 0 nor 1, and is > 0
    outcome_not_binary: int
    outcome_positive: int
    #: Σ exp(offset), for the start of a Poisson fit (0 without an offset)
    offset_exp_sum: float


def column_stats(batch: RowBatch) -> ColumnStats:
    """The :class:`ColumnStats` of one batch (the last column is the outcome)."""
    v = batch.values
    q = v.shape[1]
    y = v[:, -1] if q else np.zeros(0)
    return ColumnStats(
        summary=linear_summary(v),
        low=v.min(axis=0) if len(v) else np.full(q, np.inf),
        high=v.max(axis=0) if len(v) else np.full(q, -np.inf),
        outcome_not_binary=int(np.count_nonzero((y != 0.0) & (y != 1.0))),
        outcome_positive=int(np.count_nonzero(y > 0.0)),
        offset_exp_sum=0.0 if batch.offset is None else float(np.sum(np.exp(batch.offset))),
    )


def merge_column_stats(a: ColumnStats, b: ColumnStats) -> ColumnStats:
    """Column statistics of two disjoint sets of rows."""
    return ColumnStats(
        summary=merge_summaries(a.summary, b.summary),
        low=np.minimum(a.low, b.low),
        high=np.maximum(a.high, b.high),
        outcome_not_binary=a.outcome_not_binary + b.outcome_not_binary,
        outcome_positive=a.outcome_positive + b.outcome_positive,
        offset_exp_sum=a.offset_exp_sum + b.offset_exp_sum,
    )


# ------------------------------------------------------------------ Newton sums


@dataclass(frozen=True, eq=False)
class GlmSums:
    """Sums behind one Newton step of a logistic or Poisson model at given coefficients."""

    information: Array
    score: Array
    deviance: float
    weight_sum: float
    #: smallest min(μ, 1 − μ) (logistic) or smallest μ (Poisson)
    mu_low: float
    mu_high: float
    rows: int


def _intercept_design(values: Array, columns: tuple[int, ...]) -> Array:
    X = np.empty((len(values), len(columns) + 1), order="F")
    X[:, 0] = 1.0
    for i, c in enumerate(columns):
        X[:, i + 1] = values[:, c]
    return X


def glm_sums(
    batch: RowBatch, *, columns: tuple[int, ...], params: Array, family: str, ylogy: bool
) -> GlmSums:
    """X'WX, X'(y − μ), the deviance and the range of μ on one batch.

    X is [1 | the design columns ``columns``]; the outcome is the last column
    of the batch.  The weights, means and deviance are those of the binomial
    (logit link) or Poisson (log link) likelihood, as in
    :func:`~covariscope.analysis.glm.newton_glm`; ``ylogy`` adds the
    saturated term Σ y log y − y of the Poisson deviance.
    """
    X = _intercept_design(batch.values, columns)
    return _sums_of(X, batch.values[:, -1], batch.offset, params, family, ylogy)


def _sums_of(
    X: Array, y: Array, offset: Array | None, params: Array, family: str, ylogy: bool
) -> GlmSums:
    eta = np.dot(X, params)  # np.dot, not @: fitting_common's docstring
    if offset is not None:
        eta = eta + offset
    dev, mu, w, low = family_of(family).glm.batch_sums(y, eta, ylogy)
    return GlmSums(
        information=weighted_crossprod(X, w),
        score=np.dot(X.T, y - mu),
        deviance=dev,
        weight_sum=float(np.sum(w)),
        mu_low=low,
        mu_high=float(np.max(mu)) if len(y) else -math.inf,
        rows=len(y),
    )


def glm_sums_many(
    batch: RowBatch,
    *,
    models: tuple[tuple[tuple[int, ...], Array], ...],
    family: str,
    ylogy: bool,
) -> tuple[GlmSums, ...]:
    """:func:`glm_sums` of several models (their columns and coefficients) on one batch.

    The batch's columns are coded into [1 | every column any model uses]
    once; a model that uses most of them is evaluated on that matrix with
    zero coefficients for the others (its sums are then sub-blocks), a
    narrow one on its own columns.
    """
    union = sorted({c for cols, _ in models for c in cols})
    X = _intercept_design(batch.values, tuple(union))
    y = batch.values[:, -1]
    at = {c: j + 1 for j, c in enumerate(union)}
    out = []
    for cols, params in models:
        idx = [0, *(at[c] for c in cols)]
        if 2 * len(idx) >= X.shape[1]:
            wide = np.zeros(X.shape[1])
            wide[idx] = params
            full = _sums_of(X, y, batch.offset, wide, family, ylogy)
            out.append(
                replace(full, information=full.information[np.ix_(idx, idx)], score=full.score[idx])
            )
        else:
            out.append(_sums_of(X[:, idx], y, batch.offset, params, family, ylogy))
    return tuple(out)


def merge_glm_sums_many(a: tuple[GlmSums, ...], b: tuple[GlmSums, ...]) -> tuple[GlmSums, ...]:
    """:func:`merge_glm_sums` model by model."""
    return tuple(merge_glm_sums(x, y) for x, y in zip(a, b, strict=True))


def merge_glm_sums(a: GlmSums, b: GlmSums) -> GlmSums:
    """Newton sums of two disjoint sets of rows."""
    return GlmSums(
        information=a.information + b.information,
        score=a.score + b.score,
        deviance=a.deviance + b.deviance,
        weight_sum=a.weight_sum + b.weight_sum,
        mu_low=min(a.mu_low, b.mu_low),
        mu_high=max(a.mu_high, b.mu_high),
        rows=a.rows + b.rows,
    )


@dataclass(frozen=True, eq=False)
class SandwichSums:
    """The middle term X'diag((y − μ)²)X of a Poisson sandwich."""

    meat: Array


def sandwich_sums(batch: RowBatch, *, columns: tuple[int, ...], params: Array) -> SandwichSums:
    """Middle term of the robust (HC0) covariance of a log-link Poisson fit (Zou 2004)."""
    X = _intercept_design(batch.values, columns)
    y = batch.values[:, -1]
    eta = np.dot(X, params)
    if batch.offset is not None:
        eta = eta + batch.offset
    mu = np.exp(np.minimum(eta, 700.0))
    return SandwichSums(weighted_crossprod(X, (y - mu) ** 2))


def merge_sandwich_sums(a: SandwichSums, b: SandwichSums) -> SandwichSums:
    """Sandwich sums of two disjoint sets of rows."""
    return SandwichSums(a.meat + b.meat)


def reduce_column_stats(reducer: RowReducer) -> ColumnStats:
    """:func:`column_stats` over every row (one pass, or the source's own aggregate)."""
    if isinstance(reducer, SummingReducer):
        return reducer.column_stats()
    result: ColumnStats = reducer.reduce(column_stats, merge_column_stats)
    return result


def sandwich_pass(reducer: RowReducer, columns: tuple[int, ...], params: Array) -> SandwichSums:
    """:func:`sandwich_sums` over every row."""
    params = np.asarray(params, dtype=np.float64)
    if isinstance(reducer, SummingReducer):
        return reducer.sandwich_sums(columns, params)
    result: SandwichSums = reducer.reduce(
        partial(sandwich_sums, columns=columns, params=params), merge_sandwich_sums
    )
    return result


def fits_from_rows(family: str) -> bool:
    """True when the family's models can be fitted from sums over rows left in
    their source (a Cox model needs its rows in memory).

    >>> fits_from_rows("logistic"), fits_from_rows("cox")
    (True, False)
    """
    return family_of(family).row_sums


def rows_in_memory_words(family: str) -> str:
    """Why the family's models read every row into memory ("" when they need not)."""
    fam = family_of(family)
    if fam.row_sums:
        return ""
    return (
        f"{fam.term.short} models need every row of the analytic sample in memory "
        f"({fam.memory_reason})"
    )


def glm_link(family: str) -> GlmLink:
    """The GLM parts of a family whose rows stay in their source (its SQL among them)."""
    return family_of(family).glm


def glm_pass(reducer: RowReducer, columns: tuple[int, ...], params: Array, family: str) -> GlmSums:
    """One reduction of :func:`glm_sums` over every row."""
    saturated = family_of(family).glm.saturated_term
    if isinstance(reducer, SummingReducer):
        return reducer.glm_sums(columns, np.asarray(params, dtype=np.float64), family, saturated)
    fn = partial(
        glm_sums,
        columns=columns,
        params=np.asarray(params, dtype=np.float64),
        family=family,
        ylogy=saturated,
    )
    result: GlmSums = reducer.reduce(fn, merge_glm_sums)
    return result


def glm_pass_many(
    reducer: RowReducer, models: list[tuple[tuple[int, ...], Array]], family: str
) -> list[GlmSums]:
    """:func:`glm_sums` of several models in one read of the rows.

    The rows are streamed to the sums (:meth:`RowReducer.reduce`) even from a
    source that sums in its own engine: one read that serves every model
    costs less than an aggregate query per model once the models are wide
    (such a query forms each cross-product of a wide model as an expression
    of its own).
    """
    fn = partial(
        glm_sums_many,
        models=tuple((cols, np.asarray(b, dtype=np.float64)) for cols, b in models),
        family=family,
        ylogy=family_of(family).glm.saturated_term,
    )
    result: tuple[GlmSums, ...] = reducer.reduce(fn, merge_glm_sums_many)
    return list(result)
