"""The study: one project, its data and every analysis, tied together.

:func:`run_study` is the one place that turns a project (diagram, data
reference, settings) into the answer the analyst reads: roles and
adjustment sets from the diagram, the comparison models and evidence from
the data, one verdict per covariate, the recommended set with its estimate
and E-value, and plain-words messages.  The GUI, the command line and the
report call it; none of them recomputes a statistic.

Without data (no data file, or none bound) the result is graph-only: the
verdicts come from the diagram alone and say so, and the sample, evidence,
estimates and E-value are None.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence

from covariscope.analysis.evalue import EValue, evalue_for_fit
from covariscope.analysis.evidence import (
    Comparison,
    EvidenceEngine,
    EvidenceTable,
    compute_evidence,
)
from covariscope.analysis.fits import Fit, effect_measure
from covariscope.analysis.graph import (
    analyse_diagram,
    is_sufficient,
)
from covariscope.analysis.joint_region import CollinearityPicture, collinearity_pictures
from covariscope.analysis.modification import Modification, modification_table
from covariscope.analysis.recommend import pair_r2, recommend_set
from covariscope.analysis.verdicts import (
    LABELS,
    VERDICTS,
    Facts,
    Numbers,
    Shift,
    Verdict,
    collinear_groups,
    decide_verdict,
    format_set,
)
from covariscope.data.loading import LoadedTable
from covariscope.data.sample import AnalyticSample
from covariscope.data.sources.base import DataSource
from covariscope.data.sources.choose import open_source
from covariscope.data.sources.memory import MemorySource
from covariscope.errors import DataError, DesignError
from covariscope.model.project import Project
from covariscope.study.checks import check_diagram, with_failed_claims
from covariscope.study.degenerate import aliased_pairs, check_crude_fit
from covariscope.study.facts import (
    group_why,
    needed_together,
    opened_paths,
    stands_for,
    suggest_member,
    would_close,
    would_open,
)
from covariscope.study.prepare import prepare_evidence
from covariscope.study.result import ESTIMATE_KEYS, Progress, StudyResult
from covariscope.vocabulary import CAUTION_BRIEF, DEFAULT_THRESHOLDS, group_key

__all__ = [
    "ESTIMATE_KEYS",
    "LABELS",
    "VERDICTS",
    "StudyResult",
    "Verdict",
    "run_study",
]

# -- helpers -------------------------------------------------------------------------


def _finite(value: float | None) -> float | None:
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _shift(c: Comparison | None) -> Shift | None:
    if c is None:
        return None
    change = _finite(c.change_pct) if c.change_defined else None
    return Shift(change, _finite(c.se_inflation_pct), _finite(c.change_pct_ratio))


def _numbers(ev: EvidenceTable | None, node: str) -> Numbers | None:
    if ev is None or node not in ev.covariates:
        return None
    c = ev.covariates[node]
    return Numbers(
        added=_shift(c.added),
        dropped=_shift(c.dropped),
        vif_exposure=_finite(c.vif_exposure_added),
        vif=_finite(c.vif),
        aux_r2=_finite(c.aux_r2),
        r2_exposure=_finite(c.r2_exposure),
    )


def _se_lookup(
    ev: EvidenceTable | None, names: Mapping[tuple[str, ...], str]
) -> Callable[[tuple[str, ...]], float | None]:
    def se_of(members: tuple[str, ...]) -> float | None:
        if ev is None:
            return None
        fit = ev.sets.get(names.get(members, ""))
        return fit.se if fit is not None and fit.ok else None

    return se_of


def _fit_lookup(
    engine: EvidenceEngine | None,
) -> tuple[Callable[[tuple[str, ...]], float | None], Callable[[tuple[str, ...]], float | None]]:
    """Exposure coefficient and SE of the model with a set (the engine caches its fits)."""

    def fit(members: tuple[str, ...]) -> Fit | None:
        if engine is None:
            return None
        f = engine.fit(members)
        return f if f.ok else None

    def estimate_of(members: tuple[str, ...]) -> float | None:
        f = fit(members)
        return f.coef if f is not None else None

    def se_of(members: tuple[str, ...]) -> float | None:
        f = fit(members)
        return f.se if f is not None else None

    return estimate_of, se_of


# -- the study -----------------------------------------------------------------------


def run_study(
    project: Project,
    *,
    table: LoadedTable | None = None,
    source: DataSource | None = None,
    family: str | None = None,
    progress: Progress | None = None,
    cancel: Callable[[], bool] | None = None,
) -> StudyResult:
    """Analyse a project: diagram, data, evidence, verdicts and the recommended set.

    Parameters
    ----------
    project : Project
    table : LoadedTable, optional
        Data to use, in memory; default: the project's data file when it names one.
    source : DataSource, optional
        Data to use through another engine (see :mod:`covariscope.data.sources`);
        wins over ``table``.
    family : str, optional
        Model family; default: the project's.
    progress : callable(fraction, text), optional
    cancel : callable() → bool, optional
        Checked between models and between passes over the rows (raises
        :class:`~covariscope.analysis.evidence.EvidenceCancelledError`).

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
    diagram = project.diagram
    exposure, outcome = diagram.require_question()
    family = family or project.analysis.family
    measure = effect_measure(family)
    thresholds = dict(DEFAULT_THRESHOLDS)
    thresholds.update(project.analysis.thresholds)
    proposed = tuple(p for p in project.proposed if p in diagram)
    # Prose names a variable by its label; ids stay the keys of the JSON.
    names = {n.id: n.label for n in diagram.nodes}
    messages: list[str] = []

    def report(fraction: float, text: str) -> None:
        if progress is not None:
            progress(fraction, text)

    report(0.0, "Reading the diagram")
    G = diagram.to_networkx()
    da = analyse_diagram(G, exposure, outcome, proposed)

    if source is None and table is not None:
        source = MemorySource(table)
    if source is None and project.data is not None:
        report(0.05, "Loading the data")
        source = open_source(
            project.data.resolve(project.path),
            project.analysis.engine,
            scheduler=project.analysis.scheduler,
        )
    if source is not None:
        messages.extend(source.notes)
    data_name = source.path.name if source is not None else None
    data_sha = source.sha256 if source is not None else None
    stored_sha = project.data.sha256 if project.data is not None else None
    if source is not None and stored_sha and data_sha and data_sha != stored_sha:
        messages.append(
            f"The data file {data_name} has changed since it was bound to this project "
            "(its SHA-256 differs); check that it is the intended file."
        )

    sample: AnalyticSample | None = None
    engine: EvidenceEngine | None = None
    evidence: EvidenceTable | None = None
    bound: list[str] = []
    if source is not None:
        try:
            sample, engine, bound = prepare_evidence(
                project, source, family, exposure, outcome, da, messages
            )
        except DesignError:
            raise  # no number could mean anything: the study stops, saying why
        except DataError as exc:
            messages.append(f"{exc} Only the diagram is analysed.")
            sample, engine = None, None
        columns = {
            k: v
            for k, v in project.analysis.family_columns.get(family, {}).items()
            if k != "offset" or family == "risk_ratio"  # others take no offset (said above)
        }
        if engine is not None and columns:
            # The outcome node may be bound to another column than this family reads.
            shown = ", ".join(f"{k} {v!r}" for k, v in sorted(columns.items()))
            messages.append(
                f"The {family} model of {names[outcome]} reads the column(s) {shown} "
                "(set per family in the project's analysis settings)."
            )
    else:
        messages.append(
            "No data are bound to this project, so the verdicts come from the diagram alone; "
            "load the study data to see how each covariate moves the estimate."
        )

    minimal = [tuple(s) for s in da.minimal_sets]
    set_names = {m: f"minimal:{i}" for i, m in enumerate(minimal)}
    if engine is not None and family == "linear":
        check_crude_fit(engine.ols(()), names[exposure], names[outcome])
    if engine is not None:
        report(0.15, "Fitting the comparison models")
        roles = da.roles
        candidates = [
            b
            for b in bound
            if not roles[b].descendant_of_exposure
            and not roles[b].descendant_of_outcome
            and b not in da.measures_exposure
            and b not in da.measures_outcome
        ]
        sets: dict[str, Sequence[str]] = {}
        unbound_proposed = [p for p in proposed if p not in bound]
        if unbound_proposed:
            messages.append(
                f"The proposed set holds {', '.join(names[u] for u in unbound_proposed)}, which has no data, so the "
                "proposed model is not fitted."
            )
        else:
            sets["proposed"] = proposed
        for members, name in set_names.items():
            if all(m in bound for m in members):
                sets[name] = members

        def step(done: int, total: int) -> None:
            report(0.15 + 0.8 * done / max(total, 1), f"Fitting model {done} of {total}")

        def each_pass(model: int, total: int, passes: int) -> None:
            report(
                0.15 + 0.8 * (model - 1) / max(total, 1),
                f"Fitting model {model} of {total}, pass {passes} over the rows",
            )

        evidence = compute_evidence(
            engine,
            candidates=candidates,
            added=bound,
            sets=sets,
            progress=step,
            pass_progress=each_pass,
            cancel=cancel,
            index_threshold=thresholds["condition_index"],
        )
        messages.extend(evidence.warnings)
        if sample is not None and sample.message:
            messages.append(sample.message)

    # Collinear confounder groups (proxy links, R² between them, flagged dimensions).
    confounders = [
        c
        for c, f in da.roles.items()
        if f.role == "confounder" and diagram.node(c).measured and c not in da.measures_exposure
    ]
    r2_pairs: dict[tuple[str, str], float] = {}
    flagged: list[tuple[str, ...]] = []
    if evidence is not None and engine is not None:
        blocks = {
            c: list(engine.design.blocks[c].index) for c in confounders if c in engine.design.blocks
        }
        r2_pairs = pair_r2(engine.summary.correlation, blocks)
        flagged = [tuple(d.nodes) for d in evidence.collinearity.flagged]
    groups = collinear_groups(
        confounders,
        proxy_groups=da.groups,
        pair_r2=r2_pairs,
        flagged=flagged,
        r2_threshold=thresholds["r2"],
    )

    # A choice saved for part of a group (the members left to choose among once
    # the diagram needs the others) stands for the whole group in the ranking.
    rec_choices = dict(project.analysis.keep_choices)
    for g in groups:
        for key, member in project.analysis.keep_choices.items():
            if set(key.split("|")) < set(g) and member in g:
                rec_choices.setdefault(group_key(g), member)
    rec = recommend_set(
        minimal,
        proposed=proposed,
        groups=groups,
        keep_choices=rec_choices,
        se_of=_se_lookup(evidence, set_names),
        estimate_of=_fit_lookup(engine)[0] if evidence is not None else None,
    )
    recommended = rec.members or ()
    if evidence is not None and rec.members is not None:
        name = set_names.get(tuple(sorted(rec.members)), "")
        if name not in evidence.sets:
            messages.append(
                "The recommended set holds a covariate without data, so its model is not fitted."
            )
    if not da.identifiable:
        messages.append(
            "No set of measured covariates is sufficient in this diagram: the effect is not "
            "identified by adjustment (see the unmeasured variables and the E-value)."
        )
    if proposed and not da.review.sufficient:
        messages.append(
            f"The proposed set {format_set(names[p] for p in proposed)} is not sufficient: it leaves "
            f"{da.review.open_paths_text()} backdoor path(s) open."
        )

    # Verdicts.
    estimate_of, se_of = _fit_lookup(engine if evidence is not None else None)
    base = list(recommended) if rec.members is not None else list(proposed)
    # Members the diagram needs whichever other is kept are adjusted for, with a
    # caution; the rest of their group (two or more) is still one to keep one of.
    needed = {g: needed_together(G, exposure, outcome, g, base) for g in groups}
    verdicts: dict[str, Verdict] = {}
    aliases = aliased_pairs(
        evidence.aliased if evidence is not None else (), set(da.roles), da.groups
    )
    for c, facts in da.roles.items():
        node = diagram.node(c)
        group = next((g for g in groups if c in g), ())
        group_alone: tuple[str, ...] = ()
        suggested: str | None = None
        why = ""
        grouped_because = ""
        is_needed = bool(group) and c in needed[group]
        if group and not is_needed and needed[group]:
            remainder = tuple(m for m in group if m not in needed[group])
            group = remainder if len(remainder) >= 2 else group
        if is_needed:
            grouped_because = group_why(
                group, da.groups, r2_pairs, flagged, thresholds["r2"], names, member=c
            )
        elif group:
            rest = [m for m in base if m not in group]
            group_alone = tuple(m for m in group if is_sufficient(G, exposure, outcome, [*rest, m]))
            grouped_because = group_why(
                group, da.groups, r2_pairs, flagged, thresholds["r2"], names
            )
            suggested, why = suggest_member(
                group,
                group_alone,
                chosen=project.analysis.keep_choices.get(group_key(group)),
                recommended=recommended,
                proposed=proposed,
                rest=rest,
                estimate_of=estimate_of,
                se_of=se_of,
                names=names,
            )
        stands = stands_for(G, da, c) if facts.role == "confounder_proxy" else ()
        adjusted = tuple(s for s in stands if diagram.node(s).measured and s in base)
        f = Facts(
            node=c,
            role=facts.role,
            measured=node.measured,
            has_data=evidence is not None and c in evidence.covariates,
            measures_exposure=c in da.measures_exposure,
            measures_outcome=c in da.measures_outcome,
            in_proposed=c in proposed,
            group=group,
            group_alone=group_alone,
            group_needed=is_needed,
            group_why=grouped_because,
            suggested=suggested,
            suggested_why=why,
            opened_paths=(
                opened_paths(G, exposure, outcome, proposed, c)
                if facts.role == "collider" and c in proposed
                else ()
            ),
            would_open=would_open(da, c) if facts.role == "collider" else (),
            stands_for=stands,
            stands_for_adjusted=adjusted,
            would_close=would_close(da, c) if not node.measured else (),
            sufficient_without=(True if rec.members is not None else (False if proposed else None)),
            set_name="recommended" if rec.members is not None else "proposed",
            set_members=tuple(base),
            aliased_with=aliases.get(c, ()),
        )
        verdict = decide_verdict(
            f, _numbers(evidence, c), family=family, thresholds=thresholds, names=names
        )
        if (
            evidence is None
            and node.measured
            and verdict.code != "unmeasured"
            and "no data" not in verdict.reason
        ):
            verdict = Verdict(
                verdict.node,
                verdict.code,
                verdict.label,
                verdict.reason.rstrip(".") + " (from the diagram alone; no data).",
                verdict.group,
                verdict.suggested,
            )
        verdicts[c] = verdict

    checks = None
    if engine is not None:
        report(0.96, "Checking the diagram against the data")
        checks = check_diagram(project, G, exposure, outcome, engine, cancel=cancel)
        if checks.omitted:
            messages.append(
                f"The diagram implies {checks.tested + checks.omitted} independence claims; "
                f"only {checks.limit} were tested (raise the limit in the analysis settings)."
            )

    estimates: dict[str, Fit | None] = dict.fromkeys(ESTIMATE_KEYS)
    ev_value: EValue | None = None
    pictures: tuple[CollinearityPicture, ...] = ()
    modification: dict[str, Modification] = {}
    if evidence is not None and engine is not None:
        high_vif = [
            c
            for c, e in evidence.covariates.items()
            if c in evidence.candidates and e.vif_exposure_added >= thresholds["vif"]
        ]
        # the pictures, modification and spline checks read the rows themselves
        in_memory = engine.design.rows_in_memory
        if not in_memory:
            messages.append(
                "Effect modification and the collinearity picture read the rows themselves, "
                "so they are shown only when the data are analysed in memory."
            )
        if in_memory:
            pictures = collinearity_pictures(evidence.full, engine.design, groups, high_vif)
        estimates["crude"] = evidence.crude
        estimates["full"] = evidence.full
        estimates["proposed"] = evidence.sets.get("proposed")
        if rec.members is not None:
            estimates["recommended"] = evidence.sets.get(
                set_names.get(tuple(sorted(rec.members)), "")
            )
        ev_value, problem = evalue_for_fit(estimates["recommended"], engine.design, measure)
        if problem:
            messages.append(problem)
        rec_fit = estimates["recommended"]
        if in_memory and rec_fit is not None and rec_fit.ok:
            report(0.97, "Looking for effect modification")
            modification = modification_table(
                engine.design,
                rec_fit.terms,
                evidence.candidates,
                p_guide=thresholds["modification_p"],
                ratio_guide=thresholds["modification_ratio"],
            )

    disagreements = tuple(
        f"{names.get(v.node, v.node)}: {v.reason}"
        for v in verdicts.values()
        if v.code == "review"
        or (v.code == "exclude_measures_exposure" and v.node not in da.measures_exposure)
    )
    if checks is not None:
        # After the disagreements: their short form stays the verdict's own sentence.
        verdicts = with_failed_claims(verdicts, checks, names)
    messages.append(CAUTION_BRIEF)
    report(1.0, "Done")
    return StudyResult(
        exposure=exposure,
        outcome=outcome,
        family=family,
        effect_measure=measure,
        diagram=da,
        proposed=proposed,
        sample=sample,
        evidence=evidence,
        verdicts=verdicts,
        recommended=tuple(recommended),
        estimates=estimates,
        collinear_groups=groups,
        evalue=ev_value,
        thresholds=thresholds,
        disagreements=disagreements,
        messages=tuple(dict.fromkeys(messages)),
        data_name=data_name,
        data_sha256=data_sha,
        recommended_reason=rec.reason,
        names=names,
        diagram_checks=checks,
        pictures=pictures,
        modification=modification,
    )
