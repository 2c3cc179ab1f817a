"""Every word and number of the one-page adjustment rationale, without Qt.

:func:`build_content` turns a study result and its project into a
:class:`RationaleContent`: frozen dataclasses holding the finished strings
and table rows, so the painter only places them and never formats a number.
The number formats live here, in :func:`format_number` and
:func:`estimate_decimals`, so a script that reads ``covariscope check --json``
can round the same way and find the printed value.

The study result is read by attribute (see ``notes/STUDY_API.md``); fields
that are missing or None are reported as "not available" rather than failing.
"""

from __future__ import annotations

import datetime as _dt
import math
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from itertools import pairwise
from typing import Any

from covariscope import __version__
from covariscope.analysis.adjustment import ProposalReview
from covariscope.analysis.claim_wording import SHORT_CAUTION, summary_line
from covariscope.analysis.proposal_wording import (
    PROPOSED_SET,
    collider_openers,
    descendant_reasons,
    unnecessary_words,
)
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


def _get(obj: Any, name: str, default: Any = None) -> Any:
    if obj is None:
        return default
    if isinstance(obj, Mapping):
        return obj.get(name, default)
    return getattr(obj, name, default)


def _contrast_words(fit: Any, levels: tuple[str, ...]) -> str:
    """`` (high vs low)`` for a multi-level exposure's estimate, else nothing."""
    contrast = _get(fit, "contrast", "") if fit is not None else ""
    return f" ({contrast} vs {levels[0]})" if contrast and levels else ""


def _change_cell(change: float | None, joint: Any) -> str:
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


def _estimate_lines(estimates: Mapping[str, Any]) -> list[tuple[str, Any, Any]]:
    """(title, fit or contrast, rows) of every estimate line: one per model, or
    for a multi-level exposure one per model and contrast."""
    lines: list[tuple[str, Any, Any]] = []
    for key, title in _ESTIMATE_TITLES:
        fit = estimates.get(key)
        n = _get(fit, "n") if fit is not None else None
        contrasts = tuple(_get(fit, "contrasts", ()) or ()) if fit is not None else ()
        if contrasts and _get(fit, "ok", True):
            lines += [(f"{title}: {c.level}", c, n) for c in contrasts]
        else:
            lines.append((title, fit, n))
    return lines


def _fit_numbers(fit: Any, ratio: bool) -> tuple[float | None, float | None, float | None]:
    """(estimate, lower, upper) on the scale shown: ratios for ratio families."""
    if fit is None or not _get(fit, "ok", True):
        return None, None, None
    coef = _get(fit, "coef")
    ci = _get(fit, "ci") or (None, None)
    if coef is None or not math.isfinite(coef):
        return None, None, None
    if ratio:
        r = _get(fit, "ratio")
        rci = _get(fit, "ratio_ci")
        if r is None:
            r = math.exp(coef)
        if rci is None:
            rci = tuple(math.exp(c) if c is not None and math.isfinite(c) else None for c in ci)
        return r, rci[0], rci[1]
    return coef, ci[0], ci[1]


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
    result: Any, label_of: Mapping[str, str], *, shown_insufficient: bool
) -> tuple[str, ...]:
    """The engine's messages minus those the page already says in its own
    sections (the sample, an insufficient set, the cautions)."""
    sample_message = _one_line(_get(_get(result, "sample"), "message", "") or "")
    out: list[str] = []
    for raw in _get(result, "messages", ()) or ():
        text = _one_line(raw)
        if not text or text == sample_message:
            continue  # the Data section gives rows used and lost
        if shown_insufficient and text.startswith("The proposed set") and "not sufficient" in text:
            continue  # the Adjustment set section says so, with the open paths
        if raw == CAUTION_BRIEF:
            continue  # the Cautions section says it in full
        out.append(name_nodes(text, label_of))
    return tuple(dict.fromkeys(out))


def _checks_line(result: Any, label_of: Mapping[str, str]) -> str:
    checks = _get(result, "diagram_checks")
    if checks is None:
        return ""
    return f"{summary_line(checks, label_of, top=2, short=True)} {SHORT_CAUTION}"


def build_content(result: Any, project: Any, *, today: _dt.date | None = None) -> RationaleContent:
    """Build every string of the rationale page.

    Parameters
    ----------
    result : StudyResult
        From :func:`covariscope.study.run_study` (read by attribute).
    project : Project
        The project the result was computed from: labels, notes, positions.
    today : datetime.date, optional
        The date printed; defaults to today.

    Returns
    -------
    RationaleContent

    Examples
    --------
    >>> from types import SimpleNamespace as Ns
    >>> from covariscope.model import Diagram, Node, Project
    >>> d = Diagram()
    >>> d.add_node(Node("x", "Shift work", kind="exposure"))
    >>> d.add_node(Node("y", "Blood pressure", kind="outcome"))
    >>> r = Ns(exposure="x", outcome="y", family="linear", effect_measure="mean difference")
    >>> build_content(r, Project(d)).question
    'Effect of Shift work on Blood pressure'
    """
    diagram = project.diagram
    label_of = {n.id: n.label for n in diagram.nodes}
    exposure = _get(result, "exposure")
    outcome = _get(result, "outcome")
    x_label = label_of.get(exposure, exposure or "?")
    y_label = label_of.get(outcome, outcome or "?")
    family = _get(result, "family") or "linear"
    ratio = family_term(family).ratio
    measure = _get(result, "effect_measure") or ("ratio" if ratio else "mean difference")

    proposed = tuple(_get(result, "proposed", ()) or ())
    recommended = tuple(_get(result, "recommended", ()) or ())
    analysis = _get(result, "diagram")
    roles = _get(analysis, "roles", {}) or {}
    verdicts = _get(result, "verdicts", {}) or {}
    evidence = _get(result, "evidence")
    ev_covariates = _get(evidence, "covariates", {}) or {}
    arrows = set(diagram.arrows)

    # -- data -------------------------------------------------------------------------
    data_lines: list[str] = []
    name = _get(result, "data_name")
    sha = _get(result, "data_sha256")
    sample = _get(result, "sample")
    if name or sample is not None:
        line = f"File: {name or 'unnamed'}"
        if sha:
            line += f"  (SHA-256 {str(sha)[:12]})"
        data_lines.append(line)
    if sample is not None:
        rows = int(_get(sample, "rows", 0) or 0)
        used = int(_get(sample, "used", 0) or 0)
        data_lines.append(f"Rows used: {used:,} of {rows:,} in the file (complete cases).")
        lost = _get(sample, "lost_by_column") or _get(sample, "missing_by_column") or {}
        lost = {c: int(v) for c, v in dict(lost).items() if v}
        if rows - used > 0:
            # people read the diagram's labels; a column no node is bound to keeps its name
            label_of_column = {n.column: n.label for n in diagram.nodes if n.column}
            detail = ", ".join(
                f"{label_of_column.get(c, c)} {v:,}"
                for c, v in sorted(lost.items(), key=lambda kv: (-kv[1], kv[0]))
            )
            text = f"Rows lost: {rows - used:,}"
            data_lines.append(text + (f", missing in {detail}." if detail else "."))
        else:
            data_lines.append("Rows lost: none.")
    else:
        data_lines.append("No data bound: the page shows what the diagram says only.")

    # -- adjustment set ---------------------------------------------------------------
    adjustment: list[str] = []
    review = _get(analysis, "review") or _get(analysis, "proposal")
    sufficient = _get(review, "sufficient")
    chosen = _labels(proposed, label_of)
    role_of = {c: _get(f, "role") for c, f in roles.items()}
    if sufficient is True:
        adjustment.append(f"{PROPOSED_SET}: {chosen} — sufficient, the diagram says.")
    elif sufficient is False:
        typed = isinstance(review, ProposalReview)
        reasons = descendant_reasons(review, role_of, label_of) if typed else ()
        adjustment.append(f"{PROPOSED_SET}: {chosen} — NOT sufficient" + (":" if typed else "."))
        adjustment.extend(f"{r[0].upper()}{r[1:]}." for r in reasons)
        listed = tuple(_get(review, "open_paths", ()) or ())
        for path in listed:
            adjustment.append(f"Open path: {_path_text(path, arrows, label_of)}")
        total = _get(review, "open_paths_total", len(listed))
        exact = _get(review, "open_paths_total_exact", True)
        if not exact or total > len(listed):
            count = f"{total:,}" if exact else f"at least {total:,}"
            adjustment.append(f"Open paths in all: {count}; {len(listed)} are shown.")
    else:
        adjustment.append(f"{PROPOSED_SET}: {chosen}.")
    if isinstance(review, ProposalReview) and review.unnecessary:
        adjustment.append(f"Unnecessary in it: {unnecessary_words(review, label_of)}.")
    if isinstance(review, ProposalReview):  # the descendants are named above
        if openers := collider_openers(review):
            adjustment.append(f"Opens a collider path: {_labels(openers, label_of)}.")
    elif harmful := tuple(_get(review, "harmful", ()) or ()):
        adjustment.append(f"Harmful in it: {_labels(harmful, label_of)}.")
    if _get(analysis, "identifiable") is False:
        adjustment.append(
            "No set of measured covariates suffices: the effect is not identified by "
            "adjustment in this diagram."
        )
    elif recommended or _get(result, "recommended") is not None:
        adjustment.append(f"Recommended set: {_labels(recommended, label_of)}.")

    # -- estimates --------------------------------------------------------------------
    estimates = _get(result, "estimates", {}) or {}
    wanted = _estimate_lines(estimates)
    numbers = [_fit_numbers(fit, ratio) for _, fit, _ in wanted]
    widths = [hi - lo for _, lo, hi in numbers if lo is not None and hi is not None]
    decimals = estimate_decimals(widths, ratio=ratio)
    rows_out: list[EstimateRow] = []
    for (title, fit, n), (est, lo, hi) in zip(wanted, numbers, strict=True):
        if est is None:
            why = _one_line(_get(fit, "message", "") or "not estimated") if fit else "not estimated"
            rows_out.append(EstimateRow(title, _NOT_AVAILABLE, why, ""))
        else:
            rows_out.append(
                EstimateRow(
                    title,
                    format_number(est, decimals),
                    format_interval(lo, hi, decimals),
                    f"{int(n):,}" if n is not None else "",
                )
            )
    estimates_caption = f"Estimates: {measure} with 95% CI"
    levels = tuple(_get(result, "exposure_levels", ()) or ())
    if levels:
        estimates_caption += f", each level vs {levels[0]}"

    evalue = _get(result, "evalue")
    if evalue is not None and _get(evalue, "estimate") is not None:
        text = (
            f"E-value: {format_number(_get(evalue, 'estimate'), 2)} for the recommended estimate"
            f"{_contrast_words(estimates.get('recommended'), levels)}, "
            f"{format_number(_get(evalue, 'ci'), 2)} for its CI limit nearer the null"
        )
        conversion = _get(evalue, "conversion")
        evalue_text = text + (f" ({_one_line(conversion)})." if conversion else ".")
    else:
        evalue_text = "E-value: not available (no recommended estimate)."

    # -- covariate table ----------------------------------------------------------------
    change_header = "Change (ratio) %" if ratio else "Change %"
    headers = (
        "#",
        "Covariate",
        "Set",
        "Role",
        change_header,
        "SE infl. %",
        "VIF",
        "Verdict",
        "Note",
    )
    table_caption = (
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
    cov_rows: list[CovariateRow] = []
    for number, node in enumerate(diagram.covariates, start=1):
        facts = roles.get(node.id)
        verdict = verdicts.get(node.id)
        ev = ev_covariates.get(node.id)
        added = _get(ev, "added")
        change = change_value(added, family)
        cov_rows.append(
            CovariateRow(
                node=node.id,
                key=str(number),
                label=node.label,
                sets=" ".join(
                    flag
                    for flag, inside in (("P", node.id in proposed), ("R", node.id in recommended))
                    if inside
                ),
                role=role_words(_get(facts, "role") if facts is not None else None),
                change=_change_cell(change, _get(ev, "joint")) if ev is not None else "—",
                se_inflation=format_percent(_get(added, "se_inflation_pct"))
                if ev is not None
                else "—",
                vif=format_number(_get(ev, "vif"), 2) if ev is not None else "—",
                verdict=_get(verdict, "label", "—") or "—",
                verdict_code=_get(verdict, "code", "") or "",
                note=_one_line(node.note),
                proposed=node.id in proposed,
                recommended=node.id in recommended,
                measured=node.measured,
            )
        )

    # -- findings -----------------------------------------------------------------------
    collinearity: list[str] = []
    for group in _get(result, "collinear_groups", ()) or ():
        kept = [m for m in group if m in recommended]
        if not kept:
            kept = [
                _get(verdicts.get(m), "suggested")
                for m in group
                if _get(verdicts.get(m), "suggested")
            ][:1]
        line = f"{_labels(group, label_of)}: "
        line += f"kept {_labels(kept, label_of)}." if kept else "none kept."
        collinearity.append(line)
    disagreements = tuple(_finding(s, label_of) for s in (_get(result, "disagreements", ()) or ()))
    messages = _page_messages(result, label_of, shown_insufficient=sufficient is False)

    thresholds = dict(_get(result, "thresholds", {}) or {})
    if not thresholds:
        thresholds = dict(getattr(project.analysis, "thresholds", {}) or {})
    parts = []
    for key, words, suffix in (
        ("change_pct", "change in estimate", "%"),
        ("se_inflation_pct", "SE inflation", "%"),
        ("vif", "VIF", ""),
        ("r2", "R²", ""),
        ("condition_index", "condition index", ""),
        ("modification_p", "interaction p", ""),
        ("modification_ratio", "ratio of stratum estimates", ""),
    ):
        if key in thresholds:
            parts.append(f"{words} {thresholds[key]:g}{suffix}")
    thresholds_text = (
        "Thresholds used, as guides (rules of thumb, editable): " + ", ".join(parts) + "."
    )

    # -- diagram ------------------------------------------------------------------------
    keys = {r.node: r.key for r in cov_rows}
    sketch = DiagramSketch(
        nodes=tuple(
            SketchNode(
                n.id,
                keys.get(n.id, ""),
                n.label,
                n.kind,
                n.measured,
                float(n.x),
                float(n.y),
                n.id in proposed,
                role_words(_get(roles.get(n.id), "role")) if n.kind == "covariate" else n.kind,
            )
            for n in diagram.nodes
        ),
        arrows=tuple(diagram.arrows),
        proxies=tuple(diagram.proxies),
    )

    path = getattr(project, "path", None)
    project_name = path.name if path is not None else "unsaved project"
    date = (today or _dt.date.today()).isoformat()
    footer = f"{date} · Covariscope {__version__} · project {project_name}"

    return RationaleContent(
        title="Adjustment rationale",
        question=f"Effect of {x_label} on {y_label}",
        measure=f"Effect measure: {measure} · model family: {family_term(family).model}",
        data=tuple(data_lines),
        adjustment=tuple(adjustment),
        estimates_caption=estimates_caption,
        estimates=tuple(rows_out),
        evalue=evalue_text,
        covariate_headers=headers,
        table_caption=table_caption,
        covariates=tuple(cov_rows),
        collinearity=tuple(collinearity),
        disagreements=disagreements,
        messages=messages,
        thresholds=thresholds_text,
        cautions=CAUTIONS,
        footer=footer,
        diagram=sketch,
        decimals=decimals,
        ratio=ratio,
        exposure=x_label,
        outcome=y_label,
        project_name=project_name,
        residual=tuple(
            flagged_residual_lines(_get(result, "residual_confounding", {}) or {}, label_of)
        ),
        diagram_checks=_checks_line(result, label_of),
        modification=tuple(flagged_lines(_get(result, "modification", {}) or {}, label_of)),
    )
