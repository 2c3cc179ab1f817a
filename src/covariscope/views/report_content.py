"""Every word and number of the one-page adjustment rationale, without Qt.

:func:`build_content` turns a study result and its project into a
:class:`RationaleContent`: frozen dataclasses holding the finished strings
and table rows, so the painter only places them and never formats a number.
The number formats live here, in :func:`format_number` and
:func:`estimate_decimals`, so a script that reads ``covariscope check --json``
can round the same way and find the printed value.

It reads the typed :class:`~covariscope.study.StudyResult` and the
:class:`~covariscope.model.Project` by attribute; what the result does not hold
(no data, a model that could not be fitted) is said as "not available" or why.
"""

from __future__ import annotations

import datetime as _dt
import math
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from itertools import pairwise

from covariscope import __version__
from covariscope.analysis.adjustment import ProposalReview
from covariscope.analysis.claim_wording import SHORT_CAUTION, summary_line
from covariscope.analysis.contrasts import ExposureJoint
from covariscope.analysis.fits import Contrast, Fit
from covariscope.analysis.proposal_wording import (
    PROPOSED_SET,
    collider_openers,
    descendant_reasons,
    unnecessary_words,
)
from covariscope.model.diagram import Diagram, Node
from covariscope.model.project import Project
from covariscope.study.result import StudyResult
from covariscope.views.modification import flagged_lines
from covariscope.views.residual import flagged_residual_lines
from covariscope.views.review import change_value, role_words
from covariscope.vocabulary import CAUTION_BRIEF, CAUTIONS, family_term

__all__ = [
    "CovariateRow",
    "DiagramSketch",
    "EstimateRow",
    "RationaleContent",
    "SketchNode",
    "build_content",
    "estimate_decimals",
    "format_interval",
    "format_number",
    "format_percent",
    "name_nodes",
]


_NOT_AVAILABLE = "n/a"


# -- number formats --------------------------------------------------------------------


def format_number(value: float | None, decimals: int) -> str:
    """A number with a fixed count of decimals; ``n/a`` when missing.

    A plain hyphen is used for the minus sign so the printed text matches
    Python's own rounding of the same value.

    >>> format_number(1.23456, 2)
    '1.23'
    >>> format_number(float("nan"), 2)
    'n/a'
    """
    if value is None or not math.isfinite(value):
        return _NOT_AVAILABLE
    text = f"{value:.{decimals}f}"
    if text.lstrip("-").strip("0.") == "":  # "-0.00" reads as a sign error
        text = text.lstrip("-")
    return text


def format_percent(value: float | None) -> str:
    """A percentage with one decimal, e.g. ``'12.3%'``; ``n/a`` when missing.

    >>> format_percent(-4.04)
    '-4.0%'
    """
    text = format_number(value, 1)
    return text if text == _NOT_AVAILABLE else text + "%"


def format_interval(lo: float | None, hi: float | None, decimals: int) -> str:
    """A 95% confidence interval as ``'lo to hi'`` ("to" keeps negative limits
    readable).

    >>> format_interval(-0.5, 1.25, 2)
    '-0.50 to 1.25'
    """
    return f"{format_number(lo, decimals)} to {format_number(hi, decimals)}"


def estimate_decimals(widths: Iterable[float], *, ratio: bool) -> int:
    """Decimals used for every estimate on the page: enough that the
    narrowest confidence interval shows two significant digits, at least 2
    and at most 4 (common practice: report to the precision the CI supports).

    >>> estimate_decimals([0.84, 3.1], ratio=False)
    2
    >>> estimate_decimals([0.031], ratio=True)
    3
    """
    finite = [w for w in widths if w is not None and math.isfinite(w) and w > 0]
    if not finite:
        return 2
    digits = 1 - math.floor(math.log10(min(finite)))
    return max(2, min(4, digits))


# -- content -----------------------------------------------------------------------------


@dataclass(frozen=True)
class EstimateRow:
    """One model's exposure estimate, formatted."""

    name: str  # "Crude", "Proposed set", "Recommended set"
    estimate: str
    interval: str  # "lo to hi", or the reason it is missing
    n: str


@dataclass(frozen=True)
class CovariateRow:
    """One row of the covariate table."""

    node: str
    key: str  # the row's number, also printed in a crowded diagram
    label: str
    sets: str  # "P" in the proposed set, "R" in the recommended set
    role: str
    change: str
    se_inflation: str
    vif: str
    verdict: str
    verdict_code: str
    note: str
    proposed: bool
    recommended: bool
    measured: bool


@dataclass(frozen=True)
class SketchNode:
    id: str
    key: str  # row number in the covariate table; "" for exposure and outcome
    label: str
    kind: str
    measured: bool
    x: float
    y: float
    adjusted: bool  # in the proposed set
    role: str


@dataclass(frozen=True)
class DiagramSketch:
    """What the page needs to draw the diagram as drawn, without the model."""

    nodes: tuple[SketchNode, ...]
    arrows: tuple[tuple[str, str], ...]
    proxies: tuple[tuple[str, str], ...]


@dataclass(frozen=True)
class RationaleContent:
    """The whole page as strings; sections are tuples of lines or rows."""

    title: str
    question: str
    measure: str
    data: tuple[str, ...]
    adjustment: tuple[str, ...]
    estimates_caption: str
    estimates: tuple[EstimateRow, ...]
    evalue: str
    covariate_headers: tuple[str, ...]
    table_caption: str
    covariates: tuple[CovariateRow, ...]
    collinearity: tuple[str, ...]
    disagreements: tuple[str, ...]
    messages: tuple[str, ...]
    thresholds: str
    cautions: tuple[str, ...]
    footer: str
    diagram: DiagramSketch
    decimals: int
    ratio: bool
    exposure: str
    outcome: str
    project_name: str
    #: one line on the diagram's independence claims ("" without data)
    diagram_checks: str = ""
    #: one line per flagged modifier of the exposure's effect (not confounding)
    modification: tuple[str, ...] = ()
    #: one line per continuous confounder whose spline moves the estimate past the guide
    residual: tuple[str, ...] = ()


def _contrast_words(fit: Fit | None, levels: tuple[str, ...]) -> str:
    """`` (high vs low)`` for a multi-level exposure's estimate, else nothing."""
    contrast = fit.contrast if fit is not None else ""
    return f" ({contrast} vs {levels[0]})" if contrast and levels else ""


def _change_cell(change: float | None, joint: ExposureJoint | None) -> str:
    """The change, naming the contrast that moved most for a multi-level exposure."""
    text = format_percent(change)
    if joint is None or change is None:
        return text
    return f"{text} ({joint.moved_most})"


def _labels(ids: Sequence[str], label_of: Mapping[str, str]) -> str:
    return ", ".join(label_of.get(i, i) for i in ids) if ids else "none"


_ESTIMATE_TITLES = (
    ("crude", "Crude"),
    ("proposed", PROPOSED_SET),
    ("recommended", "Recommended set"),
)

#: one estimate line of the page: its title, the fit or contrast it shows, and the rows used
_Line = tuple[str, Fit | Contrast | None, int | None]


def _estimate_lines(estimates: Mapping[str, Fit | None]) -> list[_Line]:
    """(title, fit or contrast, rows) of every estimate line: one per model, or
    for a multi-level exposure one per model and contrast."""
    lines: list[_Line] = []
    for key, title in _ESTIMATE_TITLES:
        fit = estimates.get(key)
        n = fit.n if fit is not None else None
        if fit is not None and fit.contrasts and fit.ok:
            lines += [(f"{title}: {c.level}", c, n) for c in fit.contrasts]
        else:
            lines.append((title, fit, n))
    return lines


def _fit_numbers(
    fit: Fit | Contrast | None, ratio: bool
) -> tuple[float | None, float | None, float | None]:
    """(estimate, lower, upper) on the scale shown: ratios for ratio families."""
    if fit is None or (isinstance(fit, Fit) and not fit.ok) or not math.isfinite(fit.coef):
        return None, None, None
    if not ratio:
        return fit.coef, fit.ci[0], fit.ci[1]
    if fit.ratio is None or fit.ratio_ci is None:
        return None, None, None
    return fit.ratio, fit.ratio_ci[0], fit.ratio_ci[1]


def _path_text(
    path: Sequence[str], arrows: set[tuple[str, str]], label_of: Mapping[str, str]
) -> str:
    def name(node: str) -> str:
        return " | ".join(label_of.get(m, m) for m in node.split("|"))

    parts = [name(path[0])] if path else []
    for a, b in pairwise(path):
        left, right = set(a.split("|")), set(b.split("|"))
        if any((p, q) in arrows for p in left for q in right):
            link = "→"
        elif any((q, p) in arrows for p in left for q in right):
            link = "←"
        else:
            link = "—"
        parts.append(f"{link} {name(b)}")
    return " ".join(parts)


def _one_line(text: str) -> str:
    return " ".join(str(text).split())


_SET = re.compile(r"\{([^{}]*)\}")
_PATH = re.compile(r"[\w|]+(?: [–—-] [\w|]+)+")
# "Review: ", "Keep one of {a, b}: ": the verdict's own word, already in the table
_VERDICT_LEAD = re.compile(r"^[A-Z][a-z]+(?: [a-z]+)*(?: \{[^{}]*\})?: ")


def _name(token: str, label_of: Mapping[str, str]) -> str | None:
    """A node id (or a ``|``-joined measure group) as labels; None if not ids."""
    parts = token.split("|")
    if all(p in label_of for p in parts):
        return " | ".join(label_of[p] for p in parts)
    return None


def name_nodes(text: str, label_of: Mapping[str, str]) -> str:
    """Put labels where the engine's sentences name nodes by id: in sets
    (``{a, b}``) and paths (``a – b – c``).  Words that are not ids, or
    sequences that are not all ids, are left as they are.

    >>> name_nodes("leaves {age, inc} and x – y open", {"age": "Age", "inc": "Income",
    ...            "x": "Dust", "y": "Lung"})
    'leaves {Age, Income} and Dust – Lung open'
    """

    def as_set(m: re.Match[str]) -> str:
        members = [t.strip() for t in m.group(1).split(",")]
        names = [_name(t, label_of) for t in members]
        if not members or any(n is None for n in names):
            return m.group(0)
        return "{" + ", ".join(n for n in names if n) + "}"

    def as_path(m: re.Match[str]) -> str:
        tokens = re.split(r"( [–—-] )", m.group(0))
        out = []
        for t in tokens:
            if t.strip() in ("–", "—", "-"):
                out.append(t)
                continue
            n = _name(t, label_of)
            if n is None:
                return m.group(0)
            out.append(n)
        return "".join(out)

    return _PATH.sub(as_path, _SET.sub(as_set, text))


def _finding(text: str, label_of: Mapping[str, str]) -> str:
    """``"node: Review: reason"`` → ``"Label: reason"`` with ids named; the
    node may come as its id or already as its label."""
    text = _one_line(text)
    head, sep, rest = text.partition(": ")
    if sep and (head in label_of or head in label_of.values()):
        text = f"{label_of.get(head, head)}: {_VERDICT_LEAD.sub('', rest, count=1)}"
    return name_nodes(text, label_of)


def _page_messages(
    result: StudyResult, label_of: Mapping[str, str], *, shown_insufficient: bool
) -> tuple[str, ...]:
    """The engine's messages minus those the page already says in its own
    sections (the sample, an insufficient set, the cautions)."""
    sample_message = _one_line(result.sample.message) if result.sample is not None else ""
    out: list[str] = []
    for raw in result.messages:
        text = _one_line(raw)
        if not text or text == sample_message:
            continue  # the Data section gives rows used and lost
        if shown_insufficient and text.startswith("The proposed set") and "not sufficient" in text:
            continue  # the Adjustment set section says so, with the open paths
        if raw == CAUTION_BRIEF:
            continue  # the Cautions section says it in full
        out.append(name_nodes(text, label_of))
    return tuple(dict.fromkeys(out))


def _checks_line(result: StudyResult, label_of: Mapping[str, str]) -> str:
    checks = result.diagram_checks
    if checks is None:
        return ""
    return f"{summary_line(checks, label_of, top=2, short=True)} {SHORT_CAUTION}"


# -- sections ------------------------------------------------------------------------------


def _data_lines(result: StudyResult, diagram: Diagram) -> tuple[str, ...]:
    """The Data section: the file, rows used, rows lost by column label."""
    sample = result.sample
    lines: list[str] = []
    if result.data_name or sample is not None:
        line = f"File: {result.data_name or 'unnamed'}"
        if result.data_sha256:
            line += f"  (SHA-256 {result.data_sha256[:12]})"
        lines.append(line)
    if sample is None:
        return (*lines, "No data bound: the page shows what the diagram says only.")
    rows, used = sample.rows, sample.used
    lines.append(f"Rows used: {used:,} of {rows:,} in the file (complete cases).")
    lost = {c: int(v) for c, v in (sample.lost_by_column or sample.missing_by_column).items() if v}
    if rows - used <= 0:
        return (*lines, "Rows lost: none.")
    # people read the diagram's labels; a column no node is bound to keeps its name
    label_of_column = {n.column: n.label for n in diagram.nodes if n.column}
    detail = ", ".join(
        f"{label_of_column.get(c, c)} {v:,}"
        for c, v in sorted(lost.items(), key=lambda kv: (-kv[1], kv[0]))
    )
    text = f"Rows lost: {rows - used:,}"
    return (*lines, text + (f", missing in {detail}." if detail else "."))


def _insufficient_lines(
    review: ProposalReview, result: StudyResult, diagram: Diagram, label_of: Mapping[str, str]
) -> list[str]:
    """Why the proposed set does not suffice: descendants named, then the open paths."""
    role_of = {c: f.role for c, f in result.diagram.roles.items()}
    chosen = _labels(result.proposed, label_of)
    lines = [f"{PROPOSED_SET}: {chosen} — NOT sufficient:"]
    lines += [f"{r[0].upper()}{r[1:]}." for r in descendant_reasons(review, role_of, label_of)]
    arrows = set(diagram.arrows)
    lines += [f"Open path: {_path_text(p, arrows, label_of)}" for p in review.open_paths]
    total, exact, listed = review.open_paths_total, review.open_paths_total_exact, review.open_paths
    if not exact or total > len(listed):
        count = f"{total:,}" if exact else f"at least {total:,}"
        lines.append(f"Open paths in all: {count}; {len(listed)} are shown.")
    return lines


def _adjustment_lines(
    result: StudyResult, diagram: Diagram, label_of: Mapping[str, str]
) -> tuple[str, ...]:
    """The Adjustment set section: the proposed set judged, then the recommended one."""
    review = result.diagram.review
    if review.sufficient:
        chosen = _labels(result.proposed, label_of)
        lines = [f"{PROPOSED_SET}: {chosen} — sufficient, the diagram says."]
    else:
        lines = _insufficient_lines(review, result, diagram, label_of)
    if review.unnecessary:
        lines.append(f"Unnecessary in it: {unnecessary_words(review, label_of)}.")
    if openers := collider_openers(review):  # the descendants are named above
        lines.append(f"Opens a collider path: {_labels(openers, label_of)}.")
    if not result.diagram.identifiable:
        lines.append(
            "No set of measured covariates suffices: the effect is not identified by "
            "adjustment in this diagram."
        )
    else:
        lines.append(f"Recommended set: {_labels(result.recommended, label_of)}.")
    return tuple(lines)


def _estimate_rows(result: StudyResult, ratio: bool) -> tuple[tuple[EstimateRow, ...], int]:
    """The estimate lines, formatted to the decimals the narrowest interval supports."""
    wanted = _estimate_lines(result.estimates)
    numbers = [_fit_numbers(fit, ratio) for _, fit, _ in wanted]
    widths = [hi - lo for _, lo, hi in numbers if lo is not None and hi is not None]
    decimals = estimate_decimals(widths, ratio=ratio)
    rows: list[EstimateRow] = []
    for (title, fit, n), (est, lo, hi) in zip(wanted, numbers, strict=True):
        if est is None:
            why = fit.message if isinstance(fit, Fit) else ""
            rows.append(EstimateRow(title, _NOT_AVAILABLE, _one_line(why or "not estimated"), ""))
        else:
            interval = format_interval(lo, hi, decimals)
            count = f"{n:,}" if n is not None else ""
            rows.append(EstimateRow(title, format_number(est, decimals), interval, count))
    return tuple(rows), decimals


def _evalue_text(result: StudyResult) -> str:
    """The E-value line of the recommended estimate, or why there is none."""
    evalue = result.evalue
    if evalue is None:
        return "E-value: not available (no recommended estimate)."
    text = (
        f"E-value: {format_number(evalue.estimate, 2)} for the recommended estimate"
        f"{_contrast_words(result.estimates.get('recommended'), result.exposure_levels)}, "
        f"{format_number(evalue.ci, 2)} for its CI limit nearer the null"
    )
    return text + (f" ({_one_line(evalue.conversion)})." if evalue.conversion else ".")


def _table_caption(ratio: bool, levels: tuple[str, ...]) -> str:
    """What the covariate table's set letters and change columns mean."""
    return (
        "Set: P = in the proposed set, R = in the recommended set. Change and SE inflation: "
        "the covariate added alone to the crude model"
        + (
            " (change on the ratio scale, 100 × (ratio with / ratio without − 1): positive = "
            "a larger ratio with the covariate)"
            if ratio
            else " (positive = a larger estimate with the covariate)"
        )
        + "; VIF: the covariate in the full model."
        + (
            f" For the exposure's levels, the change shown is the contrast against {levels[0]} "
            "that moved most (named in brackets)."
            if levels
            else ""
        )
    )


def _covariate_row(result: StudyResult, node: Node, number: int) -> CovariateRow:
    """One covariate's row: sets, role, the data's evidence and the verdict."""
    facts = result.diagram.roles.get(node.id)
    verdict = result.verdicts.get(node.id)
    ev = result.evidence.covariates.get(node.id) if result.evidence is not None else None
    proposed, recommended = node.id in result.proposed, node.id in result.recommended
    if ev is None:
        change = inflation = vif = "—"
    else:
        change = _change_cell(change_value(ev.added, result.family), ev.joint)
        inflation = format_percent(ev.added.se_inflation_pct)
        vif = format_number(ev.vif, 2)
    return CovariateRow(
        node=node.id,
        key=str(number),
        label=node.label,
        sets=" ".join(flag for flag, inside in (("P", proposed), ("R", recommended)) if inside),
        role=role_words(facts.role if facts is not None else None),
        change=change,
        se_inflation=inflation,
        vif=vif,
        verdict=(verdict.label if verdict is not None else "") or "—",
        verdict_code=verdict.code if verdict is not None else "",
        note=_one_line(node.note),
        proposed=proposed,
        recommended=recommended,
        measured=node.measured,
    )


def _collinearity_lines(result: StudyResult, label_of: Mapping[str, str]) -> tuple[str, ...]:
    """One line per collinear group: which member the recommended set keeps."""
    lines: list[str] = []
    for group in result.collinear_groups:
        kept = [m for m in group if m in result.recommended]
        if not kept:
            suggested = (result.verdicts[m].suggested for m in group if m in result.verdicts)
            kept = [s for s in suggested if s][:1]
        line = f"{_labels(group, label_of)}: "
        line += f"kept {_labels(kept, label_of)}." if kept else "none kept."
        lines.append(line)
    return tuple(lines)


_THRESHOLD_WORDS = (
    ("change_pct", "change in estimate", "%"),
    ("se_inflation_pct", "SE inflation", "%"),
    ("vif", "VIF", ""),
    ("r2", "R²", ""),
    ("condition_index", "condition index", ""),
    ("modification_p", "interaction p", ""),
    ("modification_ratio", "ratio of stratum estimates", ""),
)


def _thresholds_text(result: StudyResult, project: Project) -> str:
    """The guides the verdicts used (the project's when the result has none)."""
    thresholds = dict(result.thresholds) or dict(project.analysis.thresholds)
    parts = [
        f"{words} {thresholds[key]:g}{suffix}"
        for key, words, suffix in _THRESHOLD_WORDS
        if key in thresholds
    ]
    return "Thresholds used, as guides (rules of thumb, editable): " + ", ".join(parts) + "."


def _sketch(result: StudyResult, diagram: Diagram, keys: Mapping[str, str]) -> DiagramSketch:
    """The diagram as drawn, each covariate keyed by its table row and named by role."""
    roles = result.diagram.roles

    def role(n: Node) -> str:
        if n.kind != "covariate":
            return n.kind
        facts = roles.get(n.id)
        return role_words(facts.role if facts is not None else None)

    return DiagramSketch(
        nodes=tuple(
            SketchNode(
                n.id,
                keys.get(n.id, ""),
                n.label,
                n.kind,
                n.measured,
                float(n.x),
                float(n.y),
                n.id in result.proposed,
                role(n),
            )
            for n in diagram.nodes
        ),
        arrows=tuple(diagram.arrows),
        proxies=tuple(diagram.proxies),
    )


def build_content(
    result: StudyResult, project: Project, *, today: _dt.date | None = None
) -> RationaleContent:
    """Build every string of the rationale page.

    Parameters
    ----------
    result : StudyResult
        From :func:`covariscope.study.run_study`.
    project : Project
        The project the result was computed from: labels, notes, positions.
    today : datetime.date, optional
        The date printed; defaults to today.

    Returns
    -------
    RationaleContent

    Examples
    --------
    >>> from covariscope.model import Diagram, Node, Project
    >>> from covariscope.study import run_study
    >>> d = Diagram()
    >>> d.add_node(Node("x", "Shift work", kind="exposure"))
    >>> d.add_node(Node("y", "Blood pressure", kind="outcome"))
    >>> d.add_arrow("x", "y")
    >>> project = Project(d)
    >>> build_content(run_study(project), project).question
    'Effect of Shift work on Blood pressure'
    """
    diagram = project.diagram
    label_of = {n.id: n.label for n in diagram.nodes}
    x_label = label_of.get(result.exposure, result.exposure or "?")
    y_label = label_of.get(result.outcome, result.outcome or "?")
    term = family_term(result.family)
    ratio = term.ratio
    measure = result.effect_measure or ("ratio" if ratio else "mean difference")
    estimates, decimals = _estimate_rows(result, ratio)
    levels = result.exposure_levels
    caption = f"Estimates: {measure} with 95% CI" + (
        f", each level vs {levels[0]}" if levels else ""
    )
    covariates = tuple(
        _covariate_row(result, node, number)
        for number, node in enumerate(diagram.covariates, start=1)
    )
    project_name = project.path.name if project.path is not None else "unsaved project"
    date = (today or _dt.date.today()).isoformat()
    return RationaleContent(
        title="Adjustment rationale",
        question=f"Effect of {x_label} on {y_label}",
        measure=f"Effect measure: {measure} · model family: {term.model}",
        data=_data_lines(result, diagram),
        adjustment=_adjustment_lines(result, diagram, label_of),
        estimates_caption=caption,
        estimates=estimates,
        evalue=_evalue_text(result),
        covariate_headers=_headers(ratio),
        table_caption=_table_caption(ratio, levels),
        covariates=covariates,
        collinearity=_collinearity_lines(result, label_of),
        disagreements=tuple(_finding(s, label_of) for s in result.disagreements),
        messages=_page_messages(
            result, label_of, shown_insufficient=not result.diagram.review.sufficient
        ),
        thresholds=_thresholds_text(result, project),
        cautions=CAUTIONS,
        footer=f"{date} · Covariscope {__version__} · project {project_name}",
        diagram=_sketch(result, diagram, {r.node: r.key for r in covariates}),
        decimals=decimals,
        ratio=ratio,
        exposure=x_label,
        outcome=y_label,
        project_name=project_name,
        residual=tuple(flagged_residual_lines(result.residual_confounding, label_of)),
        diagram_checks=_checks_line(result, label_of),
        modification=tuple(flagged_lines(result.modification, label_of)),
    )


def _headers(ratio: bool) -> tuple[str, ...]:
    """The covariate table's column titles."""
    change = "Change (ratio) %" if ratio else "Change %"
    return ("#", "Covariate", "Set", "Role", change, "SE infl. %", "VIF", "Verdict", "Note")
