"""Numeric design of the comparison models, built once from the analytic sample.

The design holds every column any comparison model may use, in one
C-contiguous float64 array (exposure, covariate columns in the order given,
outcome last), so the linear summary reads it in a single pass and every
model takes its columns as views.  Categorical terms become treatment
(reference-level) dummies named ``"column[level]"``; binary terms are coded
0/1 with the non-reference level as 1.
"""

from __future__ import annotations

import hashlib
import threading
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from covariscope.analysis.families import ModelFamily, family_of
from covariscope.analysis.rows import ColumnStats, RowReducer
from covariscope.analysis.spline_basis import spline_basis
from covariscope.errors import DataError

__all__ = [
    "TERM_TYPES",
    "Block",
    "CodedTerm",
    "ColumnStore",
    "Design",
    "DesignBuilder",
    "Outcomes",
    "TermCoding",
    "TermSpec",
    "check_exposure",
    "code_column",
    "code_term",
    "constant_message",
    "level_texts",
    "make_design",
    "outcome_values",
    "plan_term",
    "spline_columns",
]

#: Column types a term may have.
TERM_TYPES: tuple[str, ...] = ("continuous", "binary", "count", "categorical")


@dataclass(frozen=True)
class TermSpec:
    """How one column enters the models.

    ``reference`` is the reference level of a binary or categorical column
    (its dummy is left out); ``None`` takes the smallest level, or 0 for a
    0/1 column.
    """

    column: str
    type: str
    reference: Any = None
    #: a continuous term's natural cubic spline knots (3 to 7; rows in memory
    #: only); 0 enters it linearly
    knots: int = 0


@dataclass(frozen=True, eq=False)
class Block:
    """The design columns of one term: ``values`` is n × k (a view)."""

    node: str
    columns: tuple[str, ...]
    values: np.ndarray
    #: column positions in :attr:`Design.values`
    index: tuple[int, ...]
    #: a binary or categorical term's levels as text, the reference first, then
    #: one per column; empty for a continuous or count term
    levels: tuple[str, ...] = ()
    #: a spline term's raw values (its columns are the basis); None otherwise
    raw: np.ndarray | None = None

    @property
    def df(self) -> int:
        return len(self.columns)


class ColumnStore:
    """A column-major array with room for more columns, shared by the designs of one sample.

    A design is a prefix of the store's columns.  A wider design of the
    same rows (one more covariate bound) writes its new columns into the
    room after the last design's and is again a prefix, so the columns
    already written are neither copied nor read again.  A column, once
    handed out, is never written again: a design that other threads still
    read keeps its numbers.

    Examples
    --------
    >>> store = ColumnStore(3, 4)
    >>> store.take(0, 2), store.take(2, 1), store.take(2, 1), store.take(3, 2)
    (True, True, False, False)
    """

    def __init__(self, n: int, capacity: int) -> None:
        self.array: np.ndarray = np.empty((n, capacity), dtype=np.float64, order="F")
        self._used = 0
        self._lock = threading.Lock()

    @property
    def capacity(self) -> int:
        """Columns the store can hold."""
        return int(self.array.shape[1])

    def take(self, start: int, k: int) -> bool:
        """Hand out columns ``start … start + k − 1``: True only when they follow the
        last columns handed out and fit (so a design ending at ``start`` may grow)."""
        with self._lock:
            if start != self._used or start + k > self.capacity:
                return False
            self._used = start + k
            return True


@dataclass(frozen=True, eq=False)
class Design:
    """Numbers for every comparison model of one analytic sample.

    ``values`` is n × q: the exposure (column 0), the covariate columns of
    each block, and the outcome when there is one — last, except in a
    least-squares design grown from a narrower one (see
    :mod:`covariscope.analysis.design_growth`), whose later covariate columns
    follow the outcome: :attr:`outcome_index` says where it is, and each
    block's ``index`` where its columns are.  ``key`` names the
    specification; results are cached by it.
    """

    family: str
    exposure_node: str
    exposure_name: str
    values: np.ndarray
    blocks: Mapping[str, Block]
    y: np.ndarray | None
    offset: np.ndarray | None
    time: np.ndarray | None
    event: np.ndarray | None
    n: int
    key: str
    messages: tuple[str, ...] = ()
    #: the name of each column of :attr:`values`, by position (a grown design
    #: names its outcome's column ""; the others stop before the outcome)
    column_names: tuple[str, ...] = field(default=())
    #: covariate nodes whose column(s) take one value in every row
    constant: tuple[str, ...] = ()
    #: node id → column type (:data:`TERM_TYPES`) of the exposure and every covariate;
    #: an exposure coded as one contrast is ``binary``
    types: Mapping[str, str] = field(default_factory=dict)
    #: for a design whose rows stay with their source: the rows (``values`` is then
    #: 0 × q and ``y`` None) and their column statistics
    rows: RowReducer | None = None
    row_stats: ColumnStats | None = None
    #: design columns of the exposure: 1, or one per non-reference level of a
    #: multi-level categorical exposure (columns 0 … width − 1)
    exposure_width: int = 1
    #: a categorical exposure's levels as text, the reference first, then one
    #: per exposure column; empty for a continuous or binary exposure
    exposure_levels: tuple[str, ...] = ()
    #: the column of :attr:`values` that holds the outcome (None: the last one)
    outcome_at: int | None = None
    #: the array ``values`` is a prefix of, with room for more columns (None: no room)
    store: ColumnStore | None = None

    @property
    def outcome_index(self) -> int:
        """The column of :attr:`values` (and of the summary) that holds the outcome."""
        return int(self.values.shape[1] - 1) if self.outcome_at is None else self.outcome_at

    @property
    def exposure(self) -> np.ndarray:
        """The exposure's first design column (its only one unless it is multi-level)."""
        return self.values[:, 0]

    @property
    def exposure_index(self) -> tuple[int, ...]:
        """Design-column positions of the exposure block."""
        return tuple(range(self.exposure_width))

    @property
    def exposure_columns(self) -> tuple[str, ...]:
        """Design-column names of the exposure block (one per contrast)."""
        return tuple(self.column_names[: self.exposure_width])

    @property
    def multilevel(self) -> bool:
        """True for a categorical exposure with more than one contrast."""
        return self.exposure_width > 1

    def contrast_level(self, column: str) -> str:
        """The level an exposure column contrasts with the reference (``"current"``;
        the column itself for a one-column exposure)."""
        if not self.exposure_levels or column not in self.exposure_columns:
            return column
        return self.exposure_levels[self.exposure_columns.index(column) + 1]

    @property
    def rows_in_memory(self) -> bool:
        """True when :attr:`values` holds the rows (not a design of rows left at their source)."""
        return bool(self.values.shape[0] == self.n)

    @property
    def n_design_columns(self) -> int:
        """Exposure plus every covariate column (outcome excluded)."""
        return self.exposure_width + sum(b.df for b in self.blocks.values())


def constant_message(node: str, column: str) -> str:
    """The plain words for a covariate whose column never varies."""
    return (
        f"Column {column!r} (covariate {node}) has the same value in every row of the analytic "
        "sample, so it carries no information; unbind it or choose another column."
    )


def _numeric(frame: pd.DataFrame, column: str, what: str) -> np.ndarray:
    if column not in frame.columns:
        raise DataError(
            f"Column {column!r} ({what}) is not in the analytic sample; bind an existing column."
        )
    series = frame[column]
    if series.dtype == bool:
        series = series.astype(np.float64)
    values: np.ndarray = np.asarray(
        pd.to_numeric(series, errors="coerce").to_numpy(dtype=np.float64, na_value=np.nan)
    )
    bad = ~np.isfinite(values)
    if bad.any():
        example = series[bad].iloc[0]
        raise DataError(
            f"Column {column!r} ({what}) must be numeric, but holds {example!r}; "
            "recode it, or declare it binary or categorical."
        )
    return values


def _levels(values: Any, reference: Any, column: str) -> tuple[list[Any], Any]:
    return _sample_levels(list(pd.unique(values)), column, reference)


@dataclass(frozen=True)
class TermCoding:
    """How one term's design columns are made from its (coerced) column.

    ``levels`` is None for a numeric term (the column itself), empty for a
    one-level term (a constant column of ones), else the non-reference
    levels, one 0/1 column each.
    """

    column: str
    names: tuple[str, ...]
    levels: tuple[Any, ...] | None
    what: str
    #: the reference level of a binary or categorical term
    reference: Any = None


def plan_term(spec: TermSpec, uniques: Any, what: str) -> TermCoding:
    """The coding of one term, given the distinct values of its column in the analytic sample.

    The same rules whether the values are in memory or not (see :func:`make_design`).
    """
    if spec.type not in TERM_TYPES:
        raise DataError(
            f"Unknown column type {spec.type!r} for {spec.column!r}; use one of {', '.join(TERM_TYPES)}."
        )
    if spec.type in ("continuous", "count"):
        return TermCoding(spec.column, (spec.column,), None, what)
    levels, reference = _levels(uniques, spec.reference, spec.column)
    if len(levels) < 2 and what != "exposure":
        # One level: kept as a constant column, which the engine reports per model.
        return TermCoding(spec.column, (spec.column,), (), what)
    if len(levels) < 2:
        raise DataError(
            f"Column {spec.column!r} ({what}) has the same value in every row of the analytic "
            "sample, so it carries no information; unbind it or choose another column."
        )
    if spec.type == "binary" and len(levels) > 2:
        raise DataError(
            f"Column {spec.column!r} ({what}) is declared binary but has {len(levels)} levels; "
            "declare it categorical."
        )
    others = tuple(v for v in levels if v != reference)
    if spec.type == "binary" and len(others) == 1:
        return TermCoding(spec.column, (spec.column,), others, what, reference)
    return TermCoding(
        spec.column, tuple(f"{spec.column}[{v}]" for v in others), others, what, reference
    )


def _level_text(value: Any) -> str:
    """A level as text: a whole number read as a float (1.0) shows as 1."""
    if isinstance(value, float | np.floating) and float(value).is_integer():
        return str(int(value))
    return str(value)


def level_texts(coding: TermCoding) -> tuple[str, ...]:
    """A coded term's levels as text, the reference first; empty for a numeric or constant term."""
    if not coding.levels:
        return ()
    return (_level_text(coding.reference), *(_level_text(v) for v in coding.levels))


def code_term(frame: pd.DataFrame, coding: TermCoding) -> list[np.ndarray]:
    """The design columns of one term on some rows, by its :class:`TermCoding`."""
    if coding.levels is None:
        return [_numeric(frame, coding.column, coding.what)]
    if coding.column not in frame.columns:
        raise DataError(
            f"Column {coding.column!r} ({coding.what}) is not in the analytic sample; bind an existing column."
        )
    series = frame[coding.column]
    if not coding.levels:
        return [np.ones(len(series))]
    return [(series == v).to_numpy(dtype=np.float64) for v in coding.levels]


def spline_columns(
    values: np.ndarray, spec: TermSpec, what: str
) -> tuple[list[str], list[np.ndarray]]:
    """A continuous term's natural cubic spline basis columns (see
    :mod:`covariscope.analysis.spline_basis`)."""
    try:
        basis = spline_basis(values, spec.knots)
    except ValueError as exc:
        raise DataError(
            f"Column {spec.column!r} ({what}) cannot enter as a spline with {spec.knots} knots: "
            f"{exc}; enter it linearly or choose fewer knots."
        ) from exc
    names = [f"{spec.column}[spline {j + 1}]" for j in range(basis.shape[1])]
    return names, [basis[:, j] for j in range(basis.shape[1])]


def _coded(
    frame: pd.DataFrame, spec: TermSpec, what: str
) -> tuple[list[str], list[np.ndarray], tuple[str, ...]]:
    """Design columns of one term: names, vectors and level texts (reference first)."""
    if spec.type not in ("continuous", "count") and spec.column not in frame.columns:
        raise DataError(
            f"Column {spec.column!r} ({what}) is not in the analytic sample; bind an existing column."
        )
    uniques = frame[spec.column] if spec.type not in ("continuous", "count") else ()
    coding = plan_term(spec, uniques, what)
    return list(coding.names), code_term(frame, coding), level_texts(coding)


@dataclass(frozen=True, eq=False)
class CodedTerm:
    """The design columns of one term: their names and an n × k array."""

    names: tuple[str, ...]
    values: np.ndarray
    #: a binary or categorical term's levels as text, the reference first; else empty
    levels: tuple[str, ...] = ()
    #: a spline term's raw values (its columns are the basis); None otherwise
    raw: np.ndarray | None = None

    @property
    def nbytes(self) -> int:
        return int(self.values.nbytes)


def _sample_levels(uniques: list[Any], name: object, reference: Any) -> tuple[list[Any], Any]:
    levels = sorted(uniques, key=lambda v: (str(type(v)), v))
    if reference is None:
        reference = levels[0]
    elif reference not in levels:
        # A reference given as text for a numeric column (or the reverse) still matches.
        matches = [v for v in levels if str(v) == str(reference)]
        if not matches:
            raise DataError(
                f"Reference level {reference!r} of column {name!r} does not occur in the "
                f"analytic sample (levels: {', '.join(map(str, levels))}); choose one of these."
            )
        reference = matches[0]
    return levels, reference


def _dummies(codes: np.ndarray, positions: list[int]) -> np.ndarray:
    out = np.empty((len(codes), len(positions)), dtype=np.float64, order="F")
    for j, p in enumerate(positions):
        np.equal(codes, p, out=out[:, j], casting="unsafe")
    return out


def code_column(series: pd.Series, spec: TermSpec, what: str) -> CodedTerm:
    """The design columns of one term, from the analytic sample's rows of its column.

    Levels are found by factorizing the column (one pass, no Python call
    per row); the dummies compare the integer codes.

    Raises
    ------
    DataError
        An unknown type, a non-numeric value in a numeric term, a binary
        term with more than two levels, a reference that does not occur,
        or a constant exposure.
    """
    if spec.type not in TERM_TYPES:
        raise DataError(
            f"Unknown column type {spec.type!r} for {spec.column!r}; use one of {', '.join(TERM_TYPES)}."
        )
    n = len(series)
    if spec.type in ("continuous", "count"):
        return CodedTerm((spec.column,), _numeric_series(series, spec.column, what).reshape(n, 1))
    codes, uniques = pd.factorize(series, sort=False, use_na_sentinel=True)
    present = list(pd.Index(uniques).tolist())
    levels, reference = _sample_levels(present, series.name, spec.reference)
    if len(levels) < 2 and what != "exposure":
        # One level: kept as a constant column, which the engine reports per model.
        return CodedTerm((spec.column,), np.ones((n, 1)))
    if len(levels) < 2:
        raise DataError(
            f"Column {spec.column!r} ({what}) has the same value in every row of the analytic "
            "sample, so it carries no information; unbind it or choose another column."
        )
    if spec.type == "binary" and len(levels) > 2:
        raise DataError(
            f"Column {spec.column!r} ({what}) is declared binary but has {len(levels)} levels; "
            "declare it categorical."
        )
    position = {_key(v): i for i, v in enumerate(present)}
    others = [v for v in levels if v != reference]
    positions = [position[_key(v)] for v in others]
    texts = (_level_text(reference), *(_level_text(v) for v in others))
    if spec.type == "binary" and len(others) == 1:
        return CodedTerm((spec.column,), _dummies(codes, positions), texts)
    return CodedTerm(
        tuple(f"{spec.column}[{v}]" for v in others), _dummies(codes, positions), texts
    )


def _key(value: Any) -> tuple[str, Any]:
    # 1 and True, or 1 and 1.0, are one dictionary key but distinct levels here.
    return (str(type(value)), value)


def _column(frame: pd.DataFrame | Mapping[str, pd.Series], column: str, what: str) -> pd.Series:
    if column not in frame:
        raise DataError(
            f"Column {column!r} ({what}) is not in the analytic sample; bind an existing column."
        )
    return frame[column]


def _numeric_series(series: pd.Series, column: str, what: str) -> np.ndarray:
    """``_numeric`` on a column already taken out of its frame."""
    return _numeric(pd.DataFrame({column: series}, copy=False), column, what)


def make_design(
    frame: pd.DataFrame,
    *,
    exposure: TermSpec,
    covariates: Mapping[str, TermSpec],
    outcome: str | None,
    family: str,
    time: str | None = None,
    event: str | None = None,
    offset: str | None = None,
    exposure_node: str | None = None,
) -> Design:
    """Build the numeric design of every comparison model.

    Parameters
    ----------
    frame : DataFrame
        The analytic sample: complete cases on every column named here.
    exposure : TermSpec
        Continuous, count or binary; a two-level categorical is the contrast
        of its non-reference level; a categorical with more levels is a block
        of contrasts, one per non-reference level (design columns 0 … k − 1).
    covariates : mapping of node id → TermSpec
        Every bound covariate, in the order the blocks are to appear.
    outcome : str or None
        Outcome column (None for the Cox family, which uses ``time`` and ``event``).
    family : str
        One of :data:`~covariscope.analysis.families.FAMILY_CODES`.
    time, event, offset : str, optional
        Survival time and event indicator (Cox); log-scale offset (risk/rate ratio).
    exposure_node : str, optional
        Node id of the exposure, used in messages (defaults to its column).

    Raises
    ------
    DataError
        With one message naming the problem and the fix.

    Examples
    --------
    >>> frame = pd.DataFrame({"x": [0, 1, 0, 1, 1], "z": ["a", "b", "c", "a", "b"],
    ...                       "y": [1.0, 2.5, 0.5, 2.0, 3.0]})
    >>> d = make_design(frame, exposure=TermSpec("x", "binary"),
    ...                 covariates={"z": TermSpec("z", "categorical")}, outcome="y", family="linear")
    >>> d.blocks["z"].columns
    ('z[b]', 'z[c]')
    """
    family_of(family)  # an unknown family is refused before any work
    exposure_node = exposure_node or exposure.column
    n = len(frame)
    names, vectors, x_levels = _coded(frame, exposure, "exposure")
    if exposure.knots:
        raise DataError(
            f"The exposure {exposure.column!r} cannot enter as a spline; enter it linearly."
        )
    exposure_name = names[0]
    all_names = list(names)
    all_vectors = list(vectors)
    spans: dict[str, tuple[list[str], tuple[int, ...]]] = {}
    texts: dict[str, tuple[str, ...]] = {}
    raws: dict[str, np.ndarray] = {}
    for node, spec in covariates.items():
        cnames, cvecs, texts[node] = _coded(frame, spec, f"covariate {node}")
        if spec.knots and spec.type in ("continuous", "count"):
            raws[node] = cvecs[0]
            cnames, cvecs = spline_columns(cvecs[0], spec, f"covariate {node}")
        start = len(all_vectors)
        all_names += cnames
        all_vectors += cvecs
        spans[node] = (cnames, tuple(range(start, start + len(cvecs))))
    if n > 0 and all(np.all(v == v[0]) for v in vectors):
        raise DataError(
            f"The exposure column {exposure_name!r} has the same value in every row of the "
            "analytic sample, so no effect of it can be estimated; bind another column."
        )
    # A constant covariate fails only the models that hold it (DESIGN §2: the rest still run).
    constant = tuple(
        node
        for node, (_, idx) in spans.items()
        if n > 0 and any(np.all(all_vectors[j] == all_vectors[j][0]) for j in idx)
    )
    messages = tuple(
        f"{constant_message(node, covariates[node].column)} The models that hold it are not fitted."
        for node in constant
    )

    y, time_v, event_v, offset_v = _outcomes(
        family_of(family),
        lambda column, what: _numeric(frame, column, what),
        {"outcome": outcome, "time": time, "event": event, "offset": offset},
    )

    # Only the crude model must fit; larger models with too few rows are
    # reported one by one by the engine, and the rest still run.
    n_params = family_of(family).crude_params
    if n <= n_params:
        raise DataError(
            f"The analytic sample has {n} rows, too few even for the crude model "
            f"({n_params} parameters); at least {n_params + 1} rows are needed. Load more data "
            "or bind columns with fewer missing values."
        )

    q = len(all_vectors) + (1 if y is not None else 0)
    values = np.empty((n, q), dtype=np.float64)
    for j, vec in enumerate(all_vectors):
        values[:, j] = vec
    del all_vectors
    if y is not None:
        values[:, -1] = y
    blocks = {
        node: Block(
            node, tuple(cn), values[:, idx[0] : idx[-1] + 1], idx, texts[node], raws.get(node)
        )
        for node, (cn, idx) in spans.items()
    }
    digest = hashlib.sha256(values.data.cast("B"))
    digest.update(repr((family, exposure_node, all_names, list(covariates), outcome)).encode())
    for extra in (time_v, event_v, offset_v):
        if extra is not None:
            digest.update(np.ascontiguousarray(extra).data.cast("B"))
    return Design(
        family=family,
        exposure_node=exposure_node,
        exposure_name=exposure_name,
        values=values,
        blocks=blocks,
        y=values[:, -1] if y is not None else None,
        offset=offset_v,
        time=time_v,
        event=event_v,
        n=n,
        key=digest.hexdigest(),
        messages=messages,
        column_names=tuple(all_names),
        constant=constant,
        types={
            exposure_node: _exposure_type(exposure.type, len(vectors)),
            **{node: spec.type for node, spec in covariates.items()},
        },
        exposure_width=len(vectors),
        exposure_levels=x_levels if len(vectors) > 1 else (),
    )


def _exposure_type(kind: str, width: int) -> str:
    """An exposure coded as one contrast is ``binary``; a multi-level one ``categorical``."""
    if kind == "categorical":
        return "categorical" if width > 1 else "binary"
    return kind


@dataclass(frozen=True, eq=False)
class Outcomes:
    """The outcome side of a design: outcome, or time and event; an optional offset."""

    y: np.ndarray | None = None
    time: np.ndarray | None = None
    event: np.ndarray | None = None
    offset: np.ndarray | None = None

    @property
    def nbytes(self) -> int:
        return sum(
            int(v.nbytes) for v in (self.y, self.time, self.event, self.offset) if v is not None
        )


def outcome_values(
    frame: pd.DataFrame | Mapping[str, pd.Series], family: str, columns: Mapping[str, str | None]
) -> Outcomes:
    """Read and check the outcome columns a family needs (``columns``: outcome, time, event, offset).

    Raises
    ------
    DataError
        An unknown family, a missing or non-numeric column, or values the
        family cannot model (naming the fix).
    """
    fam = family_of(family)

    def read(column: str, what: str) -> np.ndarray:
        return _numeric_series(_column(frame, column, what), column, what)

    return Outcomes(*_outcomes(fam, read, columns))


def _outcomes(
    fam: ModelFamily,
    read: Callable[[str, str], np.ndarray],
    columns: Mapping[str, str | None],
) -> tuple[np.ndarray | None, np.ndarray | None, np.ndarray | None, np.ndarray | None]:
    """Outcome, time, event and offset values the family reads, checked by the family."""
    outcome, time, event, offset = (columns.get(k) for k in ("outcome", "time", "event", "offset"))
    y = time_v = event_v = offset_v = None
    if fam.survival:
        if time is None or event is None:
            raise DataError(
                f"The {fam.term.short} family needs a time column and an event column; choose both."
            )
        time_v = read(time, "survival time")
        fam.check_time(time_v, time)
        event_v = read(event, "event indicator")
        fam.check_event(event_v, event)
    else:
        if outcome is None:
            raise DataError(
                f"The {fam.code.value} family needs an outcome column; bind the outcome node."
            )
        y = read(outcome, "outcome")
        if len(y) > 0:
            fam.check_outcome(y, outcome)
    if offset is not None:
        offset_v = read(offset, "offset")
    return y, time_v, event_v, offset_v


def _is_constant(values: np.ndarray) -> bool:
    return bool(len(values)) and bool(np.all(values == values[0]))


def check_exposure(exposure: CodedTerm) -> None:
    """Refuse a constant exposure, naming the fix (a multi-level one is a block of contrasts)."""
    if all(_is_constant(exposure.values[:, j]) for j in range(exposure.values.shape[1])):
        raise DataError(
            f"The exposure column {exposure.names[0]!r} has the same value in every row of the "
            "analytic sample, so no effect of it can be estimated; bind another column."
        )


class DesignBuilder:
    """Fills a column-major design one coded term at a time, never holding two copies.

    ``width`` bounds the number of exposure and covariate columns (a
    categorical term may turn out narrower on the analytic sample than its
    levels in the file); the outcome column follows them.  ``spare`` more
    columns are left as room for a wider design of the same rows (see
    :class:`ColumnStore`; untouched, they take no memory).

    Examples
    --------
    >>> b = DesignBuilder(3, width=2, outcome=True)
    >>> b.add_exposure(CodedTerm(("x",), np.array([[0.0], [1.0], [1.0]])))
    >>> b.add("z", "z", CodedTerm(("z",), np.array([[1.0], [2.0], [4.0]])))
    >>> d = b.build(family="linear", exposure_node="x", outcomes=Outcomes(y=np.array([1.0, 2.0, 3.0])), key="k")
    >>> d.column_names, d.values.flags.f_contiguous
    (('x', 'z'), True)
    """

    def __init__(self, n: int, *, width: int, outcome: bool, spare: int = 0) -> None:
        self.n = n
        self._store = ColumnStore(n, width + int(outcome) + spare)
        self._values = self._store.array
        self._names: list[str] = []
        self._spans: dict[str, tuple[tuple[str, ...], tuple[int, ...]]] = {}
        self._columns: dict[str, str] = {}
        self._levels: dict[str, tuple[str, ...]] = {}
        self._raws: dict[str, np.ndarray | None] = {}
        self._exposure: CodedTerm | None = None

    def add_exposure(self, exposure: CodedTerm) -> None:
        """Write the exposure (first, once: one column, or one per contrast of a
        multi-level exposure); refuses a constant one."""
        check_exposure(exposure)
        k = exposure.values.shape[1]
        self._values[:, :k] = exposure.values
        self._names += exposure.names
        self._exposure = exposure

    def add(self, node: str, column: str, term: CodedTerm) -> None:
        """Write one covariate term after those already written."""
        start = len(self._names)
        k = len(term.names)
        self._values[:, start : start + k] = term.values
        self._names += term.names
        self._spans[node] = (term.names, tuple(range(start, start + k)))
        self._columns[node] = column
        self._levels[node] = term.levels
        self._raws[node] = term.raw

    def written(self, node: str | None = None) -> CodedTerm:
        """A term as written: a view of the design's columns (the exposure when
        ``node`` is None), so a caller can let go of its own copy."""
        if node is None:  # the exposure: every column before the first covariate's
            first = min((idx[0] for _, idx in self._spans.values()), default=len(self._names))
            return CodedTerm(tuple(self._names[:first]), self._values[:, :first])
        names, idx = self._spans[node]
        view = self._values[:, idx[0] : idx[-1] + 1]
        return CodedTerm(names, view, self._levels[node], self._raws[node])

    def build(self, *, family: str, exposure_node: str, outcomes: Outcomes, key: str) -> Design:
        """The design; raises :class:`DataError` when too few rows for the crude model."""
        n = self.n
        # Only the crude model must fit; larger models with too few rows are
        # reported one by one by the engine, and the rest still run.
        n_params = family_of(family).crude_params
        if n <= n_params:
            raise DataError(
                f"The analytic sample has {n} rows, too few even for the crude model "
                f"({n_params} parameters); at least {n_params + 1} rows are needed. Load more data "
                "or bind columns with fewer missing values."
            )
        q = len(self._names)
        y = outcomes.y
        # A prefix of a column-major array's columns is itself contiguous: no copy.
        values = self._values[:, : q + (1 if y is not None else 0)]
        if y is not None:
            values[:, q] = y
        self._store.take(0, values.shape[1])
        spans = self._spans
        constant = tuple(
            node for node, (_, idx) in spans.items() if any(_is_constant(values[:, j]) for j in idx)
        )
        return Design(
            family=family,
            exposure_node=exposure_node,
            exposure_name=self._names[0],
            values=values,
            blocks={
                node: Block(
                    node,
                    cn,
                    values[:, idx[0] : idx[-1] + 1],
                    idx,
                    self._levels[node],
                    self._raws.get(node),
                )
                for node, (cn, idx) in spans.items()
            },
            y=values[:, q] if y is not None else None,
            offset=outcomes.offset,
            time=outcomes.time,
            event=outcomes.event,
            n=n,
            key=key,
            messages=tuple(
                f"{constant_message(node, self._columns[node])} The models that hold it are not fitted."
                for node in constant
            ),
            column_names=tuple(self._names),
            constant=constant,
            exposure_width=self._width(),
            exposure_levels=self._exposure.levels if self._width() > 1 and self._exposure else (),
            store=self._store if self._store.capacity > values.shape[1] else None,
        )

    def _width(self) -> int:
        return 1 if self._exposure is None else int(self._exposure.values.shape[1])
