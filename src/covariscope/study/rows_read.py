"""The stages that read the rows after the verdicts: collinearity pictures,
effect modification and the residual-confounding check.

Each is a cached stage of its own, one entry per item (a picture per
collinear group, a modification per candidate, a check per continuous
confounder), keyed by exactly what that item reads: the sample's rows, the
family, the exposure and outcome columns, the specs (column, type,
reference level, knots) of the model's terms and of the item's own
covariate, and the guides that flag it.  Ticking a covariate, adding an
arrow that leaves the recommended set as it was or binding a column outside
the model therefore reads no row here; only an item whose model changed is
computed again.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import partial
from typing import Any

from covariscope.analysis.column_fit import ColumnFit
from covariscope.analysis.design import Design
from covariscope.analysis.evidence import EvidenceEngine, EvidenceTable
from covariscope.analysis.families import Fitter, family_of
from covariscope.analysis.fits import Fit
from covariscope.analysis.graph import DiagramAnalysis
from covariscope.analysis.joint_region import CollinearityPicture, collinearity_pictures
from covariscope.analysis.linear import LinearSummary
from covariscope.analysis.modification import Modification, modification_table
from covariscope.analysis.splines import ResidualCheck, residual_table
from covariscope.data.heap import release_freed_memory
from covariscope.study.decide import Question
from covariscope.study.prepare import DesignSpec, Run
from covariscope.study.result import Progress

__all__ = [
    "MODIFICATION_SPAN",
    "RESIDUAL_SPAN",
    "RowsRead",
    "fit_reporter",
    "reads_key",
    "rows_read",
]

#: the share of the progress bar each table's fits take (after the evidence)
MODIFICATION_SPAN = (0.80, 0.88)
RESIDUAL_SPAN = (0.88, 0.95)
#: and the diagram's independence claims tested on the data, last
CHECKS_SPAN = (0.95, 1.0)

#: what the stages say when the rows stay where they lie
_NOT_IN_MEMORY = (
    "Effect modification, the residual-confounding check of continuous confounders "
    "and the collinearity picture read the rows themselves, so they are shown only "
    "when the data are analysed in memory."
)
_MULTILEVEL = (
    "The exposure has several levels: effect modification is not examined "
    "(each contrast would need its own interaction), and the collinearity "
    "picture is drawn for groups of covariates only."
)
_SPLINES_NOT_IN_MEMORY = (
    "Splines are built from the rows in memory: with the data read where they "
    "lie, every continuous covariate enters linearly."
)


@dataclass(frozen=True, eq=False)
class RowsRead:
    """Pictures, modification and residual-confounding checks, and what they say."""

    pictures: tuple[CollinearityPicture, ...] = ()
    modification: dict[str, Modification] = field(default_factory=dict)
    residual: dict[str, ResidualCheck] = field(default_factory=dict)
    messages: tuple[str, ...] = ()


def reads_key(spec: DesignSpec | None, design: Design, nodes: Iterable[str]) -> tuple[Any, ...]:
    """What a computation on ``nodes``' columns of ``design`` reads.

    The rows, family, exposure and outcome specs and each node's own spec
    (column, type, reference level, knots), so that a design that differs
    in other columns shares the entry.  Without a spec (a design built
    elsewhere) the design's own key stands for all of it.

    Examples
    --------
    >>> spec = DesignSpec(("rows",), "linear", "x", ("x", "continuous", None), (),
    ...                   (("a", "a", "continuous", None, 0), ("b", "b", "binary", 0, 0)))
    >>> reads_key(spec, None, ["b"])  # doctest: +NORMALIZE_WHITESPACE
    (('rows',), 'linear', ('x', 'continuous', None), (),
     (('b', ('b', 'binary', 0, 0)),))
    """
    if spec is None:
        return (design.key, tuple(nodes))
    terms = {t[0]: tuple(t[1:]) for t in spec.terms}
    return (
        spec.rows,
        spec.family,
        spec.exposure_spec,
        spec.outcome_spec,
        tuple((n, terms.get(n)) for n in nodes),
    )


def fit_reporter(
    run: Run,
    report: Progress | None,
    words: str,
    span: tuple[float, float],
    unit: str = "model",
) -> Callable[[int, int], None]:
    """The ``on_fit(k, n)`` of a table of fits: stops between two fits when
    the run was cancelled, and says "<words>: <unit> k of n" across ``span``
    of the progress bar.

    Examples
    --------
    >>> from covariscope.study.cache import StudyCache
    >>> said = []
    >>> on_fit = fit_reporter(Run(StudyCache(), []), lambda f, t: said.append((f, t)),
    ...                       "Checking effect modification", (0.8, 0.9))
    >>> on_fit(3, 4); [(round(f, 3), t) for f, t in said]
    [(0.85, 'Checking effect modification: model 3 of 4')]
    """
    low, high = span

    def on_fit(k: int, n: int) -> None:
        run.check()
        if report is not None:
            report(low + (high - low) * (k - 1) / max(n, 1), f"{words}: {unit} {k} of {n}")

    return on_fit


def _pictures(
    run: Run,
    spec: DesignSpec | None,
    evidence: EvidenceTable,
    engine: EvidenceEngine,
    groups: Sequence[tuple[str, ...]],
    vif_guide: float,
) -> tuple[CollinearityPicture, ...]:
    """One picture per collinear group and per near-alias of the exposure, each
    its own entry: it reads the full model (the candidates' specs) and its members.
    (A multi-level exposure has no one coefficient to pair with a near-alias.)"""
    design = engine.design
    high_vif = [
        c
        for c, e in evidence.covariates.items()
        if c in evidence.candidates and e.vif_exposure_added >= vif_guide and not design.multilevel
    ]
    full = reads_key(spec, design, sorted(evidence.candidates))
    out: list[CollinearityPicture] = []
    items: list[tuple[Sequence[tuple[str, ...]], Sequence[str]]] = [((g,), ()) for g in groups]
    items += [((), (c,)) for c in high_vif]
    for group, alias in items:
        pictures: tuple[CollinearityPicture, ...] = run.get(
            "pictures",
            (full, tuple(group), tuple(alias)),
            partial(collinearity_pictures, evidence.full, design, group, alias),
        )
        out.extend(pictures)
    return tuple(out)


def _modification(
    run: Run,
    spec: DesignSpec | None,
    design: Design,
    terms: Sequence[str],
    candidates: Sequence[str],
    guides: tuple[float, float],
    summary: LinearSummary | None,
    near: ColumnFit | None,
    report: Progress | None = None,
) -> dict[str, Modification]:
    """:func:`~covariscope.analysis.modification.modification_table`, one entry
    per candidate (it reads the model's terms and the candidate); the
    candidates not stored are computed in one call, so they share its work."""
    if any(t not in design.blocks for t in terms):
        return {}
    model = tuple(sorted(terms))
    keys = {
        c: (reads_key(spec, design, (*model, c)), model, c, guides)
        for c in candidates
        if c in design.blocks and c not in design.constant
    }
    found: dict[str, Modification] = run.get_many(
        "modification",
        keys,
        lambda missing: modification_table(
            design,
            model,
            missing,
            p_guide=guides[0],
            ratio_guide=guides[1],
            near=near,
            summary=summary,
            on_fit=fit_reporter(run, report, "Checking effect modification", MODIFICATION_SPAN),
        ),
    )
    return found


def _residual(
    run: Run,
    spec: DesignSpec | None,
    design: Design,
    terms: Sequence[str],
    confounders: Sequence[str],
    knots: Mapping[str, int],
    guide: float,
    summary: LinearSummary | None,
    near: ColumnFit | None,
    report: Progress | None = None,
) -> dict[str, ResidualCheck]:
    """:func:`~covariscope.analysis.splines.residual_table`, one entry per
    continuous confounder (it reads the model's terms and the knots); those
    not stored are computed in one call, so they share its linear model."""
    model = tuple(sorted(terms))
    base = reads_key(spec, design, model)
    # the ones residual_table examines: continuous, varying, in the model
    examined = [
        c
        for c in confounders
        if c in model
        and c in design.blocks
        and not design.blocks[c].levels
        and c not in design.constant
    ]
    keys = {c: (base, model, c, knots.get(c), guide) for c in examined}
    found: dict[str, ResidualCheck] = run.get_many(
        "residual",
        keys,
        lambda missing: residual_table(
            design,
            model,
            missing,
            knots={c: knots[c] for c in missing if c in knots},
            change_guide=guide,
            near=near,
            summary=summary,
            on_fit=fit_reporter(run, report, "Checking residual confounding", RESIDUAL_SPAN),
        ),
    )
    return found


def rows_read(
    run: Run,
    q: Question,
    da: DiagramAnalysis,
    spec: DesignSpec | None,
    evidence: EvidenceTable,
    engine: EvidenceEngine,
    groups: Sequence[tuple[str, ...]],
    recommended: Fit | None,
    *,
    report: Progress | None = None,
) -> RowsRead:
    """The collinearity pictures, effect modification and the residual-confounding
    check of continuous confounders, each through its own cached stage.

    They read the rows themselves, so a design whose rows stay with their
    source gets none of them, and a message that says so.  ``report(fraction,
    text)`` hears of every model the two tables fit, and the run's cancel is
    checked between them.
    """
    thresholds = q.threshold
    design = engine.design
    if not design.rows_in_memory:
        messages = [_NOT_IN_MEMORY] + ([_SPLINES_NOT_IN_MEMORY] if q.spline_knots else [])
        return RowsRead(messages=tuple(messages))
    pictures = _pictures(run, spec, evidence, engine, groups, thresholds["vif"])
    if recommended is None or not recommended.ok:
        return RowsRead(pictures)
    terms = recommended.terms
    guides = (thresholds["modification_p"], thresholds["modification_ratio"])
    # A linear model's checks read only their own new columns: the design's
    # cross-products come from the evidence engine's one-pass summary.
    summary = engine.summary if family_of(design.family).fitter is Fitter.LEAST_SQUARES else None
    # An iterative model's checks start from the evidence table's own fit of it.
    near = engine.column_fit(terms)
    release_freed_memory()  # the evidence table's temporaries, before these tables' own
    modification = (
        {}
        if design.multilevel
        else _modification(
            run, spec, design, terms, evidence.candidates, guides, summary, near, report
        )
    )
    confounders = [c for c in terms if c in da.roles and da.roles[c].role == "confounder"]
    release_freed_memory()
    residual = _residual(
        run,
        spec,
        design,
        terms,
        confounders,
        dict(q.spline_knots),
        thresholds["change_pct"],
        summary,
        near,
        report,
    )
    said = (_MULTILEVEL,) if design.multilevel else ()
    return RowsRead(pictures, modification, residual, said)
