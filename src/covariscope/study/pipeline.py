"""The study: one project, its data and every analysis, as a chain of cached stages.

:func:`run_study` turns a project (diagram, data reference, settings) into
the answer the analyst reads.  It is a short composition of pure stages,
each cached under exactly what it reads (see :mod:`covariscope.study.cache`):

data source → bindings → profiles → analytic sample → design → sufficient
statistics → fits and evidence → graph criteria → proposal review →
collinear groups, recommended set and verdicts → collinearity pictures,
effect modification and the residual-confounding check → result.

The GUI, the command line and the report call it; none of them recomputes a
statistic.  Without data (no data file, or none bound) the result is
graph-only: the verdicts come from the diagram alone and say so, and the
sample, evidence, estimates and E-value are None.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Hashable, Sequence
from dataclasses import dataclass, replace
from typing import Any, TypeVar

from covariscope.analysis.claim_tests import ClaimOutcome, DiagramChecks
from covariscope.analysis.claims import Claim
from covariscope.analysis.evidence import (
    EvidenceEngine,
    EvidenceTable,
    compute_evidence,
)
from covariscope.analysis.families import family_of
from covariscope.analysis.fits import effect_measure
from covariscope.analysis.graph import DiagramAnalysis
from covariscope.analysis.linear import LinearSummary
from covariscope.analysis.model_terms import model_terms
from covariscope.analysis.verdicts import LABELS, VERDICTS, Verdict
from covariscope.data.loading import LoadedTable
from covariscope.data.sample import AnalyticSample, CompleteCases, summary_text
from covariscope.data.sources.base import DataSource
from covariscope.data.sources.choose import open_source
from covariscope.data.sources.memory import MemorySource
from covariscope.errors import DataError, DesignError
from covariscope.model.project import Project
from covariscope.study.cache import StudyCache
from covariscope.study.checks import check_diagram, checks_key, with_failed_claims
from covariscope.study.criteria import GraphCriteria, graph_criteria, proposal_review, structure_key
from covariscope.study.decide import Decisions, Question, decide, set_names
from covariscope.study.degenerate import check_crude_fit
from covariscope.study.prepare import (
    DesignSpec,
    Prepared,
    Run,
    prepare_design,
    read_bindings,
    sufficient_statistics,
)
from covariscope.study.result import ESTIMATE_KEYS, Progress, StudyResult
from covariscope.study.rows_read import (
    CHECKS_SPAN,
    MODIFICATION_SPAN,
    RowsRead,
    fit_reporter,
    reads_key,
    rows_read,
)
from covariscope.study.source import ColumnSource, source_of
from covariscope.study.whole_source import prepare_evidence
from covariscope.vocabulary import CAUTION_BRIEF, DEFAULT_THRESHOLDS

__all__ = [
    "ESTIMATE_KEYS",
    "LABELS",
    "VERDICTS",
    "StudyResult",
    "Verdict",
    "run_study",
]


def question(project: Project, family: str | None) -> Question:
    """What the last stages read of the project besides the diagram's structure."""
    diagram = project.diagram
    exposure, outcome = diagram.require_question()
    family = family or project.analysis.family
    thresholds = dict(DEFAULT_THRESHOLDS)
    thresholds.update(project.analysis.thresholds)
    return Question(
        exposure=exposure,
        outcome=outcome,
        family=family,
        effect_measure=effect_measure(family),
        proposed=tuple(p for p in project.proposed if p in diagram),
        thresholds=tuple(thresholds.items()),
        keep_choices=tuple(project.analysis.keep_choices.items()),
        # Prose names a variable by its label; ids stay the keys of the JSON.
        names=tuple((n.id, n.label) for n in diagram.nodes),
        measured=tuple((n.id, n.measured) for n in diagram.nodes),
        spline_knots=tuple(
            (n.id, project.analysis.spline_knots[n.column])
            for n in diagram.nodes
            if n.column is not None and project.analysis.spline_knots.get(n.column)
        ),
    )


@dataclass(frozen=True, eq=False)
class DataStage:
    """The data's side of a study: sample, engine and evidence, or why there are none."""

    sample: CompleteCases | AnalyticSample | None
    engine: EvidenceEngine | None
    evidence: EvidenceTable | None
    key: Any
    messages: tuple[str, ...]
    #: why the bound data could give no estimate ("" when they did, or when
    #: nothing was asked of them): the study falls back to the diagram
    problem: str = ""
    #: what the design was built from (None for a source that keeps its rows)
    spec: DesignSpec | None = None


@dataclass(frozen=True, eq=False)
class Origin:
    """Where the data come from: a table in memory (read column by column,
    incrementally) or a source that keeps its rows (read whole, per stage)."""

    columns: ColumnSource | None
    whole: DataSource | None
    name: str
    digest: str
    notes: tuple[str, ...] = ()


def data_origin(
    project: Project,
    table: LoadedTable | ColumnSource | None,
    source: DataSource | None,
) -> Origin | None:
    """The first stage: the data source a run reads, or None when there are no data."""
    if source is None and table is None and project.data is not None:
        source = open_source(
            project.data.resolve(project.path),
            project.analysis.engine,
            scheduler=project.analysis.scheduler,
        )
    if isinstance(source, MemorySource):
        table = source.table
    elif source is not None:
        return Origin(None, source, source.path.name, source.sha256, tuple(source.notes))
    if table is None:
        return None
    if source is not None:
        notes = tuple(source.notes)
    elif isinstance(table, LoadedTable):
        notes = table.left_out  # columns the loader could not use, as a source says them
    else:
        notes = ()
    columns = source_of(table)
    return Origin(columns, None, columns.name, columns.digest, notes)


def _data_stage(
    run: Run,
    project: Project,
    q: Question,
    da: DiagramAnalysis,
    source: ColumnSource,
    report: Progress,
) -> DataStage:
    messages: list[str] = []
    bindings = run.get(
        "bindings",
        (source.digest, q.family, q.exposure, q.outcome, _binding_key(project, q.family)),
        lambda: read_bindings(project, q.family, q.exposure, q.outcome, source),
    )
    messages.extend(bindings.messages)
    if not bindings.ready:
        return DataStage(None, None, None, None, tuple(messages))
    try:
        prepared = prepare_design(run, source, project, q.family, q.exposure, bindings)
    except DesignError:
        raise  # no number could mean anything: the study stops, saying why
    except DataError as exc:
        messages.append(f"{exc} Only the diagram is analysed.")
        return DataStage(None, None, None, None, tuple(messages), problem=str(exc))
    messages.extend(prepared.messages)
    _family_columns_message(project, q, messages)
    design = prepared.design
    summary = sufficient_statistics(run, design, prepared.identity)
    engine = _engine(run, prepared, summary)
    _check_crude(engine, q)
    report(0.15, "Fitting the comparison models")
    plan = _plan(q, da, prepared.bound, messages)
    evidence = _evidence(run, engine, plan, q, report)
    messages.extend(evidence.warnings)
    sample = labelled_sample(prepared.sample, project)
    if sample.message:
        messages.append(sample.message)
    return DataStage(
        sample, engine, evidence, (design.key, plan), tuple(messages), spec=prepared.spec
    )


_Sample = TypeVar("_Sample", AnalyticSample, CompleteCases)


def labelled_sample(sample: _Sample, project: Project) -> _Sample:
    """The sample with its summary naming columns by the labels of the nodes
    bound to them (a column no node is bound to keeps its name)."""
    names = {n.column: n.label for n in project.diagram.nodes if n.column}
    message = summary_text(
        sample.rows,
        sample.used,
        dict(sample.lost_by_column),
        sample.lost_to_several,
        len(sample.columns),
        names=names,
    )
    return sample if message == sample.message else replace(sample, message=message)


def _engine(run: Run, prepared: Prepared, summary: LinearSummary) -> EvidenceEngine:
    """The design's engine; a new one takes over the fits of an earlier design's
    engine for every model its changed covariates are not in."""
    design, spec = prepared.design, prepared.spec

    def build() -> tuple[DesignSpec, EvidenceEngine]:
        engine = EvidenceEngine(design, spec.family, summary=summary, record=run.cache.record)
        for _, (old_spec, old) in reversed(run.cache.entries("engine")):
            if old_spec.shares_models_with(spec):
                engine.adopt(old, spec.common_terms(old_spec))
                break
        return spec, engine

    entry: tuple[DesignSpec, EvidenceEngine] = run.get("engine", (design.key,), build)
    return entry[1]


def _binding_key(project: Project, family: str) -> tuple[Any, ...]:
    d = project.diagram
    return (
        tuple((n.id, n.kind, n.measured, n.column, n.label) for n in d.nodes),
        tuple(sorted(project.analysis.family_columns.get(family, {}).items())),
    )


@dataclass(frozen=True)
class Plan:
    """Which models the evidence holds: candidates, covariates added alone, named sets."""

    candidates: tuple[str, ...]
    added: tuple[str, ...]
    sets: tuple[tuple[str, tuple[str, ...]], ...]


def _plan(q: Question, da: DiagramAnalysis, bound: Sequence[str], messages: list[str]) -> Plan:
    roles = da.roles
    candidates = tuple(
        b
        for b in bound
        if not roles[b].descendant_of_exposure
        and not roles[b].descendant_of_outcome
        and b not in da.measures_exposure
        and b not in da.measures_outcome
    )
    sets: dict[str, tuple[str, ...]] = {}
    unbound = [p for p in q.proposed if p not in bound]
    if unbound:
        label = dict(q.names)
        messages.append(
            f"The proposed set holds {', '.join(label[u] for u in unbound)}, which has no data, so the "
            "proposed model is not fitted."
        )
    else:
        sets["proposed"] = q.proposed
    for members, name in set_names(da).items():
        if all(m in bound for m in members):
            sets[name] = members
    return Plan(candidates, tuple(bound), tuple(sets.items()))


def _evidence(
    run: Run, engine: EvidenceEngine, plan: Plan, q: Question, report: Progress
) -> EvidenceTable:
    share = MODIFICATION_SPAN[0] - 0.15  # the tables of rows_read follow

    def step(done: int, total: int) -> None:
        report(0.15 + share * done / max(total, 1), f"Fitting model {done} of {total}")

    def each_pass(model: int, total: int, passes: int) -> None:
        report(
            0.15 + share * (model - 1) / max(total, 1),
            f"Fitting model {model} of {total}, pass {passes} over the rows",
        )

    index = q.threshold["condition_index"]
    evidence: EvidenceTable = run.get(
        "evidence",
        (engine.design.key, plan, index),
        lambda: compute_evidence(
            engine,
            candidates=plan.candidates,
            added=plan.added,
            sets=dict(plan.sets),
            progress=step,
            pass_progress=each_pass,
            cancel=run.cancel,
            index_threshold=index,
        ),
    )
    return evidence


def run_study(
    project: Project,
    *,
    table: LoadedTable | ColumnSource | None = None,
    source: DataSource | None = None,
    family: str | None = None,
    progress: Progress | None = None,
    cancel: Callable[[], bool] | None = None,
    cache: StudyCache | None = None,
) -> StudyResult:
    """Analyse a project: diagram, data, evidence, verdicts and the recommended set.

    Parameters
    ----------
    project : Project
    table : LoadedTable or ColumnSource, optional
        Data to use, in memory; default: the project's data file when it names one.
    source : DataSource, optional
        Data to use through another engine (see :mod:`covariscope.data.sources`);
        wins over ``table``.
    family : str, optional
        Model family; default: the project's.
    progress : callable(fraction, text), optional
    cancel : callable() → bool, optional
        Checked between stages, between columns, between models and between
        passes over the rows (raises
        :class:`~covariscope.analysis.evidence.EvidenceCancelledError`).
    cache : StudyCache, optional
        The stage results of earlier runs (the window's, or one command-line
        run's); default a new, empty one.

    Raises
    ------
    DiagramError
        No exposure or outcome.
    DataError
        The project's data file cannot be read.

    Examples
    --------
    >>> from covariscope.model import Diagram, Node, Project
    >>> d = Diagram()
    >>> for n in (Node("x", kind="exposure"), Node("y", kind="outcome"), Node("c")):
    ...     d.add_node(n)
    >>> for a, b in (("c", "x"), ("c", "y"), ("x", "y")):
    ...     d.add_arrow(a, b)
    >>> r = run_study(Project(d))
    >>> r.verdicts["c"].code, r.recommended, r.evidence is None
    ('adjust', ('c',), True)
    """
    started = time.perf_counter()
    run = Run(cache if cache is not None else StudyCache(), [], cancel)
    fits_before = run.cache.count("fit").misses

    def report(fraction: float, text: str) -> None:
        if progress is not None:
            progress(fraction, text)

    q = question(project, family)
    report(0.0, "Reading the diagram")
    criteria: GraphCriteria = run.get(
        "graph",
        structure_key(project.diagram, q.exposure, q.outcome),
        lambda: graph_criteria(project.diagram, q.exposure, q.outcome),
    )
    review = run.get(
        "review", (criteria.key, q.proposed), lambda: proposal_review(criteria, q.proposed)
    )
    da = criteria.with_review(review)
    if table is None and project.data is not None:
        report(0.05, "Loading the data")
    origin = data_origin(project, table, source)
    data = _data_or_none(run, project, q, da, origin, report)
    decisions: Decisions = run.get(
        "verdicts",
        (criteria.key, q, data.key),
        lambda: decide(q, criteria.graph, da, data.evidence, data.engine, criteria.merged),
    )
    read = _rows_read(run, q, da, data, decisions, report)
    checks = _checks(run, project, q, criteria, data, report)
    if checks is not None:
        # After the disagreements: their short form stays the verdict's own sentence.
        verdicts = with_failed_claims(decisions.verdicts, checks, dict(q.names))
        decisions = replace(decisions, verdicts=verdicts)
    report(1.0, "Done")
    result = _result(q, da, data, decisions, read, origin, project, run)
    if checks is not None:
        notes = _checks_message(checks)
        result = replace(
            result,
            diagram_checks=checks,
            messages=tuple(dict.fromkeys([*result.messages[:-1], *notes, result.messages[-1]])),
        )
    return replace(
        result,
        models_fitted=run.cache.count("fit").misses - fits_before,
        seconds=time.perf_counter() - started,
    )


def _rows_read(
    run: Run,
    q: Question,
    da: DiagramAnalysis,
    data: DataStage,
    decisions: Decisions,
    report: Progress,
) -> RowsRead:
    """Pictures, effect modification and the residual-confounding check: each
    its own stage, keyed by what it reads (see :mod:`covariscope.study.rows_read`)."""
    if data.evidence is None or data.engine is None:
        return RowsRead()
    return rows_read(
        run,
        q,
        da,
        data.spec,
        data.evidence,
        data.engine,
        decisions.groups,
        decisions.estimates["recommended"],
        report=report,
    )


def _checks(
    run: Run,
    project: Project,
    q: Question,
    criteria: GraphCriteria,
    data: DataStage,
    report: Progress,
) -> DiagramChecks | None:
    """The diagram's independence claims tested on the data: a stage keyed by
    the design, the arrows, the proxy links and the claim settings; each
    claim's test is a stage of its own, keyed by the columns it reads, so an
    edit of the diagram retests only the claims it changed."""
    engine = data.engine
    if engine is None:
        return None
    words = "Checking the diagram against the data"
    report(CHECKS_SPAN[0], words)
    G = criteria.graph
    design = engine.design

    def memo(claim: Claim, test: Callable[[], ClaimOutcome]) -> ClaimOutcome:
        nodes = sorted({claim.a, claim.b, *claim.given})
        key = (reads_key(data.spec, design, nodes), claim.a, claim.b, claim.given)
        outcome: ClaimOutcome = run.get("claim", key, test)
        return outcome

    def separator(
        key: Hashable, find: Callable[[], frozenset[str] | None]
    ) -> frozenset[str] | None:
        found: frozenset[str] | None = run.get("separator", key, find)
        return found

    checks: DiagramChecks = run.get(
        "claims",
        checks_key(project, G, engine),
        lambda: check_diagram(
            project,
            G,
            q.exposure,
            q.outcome,
            engine,
            # a cancel raises between two claims (on_claim, memo) rather than
            # stopping with the claims so far, which would be kept as the answer
            memo=memo,
            separators=separator,
            on_claim=fit_reporter(run, report, words, CHECKS_SPAN, unit="claim"),
        ),
    )
    return checks


def _checks_message(checks: DiagramChecks) -> list[str]:
    out: list[str] = []
    if checks.omitted:
        out.append(
            f"The diagram implies {checks.tested + checks.omitted} independence claims; "
            f"only {checks.limit} were tested (raise the limit in the analysis settings)."
        )
    if checks.unsearched:
        out.append(
            f"The listing of independence claims stopped at its search budget: "
            f"{checks.unsearched:,} pairs of variables with data were not looked at (pairs with "
            "the exposure or the outcome came first), so the diagram claims more than was tested."
        )
    return out


def _data_or_none(
    run: Run,
    project: Project,
    q: Question,
    da: DiagramAnalysis,
    origin: Origin | None,
    report: Progress,
) -> DataStage:
    if origin is None:
        return DataStage(
            None,
            None,
            None,
            None,
            (
                "No data are bound to this project, so the verdicts come from the diagram alone; "
                "load the study data to see how each covariate moves the estimate.",
            ),
        )
    if origin.whole is not None:
        return _whole_stage(run, project, q, da, origin.whole, report)
    assert origin.columns is not None
    return _data_stage(run, project, q, da, origin.columns, report)


def _whole_stage(
    run: Run,
    project: Project,
    q: Question,
    da: DiagramAnalysis,
    source: DataSource,
    report: Progress,
) -> DataStage:
    """The data stages on a source that keeps its rows: one cached stage for
    profiles, sample and design, keyed by what they read."""
    a = project.analysis
    key = (
        source.sha256,
        source.engine,
        q.family,
        q.exposure,
        q.outcome,
        _binding_key(project, q.family),
        tuple(sorted(a.column_types.items())),
        tuple(sorted((k, repr(v)) for k, v in a.reference_levels.items())),
    )

    def prepare() -> tuple[Any, EvidenceEngine | None, list[str], tuple[str, ...], str]:
        messages: list[str] = []
        try:
            sample, engine, bound = prepare_evidence(
                project, source, q.family, q.exposure, q.outcome, messages
            )
        except DesignError:
            raise  # no number could mean anything: the study stops, saying why
        except DataError as exc:
            messages.append(f"{exc} Only the diagram is analysed.")
            return None, None, [], tuple(messages), str(exc)
        return sample, engine, bound, tuple(messages), ""

    sample, engine, bound, prepared_messages, problem = run.get("source", key, prepare)
    messages = list(prepared_messages)
    if engine is None:
        return DataStage(None, None, None, None, tuple(messages), problem=problem)
    _family_columns_message(project, q, messages)
    _check_crude(engine, q)
    report(0.15, "Fitting the comparison models")
    plan = _plan(q, da, bound, messages)
    evidence = _evidence(run, engine, plan, q, report)
    messages.extend(evidence.warnings)
    if sample is not None:
        sample = labelled_sample(sample, project)
    if sample is not None and sample.message:
        messages.append(sample.message)
    return DataStage(sample, engine, evidence, (engine.design.key, plan), tuple(messages))


def _check_crude(engine: EvidenceEngine, q: Question) -> None:
    if family_of(q.family).least_squares:
        names = dict(q.names)
        check_crude_fit(engine.ols(()), names[q.exposure], names[q.outcome])


def _family_columns_message(project: Project, q: Question, messages: list[str]) -> None:
    columns = {
        k: v
        for k, v in project.analysis.family_columns.get(q.family, {}).items()
        if k != "offset" or family_of(q.family).takes_offset  # others take none (said above)
    }
    if columns:
        # The outcome node may be bound to another column than this family reads.
        shown = ", ".join(f"{k} {v!r}" for k, v in sorted(columns.items()))
        messages.append(
            f"The {q.family} model of {dict(q.names)[q.outcome]} reads the column(s) {shown} "
            "(set per family in the project's analysis settings)."
        )


def _result(
    q: Question,
    da: DiagramAnalysis,
    data: DataStage,
    decisions: Decisions,
    read: RowsRead,
    origin: Origin | None,
    project: Project,
    run: Run,
) -> StudyResult:
    messages: list[str] = []
    stored = project.data.sha256 if project.data is not None else None
    if origin is not None:
        messages.extend(origin.notes)
    if origin is not None and stored and origin.digest != stored:
        messages.append(
            f"The data file {origin.name} has changed since it was bound to this project "
            "(its SHA-256 differs); check that it is the intended file."
        )
    messages += [*data.messages, *decisions.messages, *read.messages, CAUTION_BRIEF]
    return StudyResult(
        exposure=q.exposure,
        outcome=q.outcome,
        family=q.family,
        effect_measure=q.effect_measure,
        diagram=da,
        proposed=q.proposed,
        sample=data.sample if data.evidence is not None else None,
        evidence=data.evidence,
        verdicts=decisions.verdicts,
        recommended=decisions.recommended,
        estimates=decisions.estimates,
        collinear_groups=decisions.groups,
        evalue=decisions.evalue,
        thresholds=q.threshold,
        disagreements=decisions.disagreements,
        messages=tuple(dict.fromkeys(messages)),
        data_name=origin.name if origin is not None else None,
        data_sha256=origin.digest if origin is not None else None,
        recommended_reason=decisions.recommended_reason,
        names=dict(q.names),
        recomputed=tuple(dict.fromkeys(run.trace)),
        pictures=read.pictures,
        modification=read.modification,
        residual_confounding=read.residual,
        data_problem=data.problem,
        model_terms=(
            model_terms(data.engine.design)
            if data.engine is not None and data.evidence is not None
            else {}
        ),
        exposure_levels=(
            data.engine.design.exposure_levels
            if data.engine is not None and data.evidence is not None
            else ()
        ),
    )
