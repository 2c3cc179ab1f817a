"""The data-source interface: every pass the study makes over the rows.

A study reads its data through one :class:`DataSource`: column profiles
(types inferred on the rows, or on a random sample of them, with exact
counts of missing values and levels), the analytic sample (complete cases
on the columns the models read, with what was lost and why), and the design
of the comparison models, whose sums over rows the evidence engine asks for
(the cross-product matrix of the linear models, one weighted cross product
per Newton step of the others).  Three implementations give the same
numbers: in memory (:mod:`.memory`), DuckDB over a file where it lies
(:mod:`.duck`), and Dask over Parquet on a cluster (:mod:`.cluster`).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Protocol

from covariscope.analysis.design import Design, TermCoding, TermSpec, make_design
from covariscope.analysis.design_rows import make_row_design
from covariscope.analysis.rows import RowReducer
from covariscope.data.profile import ColumnProfile
from covariscope.data.sample import AnalyticSample
from covariscope.data.sources.coding import ColumnUse, coerce_frame
from covariscope.vocabulary import ENGINE_TERMS, Engine

__all__ = ["ENGINES", "DataSource", "DesignRequest", "ProgressFn", "frame_design", "row_design"]

#: The engines a study can read its data with: name → plain description.
ENGINES: dict[str, str] = {e.value: ENGINE_TERMS[e].label for e in Engine if e is not Engine.AUTO}

ProgressFn = Callable[[float, str], None]


@dataclass(frozen=True)
class DesignRequest:
    """What the models read: every column's coercion, the terms, the outcome columns."""

    uses: tuple[ColumnUse, ...]
    exposure: TermSpec
    covariates: Mapping[str, TermSpec]
    family: str
    exposure_node: str
    outcome: str | None
    time: str | None = None
    event: str | None = None
    offset: str | None = None


class DataSource(Protocol):
    """The rows of one data file, read by one engine."""

    #: a key of :data:`ENGINES`
    engine: str
    path: Path
    columns: tuple[str, ...]
    #: plain sentences for the user: the engine chosen, a conversion made
    notes: tuple[str, ...]

    @property
    def sha256(self) -> str:
        """Hex digest of the file's bytes."""

    @property
    def rows(self) -> int:
        """Rows in the file."""

    @property
    def value_labels(self) -> Mapping[str, Mapping[Any, str]]:
        """Column → {code: label} where the file carries them."""

    def status(self) -> str:
        """The engine in use and the memory it holds, in a few words."""

    def profiles(
        self,
        columns: tuple[str, ...],
        types: Mapping[str, str],
        references: Mapping[str, object],
        progress: ProgressFn | None = None,
    ) -> dict[str, ColumnProfile]:
        """Profiles of ``columns``, with the user's types and reference levels."""

    def analytic_sample(self, columns: tuple[str, ...]) -> AnalyticSample:
        """Complete cases on ``columns``; ``frame`` holds them, or a random sample of them."""

    def design(self, request: DesignRequest, messages: list[str]) -> Design:
        """The design of the comparison models on the complete cases of ``request``'s columns."""


def frame_design(frame: Any, request: DesignRequest) -> Design:
    """The design of rows held in memory (``frame``), coerced as every engine coerces them."""
    return make_design(
        coerce_frame(frame, request.uses),
        exposure=request.exposure,
        covariates=request.covariates,
        outcome=request.outcome,
        family=request.family,
        time=request.time,
        event=request.event,
        offset=request.offset,
        exposure_node=request.exposure_node,
    )


def row_design(
    rows: RowReducer,
    request: DesignRequest,
    exposure: TermCoding,
    covariates: Mapping[str, TermCoding],
    key: str,
) -> Design:
    """The design of rows that stay with their source, its terms coded as planned."""
    assert request.outcome is not None
    return make_row_design(
        rows,
        exposure=exposure,
        covariates=covariates,
        outcome=request.outcome,
        family=request.family,
        exposure_node=request.exposure_node,
        source_key=key,
    )
