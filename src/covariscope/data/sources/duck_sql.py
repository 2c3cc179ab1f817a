"""The design coded inside DuckDB: each design column one SQL expression.

For the usual columns — numbers stored as numbers, levels stored as text or
codes — the database itself filters the complete cases and computes every
design column (a number cast to double; one 0/1 column per non-reference
level), so that each pass over the rows streams ready-made float columns
into the sums, with no per-row work in Python.  The levels and their coding
come from the same rules as in memory: the distinct values of each level
column in the analytic sample are coerced by
:func:`~covariscope.data.coerce.coerce_column` and planned by
:func:`~covariscope.analysis.design.plan_term`; each design column then lists
the stored values that code to its level.  Anything else (numbers stored as
text, a count column with negative or fractional values, to be refused with
the in-memory message) is left to the general batch path.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import numpy.typing as npt
import pandas as pd

from covariscope.analysis.design import Design, TermCoding, TermSpec, plan_term
from covariscope.analysis.rows import (
    ColumnStats,
    GlmSums,
    LinearSummary,
    RowBatch,
    SandwichSums,
    column_stats,
    fits_from_rows,
    glm_link,
)
from covariscope.data.coerce import coerce_column
from covariscope.data.sources.base import DesignRequest, row_design
from covariscope.data.sources.batched import MAX_TRACKED_LEVELS, FrameCounts
from covariscope.data.sources.coding import ColumnUse
from covariscope.data.values import level_key

__all__ = ["SqlRows", "sql_counts", "sql_design"]

_NUMERIC = (
    "TINYINT",
    "SMALLINT",
    "INTEGER",
    "BIGINT",
    "HUGEINT",
    "UTINYINT",
    "USMALLINT",
    "UINTEGER",
    "UBIGINT",
    "FLOAT",
    "DOUBLE",
    "DECIMAL",
)
_FLOATING = ("FLOAT", "DOUBLE")

Array = npt.NDArray[np.float64]


def _literal(value: Any) -> str:
    if isinstance(value, str):
        return "'" + value.replace("'", "''") + "'"
    if isinstance(value, bool | np.bool_):
        return "TRUE" if value else "FALSE"
    if isinstance(value, int | np.integer):
        return str(int(value))
    return f"CAST('{float(value)!r}' AS DOUBLE)"


def _is_in(column: str, values: list[Any]) -> str:
    if not values:
        return "0.0"
    listed = ", ".join(_literal(v) for v in values)
    return f"CASE WHEN {column} IN ({listed}) THEN 1.0 ELSE 0.0 END"


class SqlRows:
    """A :class:`~covariscope.analysis.rows.SummingReducer` over a query of ready design columns.

    The standard sums are aggregate queries, so no row leaves the database
    (the memory a pass takes is the scan's, whatever the file's length);
    any other function is applied to record batches streamed out.
    """

    def __init__(self, source: Any, expressions: list[str], offset: str | None, base: str) -> None:
        self.source, self.q, self.has_offset = source, len(expressions), offset is not None
        named = [f"{e} AS v{j}" for j, e in enumerate(expressions)]
        if offset is not None:
            named.append(f"{offset} AS o")
        self.query = f"SELECT {', '.join(named)} {base}"

    def _one(self, aggregates: list[str], inner: str | None = None) -> tuple[Any, ...]:
        row: tuple[Any, ...] = (
            self.source.db()
            .sql(f"SELECT {', '.join(aggregates)} FROM ({inner or self.query})")
            .fetchall()[0]
        )
        return row

    def reduce(self, fn: Any, merge: Any) -> Any:
        result: Any = None
        seen = False
        for batch in self.source.db().sql(self.query).to_arrow_reader(self.source.batch_rows):
            values = np.empty((batch.num_rows, self.q))
            for j in range(self.q):
                values[:, j] = batch.column(j).to_numpy(zero_copy_only=False)
            offset = (
                batch.column(self.q).to_numpy(zero_copy_only=False) if self.has_offset else None
            )
            part = fn(RowBatch(values, None if offset is None else np.asarray(offset, float)))
            result = part if not seen else merge(result, part)
            seen = True
        if not seen:
            result = fn(RowBatch(np.empty((0, self.q)), np.empty(0) if self.has_offset else None))
        return result

    def column_stats(self) -> ColumnStats:
        """Means and ranges in one query, the co-moments about those means in a second."""
        q, y = self.q, f"v{self.q - 1}"
        first = ["COUNT(*)"]
        first += [f"fsum(v{j})" for j in range(q)]
        first += [f"MIN(v{j})" for j in range(q)] + [f"MAX(v{j})" for j in range(q)]
        first += [
            f"COUNT(*) FILTER (WHERE {y} <> 0.0 AND {y} <> 1.0)",
            f"COUNT(*) FILTER (WHERE {y} > 0.0)",
            "fsum(exp(o))" if self.has_offset else "0.0",
        ]
        row = self._one(first)
        n = int(row[0])
        if n == 0:
            return column_stats(
                RowBatch(np.empty((0, q)), np.empty(0) if self.has_offset else None)
            )
        mean = np.array([float(v) for v in row[1 : 1 + q]]) / n
        pairs = [(i, j) for i in range(q) for j in range(i, q)]
        centred = [f"(v{j} - {_literal(float(mean[j]))})" for j in range(q)]
        found = self._one([f"fsum({centred[i]} * {centred[j]})" for i, j in pairs])
        comoment = np.empty((q, q))
        for (i, j), value in zip(pairs, found, strict=True):
            comoment[i, j] = comoment[j, i] = float(value)
        return ColumnStats(
            summary=LinearSummary(n, mean, comoment),
            low=np.array(row[1 + q : 1 + 2 * q], dtype=float),
            high=np.array(row[1 + 2 * q : 1 + 3 * q], dtype=float),
            outcome_not_binary=int(row[1 + 3 * q]),
            outcome_positive=int(row[2 + 3 * q]),
            offset_exp_sum=float(row[3 + 3 * q]),
        )

    def _linear(self, columns: tuple[int, ...], params: Array) -> str:
        """The linear predictor as SQL: the query with an ``eta`` column added."""
        terms = [_literal(float(params[0]))]
        terms += [f"{_literal(float(b))} * v{c}" for c, b in zip(columns, params[1:], strict=True)]
        if self.has_offset:
            terms.append("o")
        return f"SELECT *, {' + '.join(terms)} AS eta FROM ({self.query})"

    def _weighted(self, columns: tuple[int, ...], weight: str) -> list[str]:
        """Σ w, Σ w·x_a and Σ w·x_a·x_b (a ≤ b): the upper triangle of X'WX."""
        x = ["1.0", *(f"v{c}" for c in columns)]
        return [
            f"sum({weight} * {x[a]} * {x[b]})" if a else f"sum({weight} * {x[b]})"
            for a in range(len(x))
            for b in range(a, len(x))
        ]

    def glm_sums(
        self, columns: tuple[int, ...], params: Array, family: str, ylogy: bool
    ) -> GlmSums:
        """:func:`~covariscope.analysis.rows.glm_sums` as one aggregate query."""
        y, p = f"v{self.q - 1}", len(columns) + 1
        inner, tail = glm_link(family).sql_means(self._linear(columns, params), y, ylogy)
        x = ["1.0", *(f"v{c}" for c in columns)]
        aggregates = [*self._weighted(columns, "w"), *(f"sum({v} * ({y} - mu))" for v in x)]
        aggregates += [*tail, "MAX(mu)", "COUNT(*)"]
        row = [0.0 if v is None else v for v in self._one(aggregates, inner)]
        k = p * (p + 1) // 2
        rows = int(row[-1])
        return GlmSums(
            information=_symmetric(row[:k], p),
            score=np.array(row[k : k + p], dtype=float),
            deviance=float(row[k + p]),
            weight_sum=float(row[0]),
            mu_low=float(row[k + p + 1]) if rows else math.inf,
            mu_high=float(row[k + p + 2]) if rows else -math.inf,
            rows=rows,
        )

    def sandwich_sums(self, columns: tuple[int, ...], params: Array) -> SandwichSums:
        """:func:`~covariscope.analysis.rows.sandwich_sums` as one aggregate query."""
        y, p = f"v{self.q - 1}", len(columns) + 1
        inner = (
            f"SELECT *, power({y} - exp(least(eta, 700.0)), 2) AS w "
            f"FROM ({self._linear(columns, params)})"
        )
        row = [0.0 if v is None else v for v in self._one(self._weighted(columns, "w"), inner)]
        return SandwichSums(_symmetric(row, p))


def _symmetric(upper: list[Any], p: int) -> Array:
    """A symmetric p × p matrix from its upper triangle, row by row."""
    out = np.empty((p, p))
    k = 0
    for a in range(p):
        for b in range(a, p):
            out[a, b] = out[b, a] = float(upper[k])
            k += 1
    return out


def _codable(use: ColumnUse, kind: str) -> bool:
    base = kind.split("(")[0].upper()
    if use.kind in ("binary", "categorical"):
        return base in (*_NUMERIC, "VARCHAR", "BOOLEAN")
    return base in _NUMERIC


def sql_design(source: Any, request: DesignRequest, key: str) -> Design | None:
    """The design with its columns coded in SQL, or None when the general path must do it."""
    if not fits_from_rows(request.family):
        return None
    types = source.column_types
    uses = {u.column: u for u in request.uses}
    if not all(_codable(u, types[u.column]) for u in uses.values()):
        return None
    quote = source.quote
    complete = " AND ".join(
        f"{quote(c)} IS NOT NULL"
        + (f" AND NOT isnan({quote(c)})" if types[c].upper() in _FLOATING else "")
        for c in uses
    )
    base = f"FROM {source._from} WHERE {complete}"
    for use in uses.values():
        if use.kind == "count":
            bad = (
                source.db()
                .sql(
                    f"SELECT COUNT(*) {base} AND ({quote(use.column)} < 0 OR "
                    f"{quote(use.column)} <> floor({quote(use.column)}))"
                )
                .fetchall()[0][0]
            )
            if bad:
                return None
    coded: dict[str, dict[Any, list[Any]]] = {}
    for use in uses.values():
        if use.kind in ("binary", "categorical"):
            raw = [
                r[0]
                for r in source.db().sql(f"SELECT DISTINCT {quote(use.column)} {base}").fetchall()
            ]
            coded[use.column] = _coding(use, raw)
    exposure = _plan(request.exposure, coded, "exposure")
    covariates = {
        node: _plan(spec, coded, f"covariate {node}") for node, spec in request.covariates.items()
    }
    columns: list[str] = []
    for coding in (exposure, *covariates.values()):
        columns.extend(_expressions(coding, coded.get(coding.column), quote))
    assert request.outcome is not None
    out = uses[request.outcome]
    if out.kind == "binary":
        columns.append(_is_in(quote(out.column), coded[out.column].get(1.0, [])))
    else:
        columns.append(f"CAST({quote(out.column)} AS DOUBLE)")
    offset = None if request.offset is None else f"CAST({quote(request.offset)} AS DOUBLE)"
    return row_design(SqlRows(source, columns, offset, base), request, exposure, covariates, key)


def _coding(use: ColumnUse, raw: list[Any]) -> dict[Any, list[Any]]:
    """Coded value → the stored values that code to it (as the in-memory coercion codes them)."""
    series = pd.Series(
        raw, name=use.column, dtype=object if raw and isinstance(raw[0], str) else None
    )
    values = coerce_column(series, use.kind, use.reference)
    out: dict[Any, list[Any]] = {}
    for stored, value in zip(raw, values.tolist(), strict=True):
        if isinstance(value, float) and math.isnan(value):
            continue
        out.setdefault(level_key(value) if use.kind == "binary" else value, []).append(stored)
    if use.kind == "binary":
        return {float(k): v for k, v in out.items()}
    return out


def _plan(spec: TermSpec, coded: dict[str, dict[Any, list[Any]]], what: str) -> TermCoding:
    values = list(coded[spec.column]) if spec.column in coded else []
    return plan_term(spec, pd.Series(values), what)


def _expressions(coding: TermCoding, stored: dict[Any, list[Any]] | None, quote: Any) -> list[str]:
    column = quote(coding.column)
    if coding.levels is None:
        return [f"CAST({column} AS DOUBLE)"]
    if not coding.levels:
        return ["1.0"]
    assert stored is not None
    return [_is_in(column, stored.get(level, [])) for level in coding.levels]


def _missing(column: str, kind: str) -> str:
    nan = f" OR isnan({column})" if kind.upper() in _FLOATING else ""
    return f"({column} IS NULL{nan})"


def sql_counts(source: Any, columns: tuple[str, ...], tracked: tuple[str, ...]) -> FrameCounts:
    """Missing values, rows lost, ranges and levels of ``columns``, counted by the database."""
    quote, types = source.quote, source.column_types
    flags = [
        f"CAST({_missing(quote(c), types[c])} AS INTEGER) AS m{i}" for i, c in enumerate(columns)
    ]
    total = " + ".join(f"m{i}" for i in range(len(columns))) or "0"
    parts = [
        "COUNT(*)",
        f"COUNT(*) FILTER (WHERE {total} > 1)",
        f"COUNT(*) FILTER (WHERE {total} = 0)",
    ]
    for i in range(len(columns)):
        parts += [f"SUM(m{i})", f"COUNT(*) FILTER (WHERE m{i} = 1 AND {total} = 1)"]
    numeric = [c for c in columns if types[c].split("(")[0].upper() in _NUMERIC]
    ranged = ", ".join(f"{quote(c)}" for c in numeric)
    for c in numeric:
        parts += [
            f"MIN({quote(c)}) FILTER (WHERE NOT {_missing(quote(c), types[c])})",
            f"MAX({quote(c)}) FILTER (WHERE NOT {_missing(quote(c), types[c])})",
        ]
    inner = ", ".join([*flags, ranged] if ranged else flags)
    row = (
        source.db()
        .sql(f"SELECT {', '.join(parts)} FROM (SELECT {inner} FROM {source._from})")
        .fetchall()[0]
    )
    rows, several, complete = int(row[0]), int(row[1] or 0), int(row[2] or 0)
    missing = {c: int(row[3 + 2 * i] or 0) for i, c in enumerate(columns)}
    alone = {c: int(row[4 + 2 * i] or 0) for i, c in enumerate(columns)}
    base = 3 + 2 * len(columns)
    low, high = {}, {}
    for k, c in enumerate(numeric):
        lo, hi = row[base + 2 * k], row[base + 2 * k + 1]
        if lo is not None:
            low[c], high[c] = float(lo), float(hi)
    levels: dict[str, set[Any] | None] = {}
    for c in tracked:
        found = (
            source.db()
            .sql(
                f"SELECT DISTINCT {quote(c)} FROM {source._from} WHERE NOT {_missing(quote(c), types[c])} "
                f"LIMIT {MAX_TRACKED_LEVELS + 1}"
            )
            .fetchall()
        )
        keys = {level_key(r[0]) for r in found}
        levels[c] = keys if len(found) <= MAX_TRACKED_LEVELS else None
    return FrameCounts(rows, missing, alone, several, complete, levels, low, high)
