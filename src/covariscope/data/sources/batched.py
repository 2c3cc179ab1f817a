"""What every out-of-memory source does the same way, over batches of rows.

A batch source can do two things: reduce a function over batches of some
columns (as pandas frames, complete cases only when asked), and draw a
random sample of rows.  Everything else — profiles, the analytic sample, the
levels of each term and the design — is built here on those two, with the
same rules as the in-memory path, so the numbers agree.
"""

from __future__ import annotations

import dataclasses
import functools
import hashlib
from abc import ABC, abstractmethod
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from covariscope.analysis.design import Design, TermCoding, plan_term
from covariscope.analysis.rows import RowBatch, fits_from_rows, rows_in_memory_words
from covariscope.data.loading import file_sha256
from covariscope.data.profile import LEVEL_TYPES, ColumnProfile, match_level, profile_table
from covariscope.data.sample import AnalyticSample, check_known, no_rows_error, summary_text
from covariscope.data.sources.base import DesignRequest, ProgressFn, frame_design, row_design
from covariscope.data.sources.coding import (
    BatchPlan,
    code_batch,
    level_values,
    merge_levels,
)
from covariscope.data.values import level_key, sort_levels

__all__ = ["BatchSource", "FrameCounts", "count_frame", "merge_counts"]

#: Rows drawn at random for type inference and for the diagnostics plots.
SAMPLE_ROWS = 100_000
PLOT_ROWS = 20_000
#: Distinct values tracked per column for the exact level counts.
MAX_TRACKED_LEVELS = 1000


@dataclass(frozen=True, eq=False)
class FrameCounts:
    """Exact counts over rows: missing values, lost rows, distinct levels, ranges."""

    rows: int
    missing: dict[str, int]
    alone: dict[str, int]
    several: int
    complete: int
    levels: dict[str, set[Any] | None] = field(default_factory=dict)
    low: dict[str, float] = field(default_factory=dict)
    high: dict[str, float] = field(default_factory=dict)


def count_frame(
    frame: pd.DataFrame, columns: tuple[str, ...], tracked: tuple[str, ...]
) -> FrameCounts:
    """The :class:`FrameCounts` of one batch."""
    missing = frame.loc[:, list(columns)].isna().to_numpy()
    per_row = missing.sum(axis=1)
    levels: dict[str, set[Any] | None] = {}
    for c in tracked:
        values = {level_key(v) for v in pd.unique(frame[c].dropna())}
        levels[c] = values if len(values) <= MAX_TRACKED_LEVELS else None
    low: dict[str, float] = {}
    high: dict[str, float] = {}
    for c in columns:
        series = frame[c]
        if pd.api.types.is_numeric_dtype(series.dtype) and not pd.api.types.is_bool_dtype(series):
            present = series.dropna()
            if len(present):
                low[c], high[c] = float(present.min()), float(present.max())
    return FrameCounts(
        rows=len(frame),
        missing={c: int(n) for c, n in zip(columns, missing.sum(axis=0), strict=True)},
        alone={c: int(n) for c, n in zip(columns, missing[per_row == 1].sum(axis=0), strict=True)},
        several=int(np.count_nonzero(per_row > 1)),
        complete=int(np.count_nonzero(per_row == 0)),
        levels=levels,
        low=low,
        high=high,
    )


def _merge_sets(a: set[Any] | None, b: set[Any] | None) -> set[Any] | None:
    if a is None or b is None:
        return None
    union = a | b
    return union if len(union) <= MAX_TRACKED_LEVELS else None


def merge_counts(a: FrameCounts, b: FrameCounts) -> FrameCounts:
    """Counts of two disjoint sets of rows."""
    return FrameCounts(
        rows=a.rows + b.rows,
        missing={c: a.missing.get(c, 0) + b.missing.get(c, 0) for c in {*a.missing, *b.missing}},
        alone={c: a.alone.get(c, 0) + b.alone.get(c, 0) for c in {*a.alone, *b.alone}},
        several=a.several + b.several,
        complete=a.complete + b.complete,
        levels={
            c: _merge_sets(a.levels.get(c, set()), b.levels.get(c, set()))
            for c in {*a.levels, *b.levels}
        },
        low={c: min(a.low.get(c, np.inf), b.low.get(c, np.inf)) for c in {*a.low, *b.low}},
        high={c: max(a.high.get(c, -np.inf), b.high.get(c, -np.inf)) for c in {*a.high, *b.high}},
    )


def _apply_coded(frame: pd.DataFrame, plan: BatchPlan, fn: Any) -> Any:
    if len(frame) == 0:
        q = sum(len(t.names) for t in plan.terms) + (plan.outcome is not None)
        return fn(RowBatch(np.empty((0, q)), None if plan.offset is None else np.empty(0)))
    return fn(code_batch(frame, plan))


def _concat(a: pd.DataFrame, b: pd.DataFrame) -> pd.DataFrame:
    return pd.concat([a, b], ignore_index=True)


def _identity(frame: pd.DataFrame) -> pd.DataFrame:
    return frame


class _Rows:
    """A :class:`~covariscope.analysis.rows.RowReducer` over the coded complete rows."""

    def __init__(self, source: BatchSource, columns: tuple[str, ...], plan: BatchPlan) -> None:
        self.source, self.columns, self.plan = source, columns, plan

    def reduce(self, fn: Any, merge: Any) -> Any:
        return self.source.reduce_frames(
            self.columns, partial(_apply_coded, plan=self.plan, fn=fn), merge, complete=True
        )


class BatchSource(ABC):
    """A source whose rows are read in batches, never all at once."""

    engine = ""

    def __init__(self, path: Path, columns: tuple[str, ...], rows: int) -> None:
        self.path = path
        self.columns = columns
        self._rows = rows
        self._sha: str | None = None
        self.notes: tuple[str, ...] = ()
        self._sample: AnalyticSample | None = None

    # -- what each engine provides -------------------------------------------------
    @abstractmethod
    def reduce_frames(
        self, columns: tuple[str, ...], fn: Any, merge: Any, *, complete: bool
    ) -> Any:
        """``merge`` of ``fn(frame)`` over batches of ``columns`` (complete cases when asked)."""

    @abstractmethod
    def sample_rows(self, columns: tuple[str, ...], rows: int, *, complete: bool) -> pd.DataFrame:
        """A random sample of at most ``rows`` rows (the same rows on every call)."""

    @abstractmethod
    def status(self) -> str:
        """The engine in use and the memory it holds, in a few words."""

    def count_rows(self, columns: tuple[str, ...], tracked: tuple[str, ...]) -> FrameCounts:
        """Exact counts over every row (see :class:`FrameCounts`); an engine may count faster."""
        counts: FrameCounts = self.reduce_frames(
            columns,
            partial(count_frame, columns=columns, tracked=tracked),
            merge_counts,
            complete=False,
        )
        return counts

    # -- the interface ---------------------------------------------------------------
    @property
    def sha256(self) -> str:
        if self._sha is None:
            self._sha = file_sha256(self.path)
        return self._sha

    @property
    def rows(self) -> int:
        return self._rows

    @property
    def value_labels(self) -> Mapping[str, Mapping[Any, str]]:
        return {}

    def source_key(self, columns: tuple[str, ...]) -> str:
        """Identifies these rows for the fit cache: the file (path, size, time) and the filter."""
        stat = self.path.stat()
        ident = repr((str(self.path), stat.st_size, stat.st_mtime_ns, columns))
        return hashlib.sha256(ident.encode()).hexdigest()

    def profiles(
        self,
        columns: tuple[str, ...],
        types: Mapping[str, str],
        references: Mapping[str, object],
        progress: ProgressFn | None = None,
    ) -> dict[str, ColumnProfile]:
        """Types inferred on a random sample of rows; missing values, levels and ranges exact."""
        check_known(self.columns, columns)
        sample = self.sample_rows(columns, SAMPLE_ROWS, complete=False)
        if progress is not None:
            progress(0.3, "Inferring column types on a sample of rows")
        inferred = profile_table(sample, {k: v for k, v in types.items() if k in columns})
        tracked = tuple(c for c in columns if inferred[c].type in LEVEL_TYPES)
        counts = self.count_rows(columns, tracked)
        if progress is not None:
            progress(1.0, "Counted missing values and levels")
        return {c: self._exact(inferred[c], counts, references.get(c)) for c in columns}

    def _exact(
        self, profile: ColumnProfile, counts: FrameCounts, reference: object
    ) -> ColumnProfile:
        name = profile.name
        missing = counts.missing[name]
        changes: dict[str, Any] = {
            "missing": missing,
            "missing_pct": 100.0 * missing / counts.rows if counts.rows else 0.0,
        }
        if name in counts.low and profile.minimum is not None:
            changes["minimum"], changes["maximum"] = counts.low[name], counts.high[name]
        found = counts.levels.get(name)
        if profile.type in LEVEL_TYPES and found is not None:
            levels = sort_levels(found)
            changes["levels"] = levels
            changes["count_distinct"] = functools.partial(len, levels)
            changes["single_value"] = len(levels) == 1
            if profile.type == "binary" and len(levels) > 2:
                changes["type"] = changes["inferred_type"] = "categorical"
        levels = changes.get("levels", profile.levels)
        if profile.type in LEVEL_TYPES:
            changes["reference"] = match_level(name, levels, reference)
        return dataclasses.replace(profile, **changes)

    def analytic_sample(self, columns: tuple[str, ...]) -> AnalyticSample:
        """Exact counts of what was lost; ``frame`` is a random sample of the complete rows."""
        chosen = tuple(dict.fromkeys(columns))
        check_known(self.columns, chosen)
        counts = self.count_rows(chosen, ())
        if counts.complete == 0:
            raise no_rows_error(counts.rows, counts.missing)
        frame = self.sample_rows(chosen, PLOT_ROWS, complete=True)
        self._sample = AnalyticSample(
            frame=frame,
            rows=counts.rows,
            used=counts.complete,
            columns=chosen,
            missing_by_column=counts.missing,
            lost_by_column=counts.alone,
            lost_to_several=counts.several,
            message=summary_text(
                counts.rows, counts.complete, counts.alone, counts.several, len(chosen)
            ),
            frame_is_sample=counts.complete > len(frame),
        )
        return self._sample

    def design(self, request: DesignRequest, messages: list[str]) -> Design:
        """The design, its sums read from the source; a family that needs its rows
        in memory (Cox) reads them."""
        needed = tuple(dict.fromkeys(u.column for u in request.uses))
        if not fits_from_rows(request.family):
            messages.append(
                f"{rows_in_memory_words(request.family)}; {self.engine} read them into memory "
                "for this study."
            )
            return frame_design(
                self.reduce_frames(needed, _identity, _concat, complete=True), request
            )
        levels = self.reduce_frames(
            needed, partial(level_values, uses=request.uses), merge_levels, complete=True
        )
        exposure = plan_term(
            request.exposure, sorted_values(levels, request.exposure.column), "exposure"
        )
        covariates: dict[str, TermCoding] = {
            node: plan_term(spec, sorted_values(levels, spec.column), f"covariate {node}")
            for node, spec in request.covariates.items()
        }
        assert request.outcome is not None
        plan = BatchPlan(
            request.uses, (exposure, *covariates.values()), request.outcome, request.offset
        )
        return row_design(
            _Rows(self, needed, plan), request, exposure, covariates, self.source_key(needed)
        )


def sorted_values(levels: Mapping[str, set[Any]], column: str) -> pd.Series:
    """The distinct values of a level column (empty for numeric terms)."""
    return pd.Series(list(levels.get(column, ())))
