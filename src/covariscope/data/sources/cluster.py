"""The Dask data source: Parquet summed on a cluster, by tree reduction.

``dask.dataframe`` reads the Parquet file (or folder of files) in
partitions; each partition is reduced to its partial sums on a worker of a
``dask.distributed`` cluster — one given by its scheduler address, or a local
one — and the partial sums are merged pairwise up a tree, so no worker (and
not this process) ever holds more than a partition and a few small
matrices.  Workers of a remote cluster need Covariscope installed (the sums
are its functions).  Dask is an optional extra:
``pip install "covariscope[cluster]"``.
"""

from __future__ import annotations

import importlib
from pathlib import Path
from typing import Any

import pandas as pd

from covariscope.data.readers import nested_parquet_columns as nested_parquet
from covariscope.data.sources.batched import BatchSource
from covariscope.data.sources.memuse import resident_text
from covariscope.errors import DataError

__all__ = ["MISSING_EXTRA", "DaskSource"]

#: Said when the optional Dask packages are not installed.
MISSING_EXTRA = (
    "The Dask engine needs the optional cluster packages; install them with "
    'pip install "covariscope[cluster]", or choose the duckdb or memory engine.'
)


def _plain_frame(frame: pd.DataFrame, complete: bool) -> pd.DataFrame:
    # Dask may read text as pandas' arrow-backed strings; the in-memory path has objects.
    text = [c for c in frame.columns if pd.api.types.is_string_dtype(frame[c].dtype)]
    if text:
        frame = frame.astype(dict.fromkeys(text, object))
        for c in text:
            frame[c] = frame[c].where(frame[c].notna(), None)
    return frame.dropna() if complete else frame


def _apply(frame: pd.DataFrame, fn: Any, complete: bool) -> Any:
    return fn(_plain_frame(frame, complete))


class DaskSource(BatchSource):
    """A Parquet file (or folder) summed by a Dask cluster.

    Parameters
    ----------
    path : Path
        Parquet file or folder of Parquet files.
    scheduler : str
        Address of a running scheduler (``tcp://host:8786``); empty for a
        local cluster of ``workers`` workers.
    processes : bool
        Local cluster only: workers as processes (True) or threads.
    client : distributed.Client, optional
        A client already connected (then ``scheduler`` and ``workers`` are unused
        and :meth:`close` leaves it open).
    """

    engine = "dask"

    def __init__(
        self,
        path: Path,
        *,
        scheduler: str = "",
        workers: int = 2,
        processes: bool = True,
        origin: Path | None = None,
        client: Any = None,
    ) -> None:
        try:
            # Untyped packages: held as Any.
            dask: Any = importlib.import_module("dask")
            dd: Any = importlib.import_module("dask.dataframe")
            distributed: Any = importlib.import_module("distributed")
        except ImportError as exc:
            raise DataError(MISSING_EXTRA) from exc
        Client, LocalCluster = distributed.Client, distributed.LocalCluster
        self._dask = dask
        self._cluster: Any = None
        self._client: Any = None
        self._own_client = client is None
        try:
            if client is not None:
                self._client = client
            elif scheduler:
                self._client = Client(scheduler, timeout=30)
            else:
                self._cluster = LocalCluster(
                    n_workers=workers,
                    threads_per_worker=1,
                    processes=processes,
                    dashboard_address=None,
                )
                self._client = Client(self._cluster)
        except OSError as exc:
            raise DataError(
                f"The Dask scheduler {scheduler!r} could not be reached ({exc}). Check the "
                "address (tcp://host:8786) and that the cluster is running."
            ) from exc
        with dask.config.set({"dataframe.convert-string": False}):
            self._frame = dd.read_parquet(str(path))
        import pyarrow.dataset as ds

        rows = int(ds.dataset(str(path), format="parquet").count_rows())
        left_out = nested_parquet(path)
        columns = tuple(str(c) for c in self._frame.columns if str(c) not in left_out)
        super().__init__(origin or path, columns, rows)
        self.notes = tuple(left_out.values())

    def reduce_frames(
        self, columns: tuple[str, ...], fn: Any, merge: Any, *, complete: bool
    ) -> Any:
        delayed = self._dask.delayed
        parts = [
            delayed(_apply)(part, fn, complete) for part in self._frame[list(columns)].to_delayed()
        ]
        # A tree of pairwise merges: depth log2(partitions), each node on a worker.
        while len(parts) > 1:
            pairs = [delayed(merge)(a, b) for a, b in zip(parts[::2], parts[1::2], strict=False)]
            parts = pairs + ([parts[-1]] if len(parts) % 2 else [])
        return self._client.compute(parts[0]).result()

    def sample_rows(self, columns: tuple[str, ...], rows: int, *, complete: bool) -> pd.DataFrame:
        frame = self._frame[list(columns)]
        if complete:
            frame = frame.dropna()
        if self.rows > rows:
            frame = frame.sample(frac=min(1.0, 1.2 * rows / self.rows), random_state=7)
        result = _plain_frame(self._client.compute(frame).result(), complete)
        return result.head(rows).reset_index(drop=True)

    def status(self) -> str:
        workers = len(self._client.scheduler_info().get("workers", {}))
        return f"Dask: {self.rows:,} rows on {workers} worker(s); here {resident_text()}"

    def close(self) -> None:
        """Disconnect from the cluster (and stop the local one)."""
        if self._cluster is not None or self._own_client:
            self._client.close()
        if self._cluster is not None:
            self._cluster.close()
