"""The last stages: collinear groups → recommended set → verdicts → estimates.

What reads the rows after them (pictures, effect modification, the
residual-confounding check) is in :mod:`covariscope.study.rows_read`.

They read the graph criteria, the proposal review, the evidence and the
settings a verdict depends on (thresholds, saved keep choices, labels for
the sentences), and nothing else; sentences are built here once per result.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass

import networkx as nx

from covariscope.analysis.adjustment import Backdoor
from covariscope.analysis.constructs import MergedDiagram, merge_diagram
from covariscope.analysis.contrasts import headline_estimates
from covariscope.analysis.evalue import EValue, evalue_for_fit
from covariscope.analysis.evidence import Comparison, EvidenceEngine, EvidenceTable, compare
from covariscope.analysis.fits import Fit
from covariscope.analysis.graph import DiagramAnalysis
from covariscope.analysis.proposal_wording import sufficiency_sentence
from covariscope.analysis.recommend import Recommendation, pair_r2, recommend_set
from covariscope.analysis.verdict_wording import Labels
from covariscope.analysis.verdicts import (
    Facts,
    Numbers,
    Shift,
    Verdict,
    collinear_groups,
    decide_verdict,
    format_set,
)
from covariscope.study.degenerate import aliased_pairs
from covariscope.study.facts import (
    GroupReasons,
    SetInUse,
    needed_together,
    opened_paths,
    stands_for,
    suggest_member,
    would_close,
    would_open,
)
from covariscope.study.result import ESTIMATE_KEYS
from covariscope.vocabulary import Role, group_key, role_label

__all__ = ["Decisions", "Question", "decide"]


@dataclass(frozen=True)
class Question:
    """What the last stages read of the project besides the diagram's structure."""

    exposure: str
    outcome: str
    family: str
    effect_measure: str
    proposed: tuple[str, ...]
    thresholds: tuple[tuple[str, float], ...]
    keep_choices: tuple[tuple[str, str], ...]
    names: tuple[tuple[str, str], ...]
    measured: tuple[tuple[str, bool], ...]
    #: spline knots chosen per covariate node (absent: entered linearly)
    spline_knots: tuple[tuple[str, int], ...] = ()

    @property
    def threshold(self) -> dict[str, float]:
        """The thresholds as a mapping."""
        return dict(self.thresholds)


@dataclass(frozen=True, eq=False)
class Decisions:
    """Verdicts, groups, the recommended set and its estimates."""

    verdicts: dict[str, Verdict]
    groups: tuple[tuple[str, ...], ...]
    recommended: tuple[str, ...]
    recommended_reason: str
    estimates: dict[str, Fit | None]
    evalue: EValue | None
    disagreements: tuple[str, ...]
    messages: tuple[str, ...]


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


def _reference(ctx: _Context) -> str:
    """A multi-level exposure's reference level ("" otherwise)."""
    levels = ctx.engine.design.exposure_levels if ctx.engine is not None else ()
    return levels[0] if levels else ""


def _numbers(ev: EvidenceTable | None, node: str, reference: str = "") -> Numbers | None:
    """What the data say about one covariate (``reference``: a multi-level
    exposure's reference level, which names the contrast that moved most)."""
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
        contrast=f"{c.joint.moved_most} vs {reference}" if c.joint is not None else "",
    )


def set_names(da: DiagramAnalysis) -> dict[tuple[str, ...], str]:
    """The evidence table's name of each minimal set's model."""
    return {tuple(m): f"minimal:{i}" for i, m in enumerate(da.minimal_sets)}


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


def _groups(
    q: Question, da: DiagramAnalysis, evidence: EvidenceTable | None, engine: EvidenceEngine | None
) -> tuple[tuple[tuple[str, ...], ...], dict[tuple[str, str], float], list[tuple[str, ...]]]:
    measured = dict(q.measured)
    confounders = [
        c
        for c, f in da.roles.items()
        if f.role == "confounder" and measured[c] and c not in da.measures_exposure
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
        r2_threshold=q.threshold["r2"],
    )
    return groups, r2_pairs, flagged


def _recommend(
    q: Question,
    da: DiagramAnalysis,
    groups: tuple[tuple[str, ...], ...],
    evidence: EvidenceTable | None,
    engine: EvidenceEngine | None,
    messages: list[str],
) -> Recommendation:
    # A choice saved for part of a group (the members left to choose among once
    # the diagram needs the others) stands for the whole group in the ranking.
    choices = dict(q.keep_choices)
    rec_choices = dict(choices)
    for g in groups:
        for key, member in choices.items():
            if set(key.split("|")) < set(g) and member in g:
                rec_choices.setdefault(group_key(g), member)
    names = set_names(da)
    rec = recommend_set(
        [tuple(s) for s in da.minimal_sets],
        proposed=q.proposed,
        groups=groups,
        keep_choices=rec_choices,
        se_of=_se_lookup(evidence, names),
        estimate_of=_fit_lookup(engine)[0] if evidence is not None else None,
    )
    if (
        evidence is not None
        and rec.members is not None
        and names.get(tuple(sorted(rec.members)), "") not in evidence.sets
    ):
        messages.append(
            "The recommended set holds a covariate without data, so its model is not fitted."
        )
    label = dict(q.names)
    if not da.identifiable:
        messages.append(
            "No set of measured covariates is sufficient in this diagram: the effect is not "
            "identified by adjustment (see the unmeasured variables and the E-value)."
        )
    if q.proposed and not da.review.sufficient:
        roles = {c: f.role for c, f in da.roles.items()}
        messages.append(
            f"The proposed set {format_set(label[p] for p in q.proposed)} is "
            f"{sufficiency_sentence(da.review, roles, label)}."
        )
    messages.extend(_stopped_searches(da, label))
    return rec


#: Most names a message lists before it counts the rest.
NAMES_LISTED = 10


def _some(names: Iterable[str]) -> str:
    """``{a, b}``, or the first :data:`NAMES_LISTED` and how many more."""
    items = list(names)
    if len(items) <= NAMES_LISTED:
        return format_set(items)
    return f"{format_set(items[:NAMES_LISTED])} and {len(items) - NAMES_LISTED:,} more"


def _stopped_searches(da: DiagramAnalysis, label: Mapping[str, str]) -> list[str]:
    """What the graph searches that stopped at their work budget could not say."""
    out: list[str] = []
    if not da.minimal_sets_complete:
        out.append(
            f"The listing of minimal sufficient sets stopped at {len(da.minimal_sets)} sets, its "
            "budget (the diagram has very many): the recommended set is chosen among those "
            "listed, and a set not listed may serve as well."
        )
    if da.review.open_paths_stopped:
        out.append(
            f"The listing of the backdoor paths the proposed set leaves open stopped at its work "
            f"budget: {len(da.review.open_paths)} of {da.review.open_paths_text()} are listed."
        )
    if da.paths.walk_stopped:
        out.append(
            f"The listing of backdoor paths stopped at its work budget after {len(da.paths.paths)} "
            f"of {da.paths.total_text()}, so the paths named beside each role are not all of them."
        )
    if not da.review.not_together_checked:
        out.append(
            f"The proposed set holds {len(da.review.unnecessary)} unnecessary covariates, more "
            "than the check of which may be dropped together takes: drop them one at a time, "
            "checking the set after each."
        )
    if da.review.unsearched:
        out.append(
            f"The search for backdoor paths that {format_set(label[m] for m in da.review.unsearched)} "
            "would open in the proposed set stopped at its work budget (the diagram has very many "
            "paths): they are not marked harmful, but that is not shown either; check them by eye."
        )
    unsettled = [c for c, f in da.roles.items() if f.confounding_stopped]
    if unsettled:
        out.append(
            f"The search for backdoor paths without a collider stopped at its work budget (the "
            f"diagram has very many) before it could show that "
            f"{_some(label[c] for c in unsettled)} lie on one: each lies on a chain of "
            f"arrows from a common cause of the exposure and the outcome, so each is taken to "
            f"be a {role_label(Role.CONFOUNDER)}; check them by eye."
        )
    stopped = [c for c, f in da.roles.items() if f.search_stopped]
    if stopped:
        out.append(
            f"The search for a backdoor path that adjusting for {format_set(label[c] for c in stopped)} "
            "alone would open stopped at its work budget (the diagram has very many paths), so "
            "the collider rule could not be settled for them; their role comes from the later rules."
        )
    return out


@dataclass(frozen=True)
class _Context:
    q: Question
    da: DiagramAnalysis
    groups: tuple[tuple[str, ...], ...]
    r2_pairs: dict[tuple[str, str], float]
    flagged: list[tuple[str, ...]]
    needed: dict[tuple[str, ...], tuple[str, ...]]
    base: tuple[str, ...]
    recommended: tuple[str, ...]
    sufficient: bool | None
    set_name: str
    evidence: EvidenceTable | None
    engine: EvidenceEngine | None
    aliases: dict[str, tuple[str, ...]]
    # looked up once per covariate: built once, not once per covariate
    names: dict[str, str]
    measured: dict[str, bool]
    #: the set in use and the criterion on this diagram, merged once for every question
    in_use: SetInUse
    #: why confounders group together, indexed once
    reasons: GroupReasons
    #: each covariate's collinear group (the first that holds it)
    group_of: dict[str, tuple[str, ...]]
    #: the sentences' labels: the set in use labelled once
    labels: Labels
    #: the paths each collider in the proposed set opens (one listing for all)
    opened: dict[str, tuple[tuple[str, ...], ...]]
    #: what each confounder proxy stands for (one pass for all)
    stands: dict[str, tuple[str, ...]]
    #: the facts of each group to keep one of, the same for every member (once per group)
    kept: dict[tuple[str, ...], tuple[tuple[str, ...], str, str | None, str]]


def _group_facts(
    ctx: _Context, c: str
) -> tuple[tuple[str, ...], tuple[str, ...], bool, str, str | None, str]:
    """(group, members alone sufficient, needed?, why grouped, suggested member, why)."""
    group = ctx.group_of.get(c, ())
    is_needed = bool(group) and c in ctx.needed[group]
    if group and not is_needed and ctx.needed[group]:
        remainder = tuple(m for m in group if m not in ctx.needed[group])
        group = remainder if len(remainder) >= 2 else group
    if is_needed:
        return group, (), True, ctx.reasons.why(group, member=c), None, ""
    if not group:
        return (), (), False, "", None, ""
    if group not in ctx.kept:
        ctx.kept[group] = _keep_one_facts(ctx, group)
    alone, why, suggested, suggested_why = ctx.kept[group]
    return group, alone, False, why, suggested, suggested_why


def _keep_one_facts(
    ctx: _Context, group: tuple[str, ...]
) -> tuple[tuple[str, ...], str, str | None, str]:
    """(members alone sufficient, why grouped, suggested member, why) of a
    group to keep one of: the same for each of its members."""
    q = ctx.q
    rest_constructs = ctx.in_use.without(group)
    alone = tuple(m for m in group if ctx.in_use.suffices(rest_constructs, [m]))
    rest = [m for m in ctx.base if m not in group]
    estimate_of, se_of = _fit_lookup(ctx.engine if ctx.evidence is not None else None)
    suggested, suggested_why = suggest_member(
        group,
        alone,
        chosen=dict(q.keep_choices).get(group_key(group)),
        recommended=ctx.recommended,
        proposed=q.proposed,
        rest=rest,
        estimate_of=estimate_of,
        se_of=se_of,
        names=ctx.names,
        contrast=_first_contrast(ctx),
    )
    return alone, ctx.reasons.why(group), suggested, suggested_why


def _first_contrast(ctx: _Context) -> str:
    """The contrast a fit's own estimate holds for a multi-level exposure (its first),
    as "high vs low"; empty otherwise."""
    design = ctx.engine.design if ctx.engine is not None else None
    if design is None or not design.multilevel:
        return ""
    return f"{design.exposure_levels[1]} vs {design.exposure_levels[0]}"


def _verdict(ctx: _Context, c: str) -> Verdict:
    q, da, evidence = ctx.q, ctx.da, ctx.evidence
    role = da.roles[c].role
    measured = ctx.measured
    group, alone, is_needed, why, suggested, suggested_why = _group_facts(ctx, c)
    stands = ctx.stands.get(c, ())
    f = Facts(
        node=c,
        role=role,
        measured=measured[c],
        has_data=evidence is not None and c in evidence.covariates,
        measures_exposure=c in da.measures_exposure,
        measures_outcome=c in da.measures_outcome,
        in_proposed=c in q.proposed,
        group=group,
        group_alone=alone,
        group_needed=is_needed,
        group_why=why,
        suggested=suggested,
        suggested_why=suggested_why,
        opened_paths=ctx.opened.get(c, ()),
        would_open=would_open(da, c) if role == "collider" else (),
        stands_for=stands,
        stands_for_adjusted=tuple(s for s in stands if measured[s] and s in ctx.base),
        would_close=would_close(da, c) if not measured[c] else (),
        sufficient_without=ctx.sufficient,
        set_name=ctx.set_name,
        set_members=ctx.base,
        aliased_with=ctx.aliases.get(c, ()),
    )
    verdict = decide_verdict(
        f,
        _numbers(evidence, c, _reference(ctx)),
        family=q.family,
        thresholds=q.threshold,
        names=ctx.labels,
    )
    if (
        evidence is None
        and measured[c]
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
    return verdict


def decide(
    q: Question,
    graph: nx.DiGraph,
    da: DiagramAnalysis,
    evidence: EvidenceTable | None,
    engine: EvidenceEngine | None,
    merged: MergedDiagram | None = None,
) -> Decisions:
    """Collinear groups, the recommended set, one verdict per covariate, the estimates.

    ``merged`` is the diagram with its measure groups merged, when the caller
    has it (it is merged here otherwise, once).
    """
    md = merge_diagram(graph, q.exposure, q.outcome) if merged is None else merged
    check = Backdoor(md, q.exposure, q.outcome)
    messages: list[str] = []
    groups, r2_pairs, flagged = _groups(q, da, evidence, engine)
    rec = _recommend(q, da, groups, evidence, engine, messages)
    recommended = rec.members or ()
    base = tuple(recommended) if rec.members is not None else q.proposed
    # Members the diagram needs whichever other is kept are adjusted for, with a
    # caution; the rest of their group (two or more) is still one to keep one of.
    in_use = SetInUse(check, base)
    needed = {g: needed_together(in_use, g) for g in groups}
    colliders = [c for c in q.proposed if c in da.roles and da.roles[c].role == "collider"]
    proxies = [c for c, f in da.roles.items() if f.role == "confounder_proxy"]
    ctx = _Context(
        q=q,
        da=da,
        groups=groups,
        r2_pairs=r2_pairs,
        flagged=flagged,
        needed=needed,
        base=base,
        recommended=tuple(recommended),
        sufficient=True if rec.members is not None else (False if q.proposed else None),
        set_name="recommended" if rec.members is not None else "proposed",
        evidence=evidence,
        engine=engine,
        aliases=aliased_pairs(
            evidence.aliased if evidence is not None else (), set(da.roles), da.groups
        ),
        names=dict(q.names),
        measured=dict(q.measured),
        in_use=in_use,
        reasons=GroupReasons(da.groups, r2_pairs, flagged, q.threshold["r2"], dict(q.names)),
        group_of={m: g for g in reversed(groups) for m in g},
        labels=Labels(dict(q.names)),
        opened=opened_paths(md, q.exposure, q.outcome, q.proposed, colliders) if colliders else {},
        stands=stands_for(graph, da, proxies),
        kept={},
    )
    verdicts = {c: _verdict(ctx, c) for c in da.roles}
    estimates: dict[str, Fit | None] = dict.fromkeys(ESTIMATE_KEYS)
    ev_value: EValue | None = None
    if evidence is not None and engine is not None:
        estimates["crude"] = evidence.crude
        estimates["full"] = evidence.full
        estimates["proposed"] = evidence.sets.get("proposed")
        if rec.members is not None:
            estimates["recommended"] = evidence.sets.get(
                set_names(da).get(tuple(sorted(rec.members)), "")
            )
        if engine.design.multilevel:
            estimates = headline_estimates(estimates, compare)
        ev_value, problem = evalue_for_fit(
            estimates["recommended"], engine.design, q.effect_measure
        )
        if problem:
            messages.append(problem)
    label = dict(q.names)
    disagreements = tuple(
        f"{label.get(v.node, v.node)}: {v.reason}"
        for v in verdicts.values()
        if v.code == "review"
        or (v.code == "exclude_measures_exposure" and v.node not in da.measures_exposure)
    )
    return Decisions(
        verdicts=verdicts,
        groups=groups,
        recommended=tuple(recommended),
        recommended_reason=rec.reason,
        estimates=estimates,
        evalue=ev_value,
        disagreements=disagreements,
        messages=tuple(messages),
    )
