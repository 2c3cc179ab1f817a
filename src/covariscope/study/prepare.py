"""The data stages of the pipeline: bindings → profiles → analytic sample → design.

Each stage returns a frozen result and is cached under exactly what it
reads: the data's digest and the columns, types and reference levels it
uses.  A column is read from the source only when its own key is new
(``missing`` and ``term`` count one pass over one column each), so binding
a new column reads that column and no other, and changing a column's type
or reference level recodes that column's terms only.  Every problem
becomes a plain message and the study falls back to the diagram alone.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace
from typing import Any, cast

import numpy as np
import pandas as pd

from covariscope.analysis.design import (
    TERM_TYPES,
    CodedTerm,
    Design,
    DesignBuilder,
    Outcomes,
    TermSpec,
    code_column,
    outcome_values,
    spline_columns,
)
from covariscope.analysis.design_growth import can_grow, grow_design
from covariscope.analysis.evidence import EvidenceCancelledError
from covariscope.analysis.families import family_of
from covariscope.analysis.linear import LinearSummary, centred_products, linear_summary
from covariscope.data.coerce import coerce_column
from covariscope.data.heap import release_freed_memory
from covariscope.data.profile import ColumnProfile, check_settings_columns, profile_column
from covariscope.data.sample import CompleteCases, complete_cases, with_complete_columns
from covariscope.model.project import Project
from covariscope.study.cache import StudyCache
from covariscope.study.degenerate import check_question_columns, usable_covariates
from covariscope.study.source import ColumnSource, TableSource

__all__ = [
    "Bindings",
    "Prepared",
    "Run",
    "column_profile",
    "prepare_design",
    "read_bindings",
    "sufficient_statistics",
    "table_profiles",
]

_OUTCOME_KEYS = ("outcome", "time", "event", "offset")


@dataclass
class Run:
    """What one run of the pipeline carries through its stages (not a result)."""

    cache: StudyCache
    trace: list[str]
    cancel: Callable[[], bool] | None = None

    def check(self) -> None:
        """Stop here when the run was cancelled (a newer edit came in)."""
        if self.cancel is not None and self.cancel():
            raise EvidenceCancelledError("The analysis was cancelled.")

    def get(self, stage: str, key: Any, compute: Callable[[], Any]) -> Any:
        """A cached stage result (see :meth:`StudyCache.get`)."""
        self.check()
        return self.cache.get(stage, key, compute, trace=self.trace)

    def get_many(
        self, stage: str, keys: Mapping[Any, Any], compute: Callable[[list[Any]], Mapping[Any, Any]]
    ) -> dict[Any, Any]:
        """Cached results per item, the absent ones computed in one call
        (see :meth:`StudyCache.get_many`)."""
        self.check()
        return self.cache.get_many(stage, keys, compute, trace=self.trace)


@dataclass(frozen=True)
class Bindings:
    """Which columns the models read, from the project alone (and the column names).

    ``ready`` is False when the models cannot run (an unbound exposure or
    outcome, a missing column); ``messages`` then says why.
    """

    ready: bool
    exposure_column: str
    outcome_columns: tuple[tuple[str, str | None], ...]
    covariates: tuple[tuple[str, str], ...]
    messages: tuple[str, ...]

    @property
    def outcomes(self) -> dict[str, str | None]:
        """Outcome, time, event and offset columns (None where unused)."""
        return dict(self.outcome_columns)


def outcome_columns(
    project: Project, family: str, outcome_column: str | None
) -> dict[str, str | None]:
    """The outcome, time, event and offset columns the family reads (a Cox model has no outcome column)."""
    chosen = dict(project.analysis.family_columns.get(family, {}))
    cols: dict[str, str | None] = {
        "outcome": chosen.get("outcome", outcome_column),
        "time": chosen.get("time"),
        "event": chosen.get("event"),
        "offset": chosen.get("offset"),
    }
    if family_of(family).survival:
        cols["outcome"] = None
    return cols


def _not_ready(messages: list[str]) -> Bindings:
    return Bindings(False, "", (), (), tuple(messages))


def question_columns(
    project: Project, family: str, exposure: str, outcome: str, messages: list[str]
) -> tuple[str, dict[str, str | None]] | None:
    """The exposure's column and the family's outcome columns, or None with a
    message in ``messages`` naming what is not bound (an offset outside the
    rate-ratio family is dropped with a message)."""
    diagram = project.diagram
    x_col = diagram.node(exposure).column
    if x_col is None:
        messages.append(
            f'The exposure "{diagram.node(exposure).label}" is not bound to a data column, so only the diagram is analysed; bind it to a column.'
        )
        return None
    fam = family_of(family)
    cols = outcome_columns(project, family, diagram.node(outcome).column)
    if cols["offset"] is not None and not fam.takes_offset:
        messages.append(
            f'Only the risk/rate-ratio family takes an offset; the offset column "{cols["offset"]}" '
            f"set for the {family} family is not used. Remove it from the family's columns, or "
            "choose the risk/rate-ratio family for counts over time."
        )
        cols["offset"] = None
    if fam.survival and (cols["time"] is None or cols["event"] is None):
        messages.append(
            f"The {fam.term.short} family needs a time and an event column; set them for the "
            f"project (analysis.family_columns.{fam.code.value}), or choose another family. "
            "Only the diagram is analysed."
        )
        return None
    if not fam.survival and cols["outcome"] is None:
        messages.append(
            f'The outcome "{diagram.node(outcome).label}" is not bound to a data column, so only the diagram is analysed; bind it to a column.'
        )
        return None
    return x_col, cols


def bound_covariates(
    project: Project, has_column: Callable[[str], bool], messages: list[str]
) -> list[tuple[str, str]]:
    """(node id, column) of every measured covariate whose column the data
    hold; a column the data lack is named in ``messages`` and left out."""
    bound: list[tuple[str, str]] = []
    for node in project.diagram.covariates:
        if not node.measured or node.column is None:
            continue
        if not has_column(node.column):
            messages.append(
                f'"{node.label}" is bound to the column "{node.column}", which is not in the data; it is left out.'
            )
            continue
        bound.append((node.id, node.column))
    return bound


def read_bindings(
    project: Project, family: str, exposure: str, outcome: str, source: ColumnSource
) -> Bindings:
    """The bound columns of a project for a family, with plain messages for what is missing."""
    messages: list[str] = []
    question = question_columns(project, family, exposure, outcome, messages)
    if question is None:
        return _not_ready(messages)
    x_col, cols = question
    bound = bound_covariates(project, source.has_column, messages)
    outcome_cols = [c for c in cols.values() if c]
    needed = dict.fromkeys([*outcome_cols, x_col, *(c for _, c in bound)])
    missing_cols = [c for c in needed if not source.has_column(c)]
    if missing_cols:
        messages.append(
            f"The data have no column {', '.join(map(repr, missing_cols))}; only the diagram is analysed. "
            "Bind existing columns."
        )
        return _not_ready(messages)
    return Bindings(True, x_col, tuple(cols.items()), tuple(bound), tuple(messages))


@dataclass(frozen=True)
class DesignSpec:
    """What a design is built from; two designs that differ only in ``terms`` share their other models."""

    rows: tuple[Any, ...]
    family: str
    exposure: str
    exposure_spec: tuple[Any, ...]
    outcome_spec: tuple[Any, ...]
    terms: tuple[tuple[Any, ...], ...]

    def shares_models_with(self, other: DesignSpec) -> bool:
        """Same rows, family, exposure and outcome: fits of common terms carry over."""
        return (self.rows, self.family, self.exposure, self.exposure_spec, self.outcome_spec) == (
            other.rows,
            other.family,
            other.exposure,
            other.exposure_spec,
            other.outcome_spec,
        )

    def common_terms(self, other: DesignSpec) -> frozenset[str]:
        """Covariates bound to the same column, type and reference level in both."""
        return frozenset(t[0] for t in set(self.terms) & set(other.terms))


@dataclass(frozen=True, eq=False)
class Prepared:
    """The data stages' result: the sample, the design and which covariates it holds."""

    sample: CompleteCases
    design: Design
    bound: tuple[str, ...]
    messages: tuple[str, ...]
    #: (sample key, one name per design column: its column's spec and level)
    identity: tuple[Any, ...]
    #: What the design was built from: rows, family, exposure and outcome specs, term specs
    spec: DesignSpec


def _profile(run: Run, source: ColumnSource, column: str, project: Project) -> ColumnProfile:
    a = project.analysis
    return column_profile(
        run.cache,
        source,
        column,
        a.column_types.get(column),
        a.reference_levels.get(column),
        run.trace,
        run.check,
    )


def column_profile(
    cache: StudyCache,
    source: ColumnSource,
    column: str,
    kind: str | None,
    reference: Any,
    trace: list[str] | None = None,
    check: Callable[[], None] | None = None,
) -> ColumnProfile:
    """One column's profile through the cache (the pipeline and the data panel share it)."""
    if check is not None:
        check()
    profile: ColumnProfile = cache.get(
        "profile",
        (source.digest, column, kind, _hashable(reference)),
        lambda: profile_column(
            source.column(column),
            override_type=kind,
            reference=reference,
            value_labels=source.value_labels(column),
        ),
        trace=trace,
    )
    return profile


def table_profiles(
    cache: StudyCache,
    source: TableSource,
    types: Mapping[str, str],
    references: Mapping[str, Any],
    cancel: Callable[[], bool] | None = None,
) -> dict[str, ColumnProfile]:
    """Every column's profile, each from the cache when its settings did not change.

    Raises
    ------
    DataError
        A setting names a column the data lack, or a type or reference
        level does not fit its column.
    EvidenceCancelledError
        ``cancel`` said stop (a newer request came in).
    """
    names = source.column_names
    check_settings_columns(names, types, references)
    run = Run(cache, [], cancel)
    return {
        c: column_profile(cache, source, c, types.get(c), references.get(c), None, run.check)
        for c in names
    }


def _hashable(value: Any) -> Any:
    try:
        hash(value)
    except TypeError:
        return repr(value)
    return value


def _sample(
    run: Run,
    source: ColumnSource,
    columns: tuple[str, ...],
    profiles: Mapping[str, ColumnProfile],
) -> CompleteCases:
    def compute() -> CompleteCases:
        wider = _wider_sample(run, source, columns, profiles)
        if wider is not None:
            return wider
        masks = {c: _missing(run, source, c) for c in columns}
        return complete_cases(masks, source.rows)

    sample: CompleteCases = run.get("sample", (source.digest, columns), compute)
    return sample


def _wider_sample(
    run: Run,
    source: ColumnSource,
    columns: tuple[str, ...],
    profiles: Mapping[str, ColumnProfile],
) -> CompleteCases | None:
    """An earlier sample whose columns differ from ``columns`` only by columns
    that miss no value (a new one's profile says so): the same rows, with no
    pass over any mask."""
    chosen = set(columns)
    for found, earlier in reversed(run.cache.entries("sample")):
        digest, cols = cast(tuple[str, tuple[str, ...]], found)
        if digest != source.digest:
            continue
        added, dropped = chosen - set(cols), set(cols) - chosen
        if all(profiles[c].missing == 0 for c in added) and not any(
            earlier.missing_by_column[c] for c in dropped
        ):
            return with_complete_columns(earlier, columns)
    return None


def _missing(run: Run, source: ColumnSource, column: str) -> np.ndarray:
    mask: np.ndarray = run.get("missing", (source.digest, column), lambda: source.missing(column))
    return mask


def rows_key(source: ColumnSource, sample: CompleteCases) -> tuple[Any, ...]:
    """Names the sample's rows: the data and the chosen columns that miss any value.

    Columns without a missing value drop no row, so binding one keeps the
    rows (and every coded column of them) as they were.
    """
    return (source.digest, tuple(sorted(c for c, n in sample.missing_by_column.items() if n)))


def _rows(source: ColumnSource, sample: CompleteCases, column: str) -> pd.Series:
    series = source.column(column)
    return series if sample.complete else series[sample.keep]


def _spec_of(profile: ColumnProfile, knots: int = 0) -> tuple[str, Any]:
    # A numeric term has no reference level: its slot holds its spline knots (0: linear).
    if profile.type in ("continuous", "count"):
        return profile.type, int(knots)
    return profile.type, _hashable(profile.reference)


def _code(
    source: ColumnSource, sample: CompleteCases, column: str, kind: str, ref: Any, what: str
) -> CodedTerm:
    series = _rows(source, sample, column)
    if kind in ("continuous", "count"):
        coded = code_column(coerce_column(series, kind), TermSpec(column, kind), what)
        if not ref:
            return coded
        raw = coded.values[:, 0]
        names, vectors = spline_columns(raw, TermSpec(column, kind, knots=int(ref)), what)
        return CodedTerm(tuple(names), np.column_stack(vectors), raw=raw)
    if kind == "binary":
        coded = coerce_column(series, "binary", ref)
        return code_column(coded, TermSpec(column, "binary", 0.0), what)
    return code_column(series, TermSpec(column, "categorical", ref), what)


def _outcomes(
    source: ColumnSource,
    sample: CompleteCases,
    family: str,
    cols: Mapping[str, str | None],
    profiles: Mapping[str, ColumnProfile],
) -> Outcomes:
    data: dict[str, pd.Series] = {}
    for key, col in cols.items():
        if col is None or col in data:
            continue
        series = _rows(source, sample, col)
        kind = profiles[col].type
        if key in ("outcome", "event") and kind == "binary":
            series = coerce_column(series, "binary", profiles[col].reference)
        elif key in ("time", "offset") or (key == "outcome" and kind in ("continuous", "count")):
            series = coerce_column(series, "continuous")
        data[col] = series
    return outcome_values(data, family, cols)


def prepare_design(
    run: Run,
    source: ColumnSource,
    project: Project,
    family: str,
    exposure: str,
    bindings: Bindings,
) -> Prepared:
    """Profiles, analytic sample and design for the bound columns, each from the cache when it can.

    Raises
    ------
    DataError
        A column's type or reference cannot be used, no row is complete, or
        the design cannot be built; the study then analyses the diagram alone.
    """
    messages: list[str] = []
    cols = bindings.outcomes
    outcome_cols = [c for c in cols.values() if c]
    needed = list(
        dict.fromkeys(
            [*outcome_cols, bindings.exposure_column, *(c for _, c in bindings.covariates)]
        )
    )
    profiles = {c: _profile(run, source, c, project) for c in needed}
    diagram = project.diagram
    x_col = bindings.exposure_column
    check_question_columns(diagram, exposure, x_col, cols, profiles, family)
    taken = {x_col: "exposure"} | {c: k for k, c in cols.items() if c}
    kept = set(
        usable_covariates(diagram, [n for n, _ in bindings.covariates], taken, profiles, messages)
    )
    usable: list[tuple[str, str]] = []
    labels = {n.id: n.label for n in diagram.nodes}
    for node, column in bindings.covariates:
        if node not in kept:
            continue
        kind = profiles[column].type
        if kind not in TERM_TYPES:
            messages.append(
                f'"{labels[node]}" is bound to "{column}", a {kind} column, which a model cannot use; '
                "it is left out (set its type if this is wrong)."
            )
            continue
        usable.append((node, column))
    columns = tuple(
        dict.fromkeys([*outcome_cols, bindings.exposure_column, *(c for _, c in usable)])
    )
    sample = _sample(run, source, columns, profiles)
    knots = {c: k for c, k in project.analysis.spline_knots.items() if k}
    spec = _spec(source, sample, family, exposure, bindings, usable, profiles, knots)
    design = _design(run, source, sample, spec, bindings, usable, profiles, knots)
    return Prepared(
        sample,
        design,
        tuple(n for n, _ in usable),
        tuple(messages),
        _identity(source, sample, design, bindings, usable, profiles, knots),
        spec,
    )


def _spec(
    source: ColumnSource,
    sample: CompleteCases,
    family: str,
    exposure: str,
    bindings: Bindings,
    usable: list[tuple[str, str]],
    profiles: Mapping[str, ColumnProfile],
    knots: Mapping[str, int],
) -> DesignSpec:
    x_col = bindings.exposure_column
    return DesignSpec(
        rows=rows_key(source, sample),
        family=family,
        exposure=exposure,
        exposure_spec=(x_col, *_spec_of(profiles[x_col])),
        outcome_spec=tuple(
            (k, c, profiles[c].type if c else None) for k, c in bindings.outcome_columns
        ),
        terms=tuple(
            (node, col, *_spec_of(profiles[col], knots.get(col, 0))) for node, col in usable
        ),
    )


def _identity(
    source: ColumnSource,
    sample: CompleteCases,
    design: Design,
    bindings: Bindings,
    usable: list[tuple[str, str]],
    profiles: Mapping[str, ColumnProfile],
    knots: Mapping[str, int],
) -> tuple[Any, ...]:
    # One name per column of the design, by position (a grown design's outcome
    # comes before the covariates bound after it).
    x_col = bindings.exposure_column
    x_spec = ("exposure", x_col, *_spec_of(profiles[x_col]))
    ids: list[Any] = [None] * design.values.shape[1]
    for j, name in zip(design.exposure_index, design.exposure_columns, strict=True):
        ids[j] = (x_spec, name)
    for node, col in usable:
        spec = (col, *_spec_of(profiles[col], knots.get(col, 0)))
        block = design.blocks[node]
        for j, name in zip(block.index, block.columns, strict=True):
            ids[j] = (spec, name)
    if design.y is not None:
        y_spec = tuple((k, c, profiles[c].type if c else None) for k, c in bindings.outcome_columns)
        ids[design.outcome_index] = (("outcome", y_spec), "")
    return (rows_key(source, sample), tuple(ids))


def _design(
    run: Run,
    source: ColumnSource,
    sample: CompleteCases,
    spec: DesignSpec,
    bindings: Bindings,
    usable: list[tuple[str, str]],
    profiles: Mapping[str, ColumnProfile],
    knots: Mapping[str, int],
) -> Design:
    base = spec.rows
    family, exposure = spec.family, spec.exposure
    x_spec, specs, y_spec = spec.exposure_spec, spec.terms, spec.outcome_spec
    cols = bindings.outcomes
    key = (base, family, exposure, x_spec, specs, y_spec)

    def term(col: str, kind: str, ref: Any, what: str) -> CodedTerm:
        t: CodedTerm = run.get(
            "term", (base, col, kind, ref), lambda: _code(source, sample, col, kind, ref, what)
        )
        return t

    def build() -> Design:
        digest = hashlib.sha256(repr(key).encode()).hexdigest()
        grown = _grown(run, key, spec, term, digest)
        if grown is not None:
            return grown
        outcomes: Outcomes = run.get(
            "outcomes",
            (base, family, y_spec),
            lambda: _outcomes(source, sample, family, cols, profiles),
        )
        x_col, x_kind, x_ref = x_spec
        x_term = term(x_col, x_kind, x_ref, "exposure")
        width = _width(profiles[x_col]) + sum(
            _width(profiles[col], knots.get(col, 0)) for _, col in usable
        )
        # Room for a few more columns: binding a covariate grows the design in place.
        spare = max(_SPARE, width // 2) if family_of(family).least_squares else 0
        builder = DesignBuilder(
            sample.used, width=width, outcome=outcomes.y is not None, spare=spare
        )
        builder.add_exposure(x_term)
        # Each cached term becomes a view of the design as soon as it is written:
        # one copy of the numbers, even while the design is being filled.
        x_view = replace(x_term, values=builder.written().values)
        run.cache.replace("term", (base, *x_spec), x_view)
        del x_term
        for node, col, kind, ref in specs:
            builder.add(node, col, term(col, kind, ref, f"covariate {node}"))
            run.cache.replace("term", (base, col, kind, ref), builder.written(node))
        built = builder.build(family=family, exposure_node=exposure, outcomes=outcomes, key=digest)
        if built.y is not None:  # one copy of the outcome too: the design's column
            run.cache.replace("outcomes", (base, family, y_spec), replace(outcomes, y=built.y))
        for _ in range(built.values.shape[1]):
            run.cache.record("column", False)  # every column written anew
        release_freed_memory()  # the coding's temporaries, before the models' own
        return built

    design: Design = run.get("design", key, build)
    return design


#: spare columns a least-squares design keeps for covariates bound later (at least)
_SPARE = 8


def _grown(
    run: Run,
    key: tuple[Any, ...],
    spec: DesignSpec,
    term: Callable[[str, str, Any, str], CodedTerm],
    digest: str,
) -> Design | None:
    """The design grown in place from the widest earlier design of the same rows
    whose terms it holds (one more covariate bound): only the new terms are
    coded and written.  None when there is no such design or it has no room."""
    specs = spec.terms
    wanted = set(specs)
    best: tuple[int, Design] | None = None
    for found, old in run.cache.entries("design"):
        old_key = cast(tuple[Any, ...], found)  # the keys _design gives
        if old_key[:4] != key[:4] or old_key[5] != key[5] or not set(old_key[4]) < wanted:
            continue
        if best is None or len(old_key[4]) > best[0]:
            best = (len(old_key[4]), old)
    if best is None:
        return None
    old_design = best[1]
    fresh = [t for t in specs if t[0] not in old_design.blocks]
    if not fresh or not can_grow(old_design, len(fresh)):
        return None
    added = {
        node: (col, term(col, kind, ref, f"covariate {node}")) for node, col, kind, ref in fresh
    }
    grown = grow_design(old_design, [t[0] for t in specs], added, digest)
    if grown is not None:
        # the columns kept in place (hits) and the only ones written (misses)
        for j in range(grown.values.shape[1]):
            run.cache.record("column", j < old_design.values.shape[1])
        for node, col, kind, ref in fresh:
            block = grown.blocks[node]
            view = CodedTerm(block.columns, block.values, block.levels, block.raw)
            run.cache.replace("term", (spec.rows, col, kind, ref), view)
    return grown


def _width(profile: ColumnProfile, knots: int = 0) -> int:
    # The sample holds no level the file lacks: the file's levels bound the dummies.
    if knots and profile.type in ("continuous", "count"):
        return max(1, knots - 1) + 2  # bounds the spline basis's columns
    if profile.type == "categorical":
        return max(1, len(profile.levels) - 1)
    return 1


# -- sufficient statistics ------------------------------------------------------------


def sufficient_statistics(run: Run, design: Design, identity: tuple[Any, ...]) -> LinearSummary:
    """Means and co-moments of the design's columns, extended from an earlier design's.

    ``identity`` names each design column (column, type, reference, level);
    a summary of an earlier design of the same sample lends every entry
    whose two columns it shares, so a new column costs one pass over the
    rows for its own cross-products, not the whole matrix.
    """
    sample_key = identity[0]

    def compute() -> tuple[tuple[Any, ...], LinearSummary]:
        earlier = [v for _, v in run.cache.entries("summary") if v[0][0] == sample_key]
        if earlier:
            return identity, _extend(design, identity, *earlier[-1])
        run.trace.append("rows")
        run.cache.record("rows", False)
        return identity, linear_summary(design.values)

    entry: tuple[tuple[Any, ...], LinearSummary] = run.get("summary", (design.key,), compute)
    return entry[1]


def _extend(
    design: Design, identity: tuple[Any, ...], old_identity: tuple[Any, ...], old: LinearSummary
) -> LinearSummary:
    ids = identity[1]
    where = {c: i for i, c in enumerate(old_identity[1])}
    q = len(ids)
    mean = np.empty(q)
    comoment = np.empty((q, q))
    known = [j for j, c in enumerate(ids) if c in where]
    fresh = [j for j, c in enumerate(ids) if c not in where]
    pos = [where[ids[j]] for j in known]
    mean[known] = old.mean[pos]
    comoment[np.ix_(known, known)] = old.comoment[np.ix_(pos, pos)]
    if fresh:
        # one pass crosses the new columns with the whole design, as it lies
        values = design.values
        centred = values[:, fresh]  # a copy: centred where it lies
        mean[fresh] = centred.mean(axis=0)
        centred -= mean[fresh]
        sd = np.full(q, np.inf)  # the new columns' own squares are replaced below
        sd[known] = np.sqrt(np.diag(old.comoment)[pos] / max(design.n, 1))
        rows = centred_products(values, mean, sd, centred)
        rows[fresh] = np.dot(centred.T, centred)
        comoment[:, fresh] = rows
        comoment[fresh, :] = rows.T
    return LinearSummary(design.n, mean, comoment)
