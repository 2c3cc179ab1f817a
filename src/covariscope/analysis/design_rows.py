"""The design of the comparison models when the rows stay with their source.

:func:`make_row_design` checks what :func:`~covariscope.analysis.design.make_design`
checks — an exposure that varies, an outcome that suits the family,
constant covariates, enough rows — from one reduction over the rows (their
means, co-moments and ranges), and returns a
:class:`~covariscope.analysis.design.Design` whose ``values`` are empty and
whose ``rows`` the evidence engine reads for every sum it needs.
"""

from __future__ import annotations

import hashlib
from collections.abc import Mapping

import numpy as np

from covariscope.analysis.design import (
    Block,
    Design,
    TermCoding,
    constant_message,
    level_texts,
)
from covariscope.analysis.families import FAMILY_CODES, family_of
from covariscope.analysis.rows import RowReducer, reduce_column_stats
from covariscope.errors import DataError

__all__ = ["make_row_design"]


def _spans(
    exposure: TermCoding, covariates: Mapping[str, TermCoding]
) -> tuple[list[str], dict[str, tuple[tuple[str, ...], tuple[int, ...]]]]:
    # A multi-level exposure is a block of contrasts, columns 0 … k − 1.
    names = list(exposure.names)
    spans: dict[str, tuple[tuple[str, ...], tuple[int, ...]]] = {}
    for node, coding in covariates.items():
        start = len(names)
        names += coding.names
        spans[node] = (coding.names, tuple(range(start, start + len(coding.names))))
    return names, spans


def make_row_design(
    rows: RowReducer,
    *,
    exposure: TermCoding,
    covariates: Mapping[str, TermCoding],
    outcome: str,
    family: str,
    exposure_node: str,
    source_key: str,
) -> Design:
    """Check and describe the design of rows that stay with their source.

    Parameters
    ----------
    rows : RowReducer
        The coded rows: exposure, the covariate columns in the order of
        ``covariates``, the outcome last; the offset beside them.
    exposure, covariates : TermCoding
        How each term's columns were coded (see
        :func:`~covariscope.analysis.design.plan_term`).
    outcome : str
        The outcome column (the Cox family needs the rows in memory).
    family : str
        A family whose models fit from row sums (:attr:`ModelFamily.row_sums`).
    source_key : str
        Identifies the rows (the file and the filter); with the specification
        it makes the design's cache key.

    Raises
    ------
    DataError
        With one message naming the problem and the fix.
    """
    if family not in FAMILY_CODES or not family_of(family).row_sums:
        raise DataError(
            f"The {family} family cannot be fitted from row sums; its rows must be in memory."
        )
    names, spans = _spans(exposure, covariates)
    stats = reduce_column_stats(rows)
    n = stats.summary.n
    infinite = [
        names[j] for j in range(len(names)) if not np.isfinite([stats.low[j], stats.high[j]]).all()
    ]
    if n > 0 and (infinite or not np.isfinite([stats.low[-1], stats.high[-1]]).all()):
        shown = infinite[0] if infinite else outcome
        raise DataError(
            f"Column {shown!r} holds infinite values; recode them (or mark them missing) and "
            "load the data again."
        )
    flat = stats.low == stats.high
    if n > 0 and flat[: len(exposure.names)].all():
        raise DataError(
            f"The exposure column {names[0]!r} has the same value in every row of the "
            "analytic sample, so no effect of it can be estimated; bind another column."
        )
    constant = tuple(node for node, (_, idx) in spans.items() if n > 0 and flat[list(idx)].any())
    messages = tuple(
        f"{constant_message(node, covariates[node].column)} The models that hold it are not fitted."
        for node in constant
    )
    if n > 0:
        family_of(family).check_outcome_sums(
            float(stats.low[-1]), float(stats.high[-1]), stats.outcome_not_binary, outcome
        )
    if n <= 2:
        raise DataError(
            f"The analytic sample has {n} rows, too few even for the crude model "
            "(2 parameters); at least 3 rows are needed. Load more data "
            "or bind columns with fewer missing values."
        )
    values = np.empty((0, len(names) + 1))
    blocks = {
        node: Block(node, cn, values[:, idx[0] : idx[-1] + 1], idx, level_texts(covariates[node]))
        for node, (cn, idx) in spans.items()
    }
    spec = repr((family, exposure_node, names, list(covariates), outcome, source_key))
    return Design(
        family=family,
        exposure_node=exposure_node,
        exposure_name=names[0],
        values=values,
        blocks=blocks,
        y=None,
        offset=None,
        time=None,
        event=None,
        n=n,
        key=hashlib.sha256(spec.encode()).hexdigest(),
        messages=messages,
        column_names=tuple(names),
        constant=constant,
        rows=rows,
        row_stats=stats,
        types={exposure_node: _coded_type(exposure)}
        | {node: _coded_type(c) for node, c in covariates.items()},
        exposure_width=len(exposure.names),
        exposure_levels=level_texts(exposure) if len(exposure.names) > 1 else (),
    )


def _coded_type(coding: TermCoding) -> str:
    """The column type a coding implies (a numeric column is read as continuous)."""
    if coding.levels is None:
        return "continuous"
    return "binary" if len(coding.levels) <= 1 else "categorical"
