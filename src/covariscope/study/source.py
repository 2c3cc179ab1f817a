"""The first stage of the pipeline: where the study's data come from.

The pipeline reads a table in memory through :class:`ColumnSource`: a digest that
names the data (the cache keys start with it), the column names, the row
count, and one column at a time.  :class:`TableSource` serves a table
loaded in memory; a source that reads a file where it lies (DuckDB) or a
cluster plugs in here by offering the same few members.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, Protocol, runtime_checkable

import numpy as np
import pandas as pd

from covariscope.data.loading import LoadedTable

__all__ = ["ColumnSource", "TableSource", "source_of"]


@runtime_checkable
class ColumnSource(Protocol):
    """What the pipeline reads of a data set."""

    @property
    def digest(self) -> str:
        """Names the data's content (a file's SHA-256): equal digests, equal data."""
        ...

    @property
    def name(self) -> str:
        """The file name shown to the user."""
        ...

    @property
    def rows(self) -> int:
        """Rows in the data."""
        ...

    def has_column(self, column: str) -> bool:
        """Whether the data have this column."""
        ...

    def column(self, column: str) -> pd.Series:
        """One column, every row, as read (no coding)."""
        ...

    def missing(self, column: str) -> np.ndarray:
        """Boolean mask of the rows where ``column`` is missing (one pass)."""
        ...

    def value_labels(self, column: str) -> Mapping[Any, str] | None:
        """Code → label for a column whose file carries them."""
        ...


class TableSource:
    """A :class:`ColumnSource` over a table loaded in memory.

    Examples
    --------
    >>> from pathlib import Path
    >>> t = LoadedTable(pd.DataFrame({"a": [1.0, None]}), Path("a.csv"), "csv", "0" * 64)
    >>> s = TableSource(t)
    >>> s.rows, s.has_column("a"), s.missing("a").tolist()
    (2, True, [False, True])
    """

    def __init__(self, table: LoadedTable) -> None:
        self.table = table
        self._names = {str(c) for c in table.frame.columns}

    @property
    def digest(self) -> str:
        return self.table.sha256

    @property
    def name(self) -> str:
        return self.table.path.name

    @property
    def rows(self) -> int:
        return len(self.table.frame)

    def has_column(self, column: str) -> bool:
        return column in self._names

    def column(self, column: str) -> pd.Series:
        return self.table.frame[column]

    def missing(self, column: str) -> np.ndarray:
        mask = np.asarray(self.table.frame[column].isna().to_numpy(), dtype=bool)
        if mask.any():
            return mask
        # a complete column (the usual case) keeps no byte per row in the cache
        return np.broadcast_to(np.False_, mask.shape)

    def value_labels(self, column: str) -> Mapping[Any, str] | None:
        return self.table.value_labels.get(column)

    @property
    def column_names(self) -> tuple[str, ...]:
        """Every column, in file order."""
        return tuple(str(c) for c in self.table.frame.columns)


def source_of(table: LoadedTable | ColumnSource) -> ColumnSource:
    """The data source of a loaded table (a source is returned as it is)."""
    if isinstance(table, LoadedTable):
        return TableSource(table)
    return table
