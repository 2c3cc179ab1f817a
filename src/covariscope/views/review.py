"""The covariate review table: one row per covariate, what the diagram says
(role) beside what the data say (change in estimate, SE inflation, VIF) and
the verdict that puts them together."""

from __future__ import annotations

import csv
import io
from collections.abc import Mapping
from dataclasses import dataclass

from covariscope.analysis.contrasts import ExposureJoint
from covariscope.analysis.evidence import Comparison
from covariscope.analysis.modification import Modification
from covariscope.analysis.proposal_wording import sufficiency_sentence, unnecessary_words
from covariscope.model.project import Project
from covariscope.study.result import StudyResult
from covariscope.views.format import DASH, is_number, number, percent, ratio_family
from covariscope.vocabulary import REVIEW_COLUMN_TERMS, change_read, role_label

__all__ = [
    "MODIFICATION_CAUTION",
    "REVIEW_COLUMNS",
    "ReviewRow",
    "change_value",
    "joint_text",
    "modifier_text",
    "open_paths",
    "paths_summary",
    "proposed_after_toggle",
    "review_rows",
    "rows_to_csv",
]

#: Column titles, in order (the last one is the checkbox), from the vocabulary.
REVIEW_COLUMNS: tuple[str, ...] = tuple(t.label for t in REVIEW_COLUMN_TERMS.values())

#: Said beside the effect-modification column and in its tooltips.
MODIFICATION_CAUTION = (
    "Effect modification: the exposure's effect differs across levels of this covariate "
    "(interaction test and stratum estimates against the editable guides). It is not "
    "confounding, and it is no reason to adjust for the covariate or not."
)


def role_words(role: str | None) -> str:
    """A role's label from the vocabulary: ``"descendant_of_exposure"`` →
    ``"descendant of exposure"``; a dash for none."""
    return role_label(role) or DASH


@dataclass(frozen=True)
class ReviewRow:
    """One covariate's row, as text, with the raw numbers for export."""

    node: str
    label: str
    role: str
    added_change: str
    dropped_change: str
    se_inflation: str
    vif: str
    verdict: str
    verdict_code: str
    reason: str
    detail: str
    proposed: bool
    measured: bool
    #: "yes, p = …" past the modification guides, "no" below them, a dash when not examined
    modifier: str = DASH

    def cells(self) -> tuple[str, ...]:
        """The text cells, in :data:`REVIEW_COLUMNS` order (checkbox as yes/no)."""
        return (
            self.label if self.label == self.node else f"{self.label} ({self.node})",
            self.role,
            self.added_change,
            self.dropped_change,
            self.se_inflation,
            self.vif,
            self.modifier,
            self.verdict,
            "yes" if self.proposed else "no",
        )


def change_value(comparison: Comparison | None, family: str) -> float | None:
    """The change in estimate the threshold reads (see
    :func:`covariscope.vocabulary.change_read`); None without a comparison."""
    if comparison is None:
        return None
    return change_read(
        comparison.change_pct, comparison.change_pct_ratio, ratio=ratio_family(family)
    )


def modifier_text(modification: Modification | None) -> str:
    """The effect-modification cell: flagged or not, with the interaction p."""
    if modification is None or not modification.strata:
        return DASH
    p = modification.interaction_p
    p_text = "p < 0.001" if is_number(p) and p < 0.001 else f"p = {number(p, 3)}"
    return f"yes, {p_text}" if modification.flagged else "no"


def _reference(result: StudyResult | None) -> str:
    levels = result.exposure_levels if result is not None else ()
    return levels[0] if levels else ""


def _with_level(text: str, joint: ExposureJoint | None) -> str:
    """A multi-level exposure's change cell names the contrast that moved most."""
    if joint is None or text == DASH:
        return text
    return f"{text} ({joint.moved_most})"


def joint_text(joint: ExposureJoint, family: str, reference: str) -> str:
    """Every contrast's change (added / dropped) and SE inflation, and the joint
    summary, for a multi-level exposure (the row's tooltip)."""
    parts = []
    for s in joint.contrasts:
        dropped = f", dropped {percent(change_value(s.dropped, family))}" if s.dropped else ""
        parts.append(
            f"{s.level} vs {reference}: added {percent(change_value(s.added, family))}{dropped}, "
            f"SE {percent(s.added.se_inflation_pct)}"
        )
    text = "Contrasts — " + "; ".join(parts)
    text += (
        f". Moved most: {joint.moved_most} vs {reference}. Exposure block GVIF^(1/(2·df)) "
        f"{number(joint.gvif_root_added, 3)} with it, {number(joint.gvif_root_full, 3)} in the "
        "full model"
    )
    if joint.wald is not None:
        p = joint.wald.p
        p_text = "p < 0.001" if is_number(p) and p < 0.001 else f"p = {number(p, 3)}"
        text += f"; joint Wald test of the exposure with it: {p_text}"
    return text + "."


def review_rows(project: Project, result: StudyResult | None = None) -> list[ReviewRow]:
    """Rows for every covariate of the project's diagram, in diagram order.

    Before an analysis (``result`` None) or for a covariate the result does
    not know yet, the numbers are dashes and the verdict says it is pending.
    """
    proposed = set(project.proposed)
    family = result.family if result is not None else project.analysis.family
    roles = result.diagram.roles if result is not None else {}
    verdicts = result.verdicts if result is not None else {}
    modifications = result.modification if result is not None else {}
    evidence = result.evidence.covariates if result is not None and result.evidence else {}
    rows = []
    for node in project.diagram.covariates:
        facts = roles.get(node.id)
        ev = evidence.get(node.id)
        verdict = verdicts.get(node.id)
        added = ev.added if ev is not None else None
        dropped = ev.dropped if ev is not None else None
        vif_value = ev.vif if ev is not None else None
        label = verdict.label if verdict is not None else ("Pending" if result is None else DASH)
        reason = verdict.reason if verdict is not None else ""
        reason = reason or ("Waiting for the analysis." if result is None else "")
        if not node.measured and verdict is None:
            label, reason = "Unmeasured", "Not measured: the data cannot speak for it."
        detail_bits = [f"{node.label}: {label}"]
        if reason:
            detail_bits.append(reason)
        if facts is not None and facts.explanation:
            detail_bits.append(f"Diagram: {facts.explanation}")
        joint = ev.joint if ev is not None else None
        if joint is not None:
            detail_bits.append(joint_text(joint, family, _reference(result)))
        rows.append(
            ReviewRow(
                node=node.id,
                label=node.label,
                role=role_words(facts.role if facts is not None else None),
                added_change=_with_level(percent(change_value(added, family)), joint),
                dropped_change=_with_level(percent(change_value(dropped, family)), joint),
                se_inflation=percent(added.se_inflation_pct if added is not None else None),
                vif=number(vif_value) if is_number(vif_value) else DASH,
                verdict=label,
                verdict_code=verdict.code if verdict is not None else "",
                reason=reason,
                detail=" — ".join(detail_bits),
                proposed=node.id in proposed,
                measured=node.measured,
                modifier=modifier_text(modifications.get(node.id)),
            )
        )
    return rows


def proposed_after_toggle(project: Project, node_id: str, checked: bool) -> list[str] | None:
    """The proposed set after ticking (or unticking) ``node_id``; None when
    nothing changes.  Order is kept: a new member goes at the end."""
    current = list(project.proposed)
    if checked and node_id not in current:
        return [*current, node_id]
    if not checked and node_id in current:
        return [p for p in current if p != node_id]
    return None


def rows_to_csv(rows: list[ReviewRow]) -> str:
    """The review table as CSV text (UTF-8 friendly; one header row).

    A missing number is an empty cell (not the dash the table shows), so
    that a spreadsheet or a statistics package reads it as missing."""
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(["node", *REVIEW_COLUMNS, "verdict_code", "reason"])
    for row in rows:
        cells = list(row.cells())
        cells[0] = row.label
        cells = ["" if c == DASH else c for c in cells]
        writer.writerow([row.node, *cells, row.verdict_code, row.reason])
    return out.getvalue()


def open_paths(result: StudyResult | None) -> list[tuple[str, ...]]:
    """Backdoor paths the proposed set leaves open (node sequences); none
    before an analysis."""
    return [tuple(p) for p in result.diagram.review.open_paths] if result is not None else []


def paths_summary(result: StudyResult | None, labels: Mapping[str, str]) -> str:
    """The line above the list of open backdoor paths: that the proposed set
    suffices (and what it can do without), or why it does not."""
    if result is None:
        return "No analysis yet."
    review = result.diagram.review
    if not review.sufficient:
        roles = {c: f.role for c, f in result.diagram.roles.items()}
        text = f"The proposed set is {sufficiency_sentence(review, roles, labels)}."
        return text + (" Choose a path to see it on the diagram." if review.open_paths else "")
    text = "The proposed set is sufficient: it closes every backdoor path."
    if review.unnecessary:
        text += f" Unnecessary in it: {unnecessary_words(review, labels)}."
    return text
