"""Covariscope data layer: load a study data set, profile its columns, and
draw the analytic sample (pure Python, no Qt)."""

from covariscope.data.coerce import binary_coding, coerce_column
from covariscope.data.loading import (
    FORMAT_LABELS,
    LoadCancelledError,
    LoadedTable,
    file_sha256,
    load_table,
)
from covariscope.data.profile import COLUMN_TYPES, ColumnProfile, profile_column, profile_table
from covariscope.data.sample import AnalyticSample, analytic_sample

__all__ = [
    "COLUMN_TYPES",
    "FORMAT_LABELS",
    "AnalyticSample",
    "ColumnProfile",
    "LoadCancelledError",
    "LoadedTable",
    "analytic_sample",
    "binary_coding",
    "coerce_column",
    "file_sha256",
    "load_table",
    "profile_column",
    "profile_table",
]
