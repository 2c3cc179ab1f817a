"""The DuckDB data source: the file is queried where it lies, never loaded whole.

Parquet and delimited text are read in place by the embedded database;
Stata, SPSS and SAS files are converted once to a Parquet copy in a cache
folder beside the project (the data file itself is only read), and the user
is told.  Rows stream out of the database in record batches of a fixed
size, so the memory a pass holds does not grow with the file.
"""

from __future__ import annotations

import tempfile
import threading
from pathlib import Path
from typing import Any

import pandas as pd

from covariscope.analysis.design import Design
from covariscope.data.readers import nested_parquet_columns as nested_parquet
from covariscope.data.sources.base import DesignRequest
from covariscope.data.sources.batched import BatchSource, FrameCounts
from covariscope.data.sources.memuse import process_limit, resident_text
from covariscope.errors import DataError

__all__ = ["BATCH_ROWS", "DuckSource", "quote_name"]

#: Rows per record batch: about 2 MB per float column, small against any
#: machine's memory and large enough that each batch is one vectorised step.
BATCH_ROWS = 1 << 18

#: Markers of a missing value in delimited text (as the in-memory reader).
_NULLS = ("", "NA", "N/A", "n/a", "NaN", "nan", "null", "NULL", "#N/A")


def quote_name(name: str) -> str:
    """A column name as an SQL identifier.

    >>> quote_name("body mass")
    '"body mass"'
    """
    return '"' + name.replace('"', '""') + '"'


def _literal(text: str) -> str:
    return "'" + text.replace("'", "''") + "'"


class DuckSource(BatchSource):
    """A Parquet or delimited-text file read through an embedded DuckDB.

    Parameters
    ----------
    path : Path
        Parquet (``.parquet``, ``.pq``) or delimited text; see
        :func:`~covariscope.data.sources.choose.open_source` for the others.
    memory_limit : str, optional
        DuckDB's own memory limit (e.g. ``"1GB"``).
    threads : int, optional
        Worker threads of the database (default: its own choice).
    batch_rows : int
        Rows per record batch handed to the statistics.
    origin : Path, optional
        The file the user chose, when ``path`` is a converted copy of it.
    """

    engine = "duckdb"
    quote = staticmethod(quote_name)

    def __init__(
        self,
        path: Path,
        *,
        memory_limit: str | None = None,
        threads: int | None = None,
        batch_rows: int = BATCH_ROWS,
        origin: Path | None = None,
    ) -> None:
        try:
            import duckdb
        except ImportError as exc:  # a runtime dependency; said plainly all the same
            raise DataError(
                "Reading a file where it lies needs the duckdb package; install it "
                "(pip install duckdb) or use the in-memory engine."
            ) from exc
        config: dict[str, Any] = {}
        limit = process_limit()
        if memory_limit is None and limit is not None:
            # DuckDB sizes its buffers by the machine's memory; a limit placed on
            # this process is the one that counts (a share: Python holds the rest).
            memory_limit = f"{max(limit * 3 // 10, 64 * 2**20) // 2**20}MB"
        elif memory_limit is None:
            # Every query here streams; a small buffer pool keeps the scans' working
            # set small (measured: the peak of a pass falls by a third at 512 MB).
            memory_limit = "512MB"
        if memory_limit:
            config["memory_limit"] = memory_limit
        if threads:
            config["threads"] = threads
        self._tmp = tempfile.TemporaryDirectory(prefix="covariscope-duckdb-")
        config["temp_directory"] = self._tmp.name
        self._con = duckdb.connect(":memory:", config=config)
        # Sums need no row order; kept, it makes a parallel scan buffer its output.
        self._con.sql("SET preserve_insertion_order = false")
        self._local = threading.local()
        self.batch_rows = batch_rows
        self._from = self._table_function(path)
        try:
            described = self.db().sql(f"DESCRIBE SELECT * FROM {self._from}").fetchall()
            rows = int(self.db().sql(f"SELECT COUNT(*) FROM {self._from}").fetchall()[0][0])
        except duckdb.Error as exc:
            raise DataError(
                f"{path.name} could not be read by DuckDB ({exc}). Check the file, or load it "
                "with the in-memory engine."
            ) from exc
        self.column_types = {str(r[0]): str(r[1]) for r in described}
        left_out = nested_parquet(path)
        for name in left_out:
            self.column_types.pop(name, None)
        if path.suffix.lower() not in (".parquet", ".pq"):
            # The types found on the whole file are pinned: later queries skip that scan.
            self._from = self._table_function(path, self.column_types)
        super().__init__(origin or path, tuple(self.column_types), rows)
        self.notes = tuple(left_out.values())

    def db(self) -> Any:
        """This thread's cursor on the database (a connection is not shared between threads)."""
        cursor = getattr(self._local, "cursor", None)
        if cursor is None:
            cursor = self._con.cursor()
            # Its own progress bar would print into the output of `check --json`.
            cursor.sql("SET enable_progress_bar = false")
            self._local.cursor = cursor
        return cursor

    def _table_function(self, path: Path, types: dict[str, str] | None = None) -> str:
        if path.suffix.lower() in (".parquet", ".pq"):
            return f"read_parquet({_literal(str(path))})"
        nulls = ", ".join(_literal(v) for v in _NULLS)
        if types is None:
            detect = "sample_size = -1"
        else:
            listed = ", ".join(f"{_literal(k)}: {_literal(v)}" for k, v in types.items())
            detect = f"columns = {{{listed}}}"
        return f"read_csv({_literal(str(path))}, header = true, {detect}, nullstr = [{nulls}])"

    def _select(self, columns: tuple[str, ...], complete: bool) -> str:
        names = ", ".join(quote_name(c) for c in columns)
        where = ""
        if complete and columns:
            where = " WHERE " + " AND ".join(f"{quote_name(c)} IS NOT NULL" for c in columns)
        return f"SELECT {names} FROM {self._from}{where}"

    def reduce_frames(
        self, columns: tuple[str, ...], fn: Any, merge: Any, *, complete: bool
    ) -> Any:
        reader = self.db().sql(self._select(columns, complete)).to_arrow_reader(self.batch_rows)
        result: Any = None
        seen = False
        for batch in reader:
            frame = batch.to_pandas()
            if complete:
                frame = frame.dropna()  # NaN in a float column is missing too
            part = fn(frame)
            result = part if not seen else merge(result, part)
            seen = True
        if not seen:
            empty = pd.DataFrame({c: pd.Series(dtype="float64") for c in columns})
            result = fn(empty)
        return result

    def sample_rows(self, columns: tuple[str, ...], rows: int, *, complete: bool) -> pd.DataFrame:
        query = self._select(columns, complete)
        if self.rows > rows:
            query = (
                f"SELECT * FROM ({query}) USING SAMPLE reservoir({int(rows)} ROWS) REPEATABLE (7)"
            )
        frame: pd.DataFrame = self.db().sql(query).df()
        if complete:
            frame = frame.dropna()
        return frame.reset_index(drop=True)

    def design(self, request: DesignRequest, messages: list[str]) -> Design:
        """The design coded in SQL where the columns allow (see :mod:`.duck_sql`)."""
        from covariscope.data.sources.duck_sql import sql_design

        needed = tuple(dict.fromkeys(u.column for u in request.uses))
        found = sql_design(self, request, self.source_key(needed))
        return found if found is not None else super().design(request, messages)

    def count_rows(self, columns: tuple[str, ...], tracked: tuple[str, ...]) -> FrameCounts:
        """The counts as one aggregate query (and one DISTINCT per level column)."""
        from covariscope.data.sources.duck_sql import sql_counts

        return sql_counts(self, columns, tracked)

    def status(self) -> str:
        return f"DuckDB: {self.rows:,} rows read where they lie; {resident_text()}"

    def close(self) -> None:
        """Close the database connection and remove its scratch folder."""
        self._con.close()
        self._tmp.cleanup()
