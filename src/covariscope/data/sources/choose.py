"""Choosing the engine that reads a data file, and opening it.

"auto" keeps today's behaviour — every row in memory — unless the file's
estimated in-memory size exceeds :data:`MEMORY_SHARE` of the memory
available; then DuckDB reads it where it lies.  Stata, SPSS and SAS files
are converted once to Parquet in a cache folder beside the project for the
out-of-memory engines (the data file itself is only read).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from covariscope.data.loading import SUPPORTED_SUFFIXES, check_text_bytes, load_table
from covariscope.data.sources.base import DataSource
from covariscope.data.sources.memory import MemorySource
from covariscope.data.sources.memuse import available_memory
from covariscope.errors import DataError

__all__ = ["MEMORY_SHARE", "choose_engine", "estimated_memory", "open_source"]

#: Largest share of the available memory a file may take in memory before
#: "auto" reads it where it lies (pandas needs about twice the frame at peak).
MEMORY_SHARE = 0.4

_CONVERTED = ("stata", "spss", "sas", "sas_transport")
CACHE_FOLDER = ".covariscope-cache"


def estimated_memory(path: Path) -> int:
    """Bytes the file's rows would take in memory, estimated without reading them.

    Parquet: the uncompressed size its metadata records; other formats:
    twice the file's size (text numbers become 8-byte floats, text stays
    text).  Common practice, no published source.
    """
    kind = SUPPORTED_SUFFIXES.get(path.suffix.lower(), "text")
    if kind == "parquet":
        import pyarrow.parquet as pq

        meta = pq.ParquetFile(path).metadata
        return sum(meta.row_group(i).total_byte_size for i in range(meta.num_row_groups))
    return 2 * path.stat().st_size


def choose_engine(path: Path, engine: str = "auto", *, share: float = MEMORY_SHARE) -> str:
    """The engine to read ``path`` with: ``engine`` itself unless it is "auto"."""
    if engine != "auto":
        return engine
    kind = SUPPORTED_SUFFIXES.get(path.suffix.lower(), "text")
    if kind in ("excel", "excel_old"):
        return "memory"
    available = available_memory()
    if available is None or not path.is_file():
        return "memory"
    return "duckdb" if estimated_memory(path) > share * available else "memory"


def _parquet_cache(path: Path, cache_dir: Path) -> Path:
    """A Parquet copy of a Stata, SPSS or SAS file, converted once (by file content)."""
    from covariscope.data.loading import file_sha256

    digest = file_sha256(path)[:16]
    target = cache_dir / f"{path.stem}-{digest}.parquet"
    if target.exists():
        return target
    cache_dir.mkdir(parents=True, exist_ok=True)
    import pyarrow as pa
    import pyarrow.parquet as pq
    import pyreadstat

    readers: dict[str, Any] = {
        ".dta": pyreadstat.read_dta,
        ".sav": pyreadstat.read_sav,
        ".zsav": pyreadstat.read_sav,
        ".sas7bdat": pyreadstat.read_sas7bdat,
        ".xpt": pyreadstat.read_xport,
    }
    partial_path = target.with_suffix(".partial")
    writer = None
    try:
        for frame, _ in pyreadstat.read_file_in_chunks(
            readers[path.suffix.lower()], str(path), chunksize=200_000
        ):
            table = pa.Table.from_pandas(frame, preserve_index=False)
            if writer is None:
                writer = pq.ParquetWriter(partial_path, table.schema)
            writer.write_table(table.cast(writer.schema))
    finally:
        if writer is not None:
            writer.close()
    partial_path.replace(target)
    return target


def open_source(
    path: str | Path,
    engine: str = "auto",
    *,
    scheduler: str = "",
    cache_dir: Path | None = None,
    notes: list[str] | None = None,
) -> DataSource:
    """Open a data file with the chosen engine ("auto", "memory", "duckdb", "dask").

    ``notes`` receives plain sentences for the user (the engine chosen, a
    conversion made).  ``cache_dir`` is where converted copies go (default: a
    folder beside the data file).
    """
    path = Path(path)
    if not path.is_file():
        load_table(path)  # says plainly what is wrong with the path
    chosen = choose_engine(path, engine)
    notes = notes if notes is not None else []
    kind = SUPPORTED_SUFFIXES.get(path.suffix.lower(), "text")
    if chosen == "memory":
        return MemorySource(load_table(path))
    if chosen not in ("duckdb", "dask"):
        raise DataError(f'Unknown engine "{chosen}"; use auto, memory, duckdb or dask.')
    if engine == "auto":
        notes.append(
            f"{path.name} is larger than {MEMORY_SHARE:.0%} of the memory available, so it is "
            "read where it lies (DuckDB) instead of loaded."
        )
    if kind in ("excel", "excel_old"):
        raise DataError(
            f"{path.name} is an Excel workbook, which only the in-memory engine reads; save it "
            "as Parquet or CSV to use the duckdb or dask engine."
        )
    origin = path
    if kind in _CONVERTED:
        folder = cache_dir if cache_dir is not None else path.parent / CACHE_FOLDER
        converted = _parquet_cache(path, folder)
        notes.append(
            f"{path.name} was converted once to Parquet ({converted}) so that it can be read "
            "where it lies; the original is unchanged. Value labels are not carried over."
        )
        path = converted
    elif chosen == "dask" and kind != "parquet":
        raise DataError(
            f"The Dask engine reads Parquet; {path.name} is {kind}. Convert it to Parquet, or "
            "use the duckdb engine."
        )
    if kind == "text":
        # zero bytes would be read as text (a stray value) or as one more row
        check_text_bytes(path)
    if chosen == "duckdb":
        from covariscope.data.sources.duck import DuckSource

        source: DataSource = DuckSource(path, origin=origin)
    else:
        from covariscope.data.sources.cluster import DaskSource

        source = DaskSource(path, scheduler=scheduler, origin=origin)
    source.notes = (*notes, *source.notes)
    return source
