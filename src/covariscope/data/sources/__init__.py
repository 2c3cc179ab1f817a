"""Data sources: every pass the study makes over the rows, by one of three engines.

In memory (:class:`MemorySource`, the default), DuckDB over a file where it
lies (:class:`~covariscope.data.sources.duck.DuckSource`) and Dask over
Parquet on a cluster (:class:`~covariscope.data.sources.cluster.DaskSource`);
:func:`open_source` picks one.  The out-of-memory engines are imported only
when used.
"""

from covariscope.data.sources.base import ENGINES, DataSource, DesignRequest
from covariscope.data.sources.choose import choose_engine, estimated_memory, open_source
from covariscope.data.sources.coding import ColumnUse
from covariscope.data.sources.memory import MemorySource

__all__ = [
    "ENGINES",
    "ColumnUse",
    "DataSource",
    "DesignRequest",
    "MemorySource",
    "choose_engine",
    "estimated_memory",
    "open_source",
]
