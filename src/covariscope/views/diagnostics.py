"""The diagnostics dialog's content for one node, as plain rows and text.

For a covariate: the conceptual checklist in words, the role and verdict,
the numeric table of the four comparison models (crude, crude + C, full,
full − C), the collinearity figures and the data the two plots draw.  For
the exposure or the outcome: its missing data and the model family.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import Any

from covariscope.analysis.collinearity import CollinearityReport
from covariscope.analysis.contrasts import ExposureJoint
from covariscope.analysis.evidence import Comparison, CovariateEvidence, EvidenceTable
from covariscope.analysis.fits import Fit
from covariscope.data.profile import ColumnProfile
from covariscope.model.project import Project
from covariscope.study.result import StudyResult
from covariscope.views.estimates import display_scale
from covariscope.views.format import DASH, is_number, number, percent, term_names
from covariscope.views.joint_picture import PictureView, picture_views
from covariscope.views.modification import ModificationView, modification_view
from covariscope.views.outcome_settings import outcome_column_in_use
from covariscope.views.residual import residual_figures
from covariscope.views.review import change_value, role_words
from covariscope.vocabulary import CAUTIONS

__all__ = [
    "DIAGNOSTIC_CAUTION",
    "EndpointDiagnostics",
    "ModelRow",
    "NodeDiagnostics",
    "checklist",
    "condition_rows",
    "endpoint_diagnostics",
    "node_diagnostics",
    "node_labels",
]

#: The cautions, as the dialog shows them under its figures.
DIAGNOSTIC_CAUTION = " ".join(CAUTIONS)


@dataclass(frozen=True)
class ModelRow:
    """One comparison model in the numeric table."""

    model: str
    estimate: str
    ci: str
    change: str
    se_inflation: str
    #: (label, estimate, low, high) on the display scale, for the plot
    point: tuple[str, float, float, float] | None = None
    #: a multi-level exposure's contrast this row is of ("high vs low"); else empty
    contrast: str = ""


@dataclass(frozen=True)
class NodeDiagnostics:
    node: str
    label: str
    title: str
    role: str
    verdict: str
    reason: str
    checklist: tuple[str, ...]
    models: tuple[ModelRow, ...]
    figures: tuple[tuple[str, str], ...]
    effect_measure: str
    messages: tuple[str, ...] = ()
    note: str = ""
    column: str | None = None
    exposure_column: str | None = None
    exposure_label: str = ""
    categorical: bool = False
    numbers: dict[str, Any] = field(default_factory=dict)
    #: the collinearity pictures of the groups that hold the node
    pictures: tuple[PictureView, ...] = ()
    #: the exposure's effect across the covariate's levels (effect modification)
    modification: ModificationView | None = None
    #: the covariate's form, knots of its spline (0: linear); None when it is not continuous
    knots: int | None = None


@dataclass(frozen=True)
class EndpointDiagnostics:
    node: str
    label: str
    kind: str
    title: str
    column: str | None
    family: str
    effect_measure: str
    missing: str
    lines: tuple[str, ...]
    note: str = ""


def _name(step: str, labels: Mapping[str, str]) -> str:
    """A path step in the user's words; a measure group ("a|b") names each member."""
    return " | ".join(labels.get(part, part) for part in step.split("|"))


def _path_text(nodes: tuple[str, ...], labels: Mapping[str, str] | None = None) -> str:
    return " – ".join(_name(n, labels or {}) for n in nodes)


def node_labels(project: Project) -> dict[str, str]:
    """Node id → the label the user gave it (the id when there is none)."""
    return {n.id: (n.label or n.id) for n in project.diagram.nodes}


def checklist(
    node_id: str, result: StudyResult | None, labels: Mapping[str, str] | None = None
) -> tuple[str, ...]:
    """The classical criteria in words, from the diagram's facts about
    ``node_id``; variables are named by ``labels`` (node id → label) where given."""
    facts = result.diagram.roles.get(node_id) if result is not None else None
    if result is None or facts is None:
        return ("The diagram has not been analysed yet.",)
    labels = labels or {}
    exposure = labels.get(result.exposure, result.exposure) or "the exposure"
    outcome = labels.get(result.outcome, result.outcome) or "the outcome"
    paths = result.diagram.paths.paths
    on = list(facts.on_paths)
    through = [paths[i] for i, collider in on if not collider and i < len(paths)]
    as_collider = [paths[i] for i, collider in on if collider and i < len(paths)]
    lines = []
    if through:
        shown = "; ".join(_path_text(p.nodes, labels) for p in through[:3])
        more = f" (and {len(through) - 3} more)" if len(through) > 3 else ""
        lines.append(f"Associated with {exposure}: yes, through the backdoor path {shown}{more}.")
    elif facts.ancestor_of_exposure:
        lines.append(f"Associated with {exposure}: yes, it is a cause of {exposure}.")
    elif facts.descendant_of_exposure:
        lines.append(f"Associated with {exposure}: yes, as its consequence.")
    else:
        lines.append(f"Associated with {exposure}: not through any open path in the diagram.")
    if facts.descendant_of_outcome:
        lines.append(
            f"Affects {outcome} apart from {exposure}: no, it is a consequence of {outcome}."
        )
    elif facts.ancestor_of_outcome:
        lines.append(f"Affects {outcome} apart from {exposure}: yes, it is a cause of {outcome}.")
    else:
        lines.append(
            f"Affects {outcome} apart from {exposure}: no, the diagram has no such arrow path."
        )
    mediator = facts.role == "mediator"
    lines.append(
        f"On the causal pathway from {exposure} to {outcome}: "
        + ("yes — adjusting for it would remove part of the effect." if mediator else "no.")
    )
    if as_collider:
        shown = "; ".join(_path_text(p.nodes, labels) for p in as_collider[:3])
        lines.append(f"Collider: yes, on {shown} — adjusting for it would open that path.")
    else:
        lines.append("Collider: not on any backdoor path.")
    if facts.common_cause:
        lines.append(f"Common cause of {exposure} and {outcome}: yes.")
    return tuple(lines)


def _row(
    title: str,
    fit: Fit | None,
    family: str,
    change: float | None = None,
    se: float | None = None,
) -> ModelRow:
    shown = display_scale(fit, family)
    if shown is None:
        why = fit.message if fit is not None else ""
        return ModelRow(title, DASH, why or "not fitted", DASH, DASH)
    est, lo, hi = shown
    return ModelRow(
        title,
        number(est),
        f"{number(lo)} to {number(hi)}",
        percent(change) if change is not None else "",
        percent(se) if se is not None else "",
        (title, est, lo, hi),
    )


def _model_rows(
    evidence: EvidenceTable | None,
    added: Comparison,
    dropped: Comparison | None,
    name: str,
    family: str,
) -> list[ModelRow]:
    """The four comparison models of one covariate, seen from the exposure's estimate."""
    crude = evidence.crude if evidence is not None else None
    full = evidence.full if evidence is not None else None
    return [
        _row("Crude", added.without_fit or crude, family),
        _row(
            f"Crude + {name}",
            added.with_fit,
            family,
            change_value(added, family),
            added.se_inflation_pct,
        ),
        _row(
            "Full",
            dropped.with_fit if dropped is not None else full,
            family,
            change_value(dropped, family),
            dropped.se_inflation_pct if dropped is not None else None,
        ),
        _row(f"Full − {name}", dropped.without_fit if dropped is not None else None, family),
    ]


def _reference(result: StudyResult | None) -> str:
    levels = result.exposure_levels if result is not None else ()
    return levels[0] if levels else ""


def _contrast_rows(joint: ExposureJoint, name: str, family: str, reference: str) -> list[ModelRow]:
    """A multi-level exposure: the comparison models, one row per contrast each."""
    rows: list[ModelRow] = []
    for shift in joint.contrasts:
        for row in _model_rows(None, shift.added, shift.dropped, name, family):
            if row.estimate == DASH and row.model not in ("Crude", f"Crude + {name}"):
                continue  # not a candidate: no full model to show
            contrast = f"{shift.level} vs {reference}"
            rows.append(replace(row, model=f"{row.model}: {contrast}", contrast=contrast))
    return rows


def joint_figures(joint: ExposureJoint | None, name: str, reference: str) -> list[tuple[str, str]]:
    """A multi-level exposure's joint summary for one covariate, as dialog figures."""
    if joint is None:
        return []
    out = [
        (
            "Contrast that moved most",
            f"{joint.moved_most} vs {reference} ({percent(joint.largest_change_pct)})",
        ),
        (
            f"Exposure block GVIF^(1/(2·df)) in crude + {name}",
            number(joint.gvif_root_added, 3),
        ),
        ("Exposure block GVIF^(1/(2·df)) in the full model", number(joint.gvif_root_full, 3)),
    ]
    wald = joint.wald
    if wald is not None:
        p = "p < 0.001" if is_number(wald.p) and wald.p < 0.001 else f"p = {number(wald.p, 3)}"
        out.append(
            (
                f"Joint Wald test of the exposure in crude + {name}",
                f"{wald.kind} = {number(wald.stat)} ({wald.df} df), {p}",
            )
        )
    return out


def node_diagnostics(
    project: Project,
    result: StudyResult | None,
    node_id: str,
    profiles: Mapping[str, ColumnProfile] | None = None,
) -> NodeDiagnostics:
    """Everything the covariate diagnostics dialog shows for ``node_id``."""
    node = project.diagram.node(node_id)
    labels = node_labels(project)
    name = node.label or node_id
    family = result.family if result is not None else project.analysis.family
    facts = result.diagram.roles.get(node_id) if result is not None else None
    verdict = result.verdicts.get(node_id) if result is not None else None
    evidence = result.evidence if result is not None else None
    ev = evidence.covariates.get(node_id) if evidence is not None else None
    models: list[ModelRow] = []
    figures: list[tuple[str, str]] = []
    numbers: dict[str, Any] = {}
    if evidence is not None and ev is not None:
        joint = ev.joint
        if joint is not None:
            models = _contrast_rows(joint, name, family, _reference(result))
        else:
            models = _model_rows(evidence, ev.added, ev.dropped, name, family)
        numbers, figures = _collinearity(evidence, ev, name, node_id, labels)
        if joint is not None:
            vif_x = number(ev.vif_exposure_added)
            figures.append((f"GVIF^(1/df) of the exposure block in crude + {name}", vif_x))
            figures += joint_figures(joint, name, _reference(result))
        else:
            figures.append(
                (f"VIF of the exposure in crude + {name}", number(ev.vif_exposure_added))
            )
        figures += _own(name, ev.own_coef, ev.own_ci)
        figures += residual_figures(
            result.residual_confounding.get(node_id) if result is not None else None,
            node.label or node_id,
        )
        for name, comparison in (("adding", ev.added), ("dropping", ev.dropped)):
            if comparison is not None and comparison.se_ratio_parts:
                figures += _se_parts(name, comparison.se_ratio_parts)
    prof = (profiles or {}).get(node.column) if node.column else None
    ctype = project.analysis.column_types.get(node.column or "") or (
        prof.type if prof is not None else None
    )
    exposure = project.diagram.exposure
    return NodeDiagnostics(
        node=node_id,
        label=node.label,
        title=f"Diagnostics — {node.label}",
        role=role_words(facts.role if facts is not None else None),
        verdict=verdict.label if verdict is not None else ("Pending" if result is None else DASH),
        reason=verdict.reason if verdict is not None else "",
        checklist=checklist(node_id, result, labels) if result else ("Waiting for the analysis.",),
        models=tuple(models),
        figures=tuple(figures),
        effect_measure=result.effect_measure if result is not None else "",
        messages=result.messages if result is not None else (),
        note=node.note,
        column=node.column,
        exposure_column=exposure.column if exposure else None,
        exposure_label=exposure.label if exposure else "",
        categorical=ctype in ("binary", "categorical"),
        numbers=numbers,
        knots=(
            project.analysis.spline_knots.get(node.column, 0)
            if node.column and ctype in ("continuous", "count")
            else None
        ),
        pictures=picture_views(result.pictures if result is not None else (), node_id, labels),
        modification=modification_view(
            result.modification.get(node_id) if result is not None else None,
            node.label or node_id,
            result.effect_measure if result is not None else "",
            result.thresholds if result is not None else None,
        ),
    )


def _collinearity(
    evidence: EvidenceTable,
    ev: CovariateEvidence,
    name: str,
    node_id: str,
    labels: Mapping[str, str] | None = None,
) -> tuple[dict[str, Any], list[tuple[str, str]]]:
    """The VIF family of figures and the condition indices that hold the node."""
    numbers: dict[str, Any] = {
        "vif": ev.vif,
        "tolerance": ev.tolerance,
        "aux_r2": ev.aux_r2,
        "gvif": ev.gvif,
        "gvif_root": ev.gvif_root,
        "vif_exposure": ev.vif_exposure_added,
    }
    multi = int(ev.df or 1) > 1 and is_number(ev.gvif)
    vif_label = "GVIF^(1/df)" if multi else "VIF"
    figures = [
        (f"{vif_label} of {name} in the full model", number(ev.vif)),
        ("Tolerance (1 / VIF)", number(ev.tolerance, 3)),
        ("Auxiliary R² (1 − 1 / VIF)", number(ev.aux_r2, 3)),
    ]
    if multi:
        figures += [
            ("Generalized VIF (Fox & Monette 1992)", number(ev.gvif)),
            ("GVIF^(1/(2·df))", number(ev.gvif_root, 3)),
        ]
    figures += condition_rows(evidence.collinearity, node_id, name, labels)
    return numbers, figures


def condition_rows(
    report: CollinearityReport, node_id: str, name: str, labels: Mapping[str, str] | None = None
) -> list[tuple[str, str]]:
    """The full model's largest condition index, and each flagged dimension
    that holds the node with the terms that share it (Belsley, Kuh & Welsch
    1980: an index of 30 or more shared by two or more terms)."""
    if report.condition_indices.size == 0:
        return []
    guide = f"guide {report.index_threshold:g}"
    largest = float(report.condition_indices[-1])  # ascending: the largest is last
    rows = [("Largest condition index, full model", f"{number(largest)} ({guide})")]
    holding = [f for f in report.flagged if node_id in f.nodes]
    words = term_names(report.columns, report.nodes, labels or {})
    for f in holding:
        shares = ", ".join(
            f"{words.get(term, term)} {p:.2f}"
            for term, p in zip(f.columns, f.proportions, strict=True)
        )
        rows.append((f"Flagged dimension, index {f.index:.1f}", f"variance shared by {shares}"))
    if not holding:
        rows.append((f"Flagged dimensions holding {name}", f"none ({guide})"))
    return rows


def _own(
    node_id: str,
    coef: float | dict[str, float] | None,
    ci: tuple[float, float] | dict[str, tuple[float, float]] | None,
) -> list[tuple[str, str]]:
    """The covariate's own coefficient in crude + C (one per level when multi-level)."""
    items: list[tuple[str, float, tuple[float, float] | None]]
    if isinstance(coef, dict):
        # a level's design column "col[level]" reads as "Label [level]"
        levels = ci if isinstance(ci, dict) else {}
        items = [
            (f"{node_id} {k[k.index('[') :]}" if "[" in k else k, v, levels.get(k))
            for k, v in coef.items()
        ]
    elif coef is not None and is_number(coef):
        items = [(node_id, coef, ci if isinstance(ci, tuple) else None)]
    else:
        return []
    out = []
    for name, value, interval in items:
        ci_text = f" (95% CI {number(interval[0])} to {number(interval[1])})" if interval else ""
        out.append((f"Coefficient of {name} given the exposure", number(value) + ci_text))
    return out


def _se_parts(name: str, parts: tuple[float, float, float]) -> list[tuple[str, str]]:
    """The linear SE-ratio split on ``name`` the covariate: variance
    inflation × residual variance × degrees of freedom = SE ratio."""
    labels = ("variance inflation", "residual variance", "degrees of freedom")
    values = [float(v) for v in parts]
    out = [
        (f"SE ratio on {name}: {label} part", number(v, 3))
        for label, v in zip(labels, values, strict=False)
    ]
    out.append((f"SE ratio on {name} (product of the parts)", number(math.prod(values), 3)))
    return out


def endpoint_diagnostics(
    project: Project,
    result: StudyResult | None,
    node_id: str,
    profiles: Mapping[str, ColumnProfile] | None = None,
) -> EndpointDiagnostics:
    """The exposure's or outcome's dialog: missing data and the family."""
    node = project.diagram.node(node_id)
    family = project.analysis.family
    sample = result.sample if result is not None else None
    # the outcome's dialog shows the column the family's model reads, which
    # may be another than the one bound to the node (a binary outcome, Cox)
    column = outcome_column_in_use(project, family) if node.kind == "outcome" else node.column
    prof = (profiles or {}).get(column) if column else None
    missing_pct = prof.missing_pct if prof is not None else None
    missing = f"{missing_pct:.1f}% of the rows" if is_number(missing_pct) else DASH
    lines = []
    if node.kind == "outcome" and column != node.column:
        chosen = project.analysis.family_columns.get(family, {})
        read = ", ".join(f"{k} {v}" for k, v in sorted(chosen.items()))
        lines.append(f"The {family} model reads the column(s) {read} (Analysis ▸ Outcome columns).")
    if column is None:
        lines.append(
            f"{node.label} has no data column yet: bind one in the data panel"
            + (
                ", or choose them under Analysis ▸ Outcome columns."
                if node.kind == "outcome"
                else "."
            )
        )
    if sample is not None:
        lines.append(
            f"Analytic sample: {sample.used:,} of {sample.rows:,} rows (complete cases on every "
            "candidate covariate)."
        )
        lost = sample.lost_by_column.get(column or "")
        if lost:
            lines.append(f"Rows lost to missing {column}: {lost:,}.")
    if result is not None and result.effect_measure:
        lines.append(f"Effect measure: {result.effect_measure}.")
    return EndpointDiagnostics(
        node=node_id,
        label=node.label,
        kind=node.kind,
        title=f"{node.kind.capitalize()} — {node.label}",
        column=column,
        family=family,
        effect_measure=result.effect_measure if result is not None else "",
        missing=missing,
        lines=tuple(lines),
        note=node.note,
    )
