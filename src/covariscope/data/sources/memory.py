"""The in-memory data source: the loaded table, as pandas and NumPy hold it."""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

from covariscope.analysis.design import Design
from covariscope.data.loading import LoadedTable
from covariscope.data.profile import ColumnProfile, profile_table
from covariscope.data.sample import AnalyticSample, analytic_sample
from covariscope.data.sources.base import DesignRequest, ProgressFn, frame_design

__all__ = ["MemorySource"]


class MemorySource:
    """Every row in memory: the default for files that fit.

    Examples
    --------
    >>> import pandas as pd
    >>> table = LoadedTable(pd.DataFrame({"x": [1.0, None]}), Path("x.csv"), "text", "0" * 64)
    >>> MemorySource(table).analytic_sample(("x",)).used
    1
    """

    engine = "memory"

    def __init__(self, table: LoadedTable) -> None:
        self.table = table
        self.path: Path = table.path
        self.columns: tuple[str, ...] = tuple(str(c) for c in table.frame.columns)
        self._sample: AnalyticSample | None = None
        self.notes: tuple[str, ...] = table.left_out

    @property
    def sha256(self) -> str:
        return self.table.sha256

    @property
    def rows(self) -> int:
        return self.table.rows

    @property
    def value_labels(self) -> Mapping[str, Mapping[Any, str]]:
        return self.table.value_labels

    def status(self) -> str:
        size = int(self.table.frame.memory_usage(deep=True).sum())
        return f"in memory: {self.rows:,} rows, {size / 2**20:,.0f} MB"

    def profiles(
        self,
        columns: tuple[str, ...],
        types: Mapping[str, str],
        references: Mapping[str, object],
        progress: ProgressFn | None = None,
    ) -> dict[str, ColumnProfile]:
        sub = self.table.frame.loc[:, list(columns)]
        return profile_table(
            sub,
            {k: v for k, v in types.items() if k in sub.columns},
            {k: v for k, v in references.items() if k in sub.columns},
        )

    def analytic_sample(self, columns: tuple[str, ...]) -> AnalyticSample:
        self._sample = analytic_sample(self.table.frame, columns)
        return self._sample

    def design(self, request: DesignRequest, messages: list[str]) -> Design:
        needed = tuple(dict.fromkeys(u.column for u in request.uses))
        sample = self._sample
        if sample is None or sample.columns != needed:
            sample = self.analytic_sample(needed)
        return frame_design(sample.frame, request)
