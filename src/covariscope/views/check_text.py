"""The readable review that ``covariscope check`` prints."""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping

from covariscope.analysis.claim_wording import (
    CAUTION,
    disagree_sentence,
    suggestion_words,
    summary_line,
    untestable_words,
)
from covariscope.analysis.collinearity import CollinearityReport
from covariscope.analysis.families import family_of
from covariscope.analysis.fits import Fit
from covariscope.analysis.proposal_wording import (
    PROPOSED_SET,
    sufficiency_sentence,
    unnecessary_words,
)
from covariscope.analysis.verdicts import format_set
from covariscope.study.result import ESTIMATE_KEYS, StudyResult
from covariscope.views.format import term_names
from covariscope.views.modification import flagged_lines
from covariscope.views.residual import flagged_residual_lines
from covariscope.vocabulary import (
    CAUTIONS,
    CHANGE_SIGN,
    CHANGE_SIGN_RATIO,
    REVIEW_COLUMN_TERMS,
    ROLE_TERMS,
    VERDICT_TERMS,
    ReviewColumn,
    change_read,
    role_label,
    verdict_label,
)

__all__ = ["OPEN_PATHS_SHOWN", "format_study_text"]

#: Open backdoor paths the readable review lists; the rest are counted.
OPEN_PATHS_SHOWN = 5


def _fmt(value: float | None, spec: str = ".1f", suffix: str = "") -> str:
    if value is None or not math.isfinite(value):
        return "–"
    if spec.endswith("f") and not round(value, int(spec[-2])):
        value = 0.0  # never "-0.0"
    return f"{value:{spec}}{suffix}"


def _estimate_line(name: str, fit: Fit | None, measure: str) -> str:
    if fit is None:
        return f"  {name:<12} not fitted"
    if not fit.ok:
        return f"  {name:<12} could not be fitted: {fit.message}"
    if fit.ratio is not None and fit.ratio_ci is not None:
        lo, hi = fit.ratio_ci
        return f"  {name:<12} {measure} {fit.ratio:.3f} (95% CI {lo:.3f} to {hi:.3f}), n = {fit.n}"
    lo, hi = fit.ci
    return (
        f"  {name:<12} {measure} {fit.coef:.3f} (95% CI {lo:.3f} to {hi:.3f}), "
        f"SE {fit.se:.3f}, n = {fit.n}"
    )


def _checks_lines(result: StudyResult) -> list[str]:
    """The diagram checks: the summary, every failed claim with its suggestion, the caution."""
    checks = result.diagram_checks
    if checks is None:
        return []
    names = result.names
    lines = [summary_line(checks, names)]
    for r in checks.ranked():
        if not r.failed:
            break
        lines.append(f"  - {disagree_sentence(r, names)} {suggestion_words(r, names)}")
    for u in checks.untestable:
        lines.append(f"  · {result.name(u.a)} – {result.name(u.b)}: {untestable_words(u, names)}")
    lines.append(f"  {CAUTION}")
    lines.append("")
    return lines


def format_study_text(result: StudyResult) -> str:
    """The readable review that ``covariscope check`` prints."""
    t = result.thresholds
    nm = result.name

    def named(ids: Iterable[str]) -> str:
        return format_set(nm(i) for i in ids)

    width = min(24, max([9, *(len(nm(c)) for c in result.verdicts)]))
    lines = [
        f"Effect of {nm(result.exposure)} on {nm(result.outcome)} ({result.family} model, "
        f"{result.effect_measure})",
        f"Data: {result.data_name or 'none'}"
        + (
            f"; {result.sample.used} of {result.sample.rows} rows used (complete cases)"
            if result.sample is not None and result.evidence is not None
            else ""
        ),
        f"Guides (not rules): change {t['change_pct']:g}%, SE inflation {t['se_inflation_pct']:g}%, "
        f"VIF {t['vif']:g}, R² {t['r2']:g}, condition index {t['condition_index']:g}",
        "",
    ]
    ev = result.evidence
    role_w = max(len(t.label) for t in ROLE_TERMS.values())
    verdict_w = max(len(t.label) for t in VERDICT_TERMS.values())
    header = (
        f"{'covariate':<{width}} {'role':<{role_w}} {'verdict':<{verdict_w}} {'change %':>9} "
        f"{'SE infl %':>10} {'VIF':>7}"
    )
    lines += [header, "-" * len(header)]
    for c, v in result.verdicts.items():
        e = ev.covariates.get(c) if ev is not None else None
        change = se = vif = None
        if e is not None:
            change = change_read(
                e.added.change_pct if e.added.change_defined else None,
                e.added.change_pct_ratio,
                ratio=family_of(result.family).ratio,
            )
            se = e.added.se_inflation_pct
            vif = e.vif  # of the covariate in the full model; none when it is not a candidate
        lines.append(
            f"{nm(c)[:width]:<{width}} {role_label(result.diagram.roles[c].role):<{role_w}} "
            f"{verdict_label(v.code):<{verdict_w}} {_fmt(change, '+.1f'):>9} "
            f"{_fmt(se, '+.1f'):>10} {_fmt(vif, '.2f'):>7}"
        )
    unsettled = result.diagram.roles_unsettled
    if unsettled:
        lines.append(
            f"roles of {len(unsettled):,} covariate(s) not settled: a search stopped at its "
            "work budget (see the messages)"
        )
    ratio = family_of(result.family).ratio
    lines.append(
        "change % and SE infl %: the covariate added alone to the crude model; "
        "VIF: the covariate in the full model (– when it is not a candidate)."
    )
    lines.append(
        "change %: "
        + REVIEW_COLUMN_TERMS[ReviewColumn.CHANGE_ADDED].formula_for(ratio)
        + ". "
        + (CHANGE_SIGN_RATIO if ratio else CHANGE_SIGN)
    )
    if result.exposure_levels:
        lines.append(
            "The exposure has several levels: change % and SE infl % are those of the contrast "
            "that moved most, named in each reason; the JSON output lists every contrast."
        )
    lines.append("")
    lines.append("Reasons:")
    for c, v in result.verdicts.items():
        lines.append(f"  {nm(c)}: {v.reason}")
    lines.append("")
    da = result.diagram
    sets = "; ".join(named(s) for s in da.minimal_sets) or "none (not identified by adjustment)"
    lines.append(f"Minimal sufficient sets: {sets}")
    if not da.minimal_sets_complete:
        lines.append(f"    the first {len(da.minimal_sets)} listed; more exist (see the messages)")
    roles = {c: r.role for c, r in da.roles.items()}
    lines.append(
        f"{PROPOSED_SET}: {named(result.proposed)} — "
        + sufficiency_sentence(da.review, roles, result.names)
    )
    if da.review.open_paths:
        shown = da.review.open_paths[:OPEN_PATHS_SHOWN]
        for p in shown:
            lines.append(f"    open: {' – '.join(nm(n) for n in p)}")
        if len(shown) < da.review.open_paths_total or not da.review.open_paths_total_exact:
            lines.append(f"    showing {len(shown)} of {da.review.open_paths_text()} open paths")
    if da.review.harmful:
        lines.append(f"    harmful: {', '.join(nm(n) for n in da.review.harmful)}")
    if da.review.unnecessary:
        lines.append(f"    unnecessary: {unnecessary_words(da.review, result.names)}")
    lines.append(f"Recommended set: {named(result.recommended) if result.recommended else 'none'}")
    if result.recommended_reason:
        lines.append(f"    {result.recommended_reason}")
    if result.collinear_groups:
        keep_one = result.keep_one_groups
        described = []
        for g in result.collinear_groups:
            inside = [k for k in keep_one if set(k) <= set(g)]
            needed = [m for m in g if not any(m in k for k in inside)]
            if not inside:
                note = "the diagram needs every member"
            elif not needed:
                note = "keep one"
            else:
                note = "; ".join(f"keep one of {named(k)}" for k in inside)
                note += f"; the diagram needs {', '.join(nm(m) for m in needed)}"
            described.append(f"{named(g)} ({note})")
        lines.append("Collinear groups: " + "; ".join(described))
    if ev is not None and ev.collinearity.condition_indices.size:
        lines.append(condition_index_line(ev.collinearity, result.names))
    lines.append("")
    if ev is not None:
        lines.append("Estimates:")
        for key in ESTIMATE_KEYS:
            fit = result.estimates.get(key)
            if fit is not None and fit.ok and fit.contrasts:
                ref = result.exposure_levels[0] if result.exposure_levels else ""
                lines.append(f"  {key:<12} each level against {ref}:")
                lines += [
                    _estimate_line(f"  {c.level}", fit.for_contrast(c.level), result.effect_measure)
                    for c in fit.contrasts
                ]
            else:
                lines.append(_estimate_line(key, fit, result.effect_measure))
        if result.evalue is not None:
            lines.append(
                f"E-value (recommended): {result.evalue.estimate:.2f} for the estimate, "
                f"{result.evalue.ci:.2f} for the CI limit nearer the null ({result.evalue.conversion})"
            )
        lines.append("")
    lines += _checks_lines(result)
    if result.disagreements:
        lines.append("Where diagram and data disagree:")
        lines += [f"  - {d}" for d in result.disagreements]
        lines.append("")
    for heading, found in (
        (
            "Residual confounding (curved continuous confounders):",
            flagged_residual_lines(result.residual_confounding, result.names),
        ),
        (
            "Effect modification (not confounding):",
            flagged_lines(result.modification, result.names),
        ),
    ):
        if found:
            lines.append(heading)
            lines += [f"  - {line}" for line in found]
            lines.append("")
    lines.append("Cautions:")
    lines += [f"  - {m}" for m in (*result.messages, *CAUTIONS)]
    return "\n".join(lines) + "\n"


def condition_index_line(report: CollinearityReport, names: Mapping[str, str] | None = None) -> str:
    """The full model's condition indices, ascending, and the flagged
    dimensions with the variables that share them, by their labels in
    ``names`` (node id → label) (Belsley, Kuh & Welsch)."""
    words = term_names(report.columns, report.nodes, names or {})
    indices = ", ".join(f"{i:.1f}" for i in report.condition_indices.tolist())
    line = f"Condition indices (full model, ascending): {indices}"
    if not report.flagged:
        return line + f"; none flagged (guide {report.index_threshold:g})."
    parts = []
    for f in report.flagged:
        shares = ", ".join(
            f"{words.get(term, term)} {p:.2f}"
            for term, p in zip(f.columns, f.proportions, strict=True)
        )
        parts.append(f"{f.index:.1f} shared by {shares}")
    return (
        line
        + f"; flagged at the guide {report.index_threshold:g} "
        + "(variance proportions): "
        + "; ".join(parts)
        + "."
    )
