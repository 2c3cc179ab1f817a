"""The estimates strip: crude, proposed and recommended estimates with their
confidence intervals, and the E-value, in the study's effect measure."""

from __future__ import annotations

import math
from dataclasses import dataclass

from covariscope.analysis.fits import Contrast, Fit
from covariscope.study.result import StudyResult
from covariscope.views.format import DASH, fit_ok, is_number, number, ratio_family

__all__ = [
    "ESTIMATE_KEYS",
    "EstimateCell",
    "contrast_lines",
    "display_scale",
    "estimate_cells",
    "evalue_text",
]

#: The strip's estimates, in order, with their titles.
ESTIMATE_KEYS: tuple[tuple[str, str], ...] = (
    ("crude", "Crude"),
    ("proposed", "Proposed set"),
    ("recommended", "Recommended set"),
)


@dataclass(frozen=True)
class EstimateCell:
    """One estimate as the strip shows it."""

    key: str
    title: str
    value: str
    ci: str
    terms: str
    tooltip: str


def display_scale(fit: Fit | None, family: str) -> tuple[float, float, float] | None:
    """Estimate and CI on the scale the user reads: the ratio for ratio
    families, the coefficient otherwise; None when not fitted."""
    if fit is None or not fit_ok(fit):
        return None
    lo, hi = fit.ci
    if ratio_family(family):
        return math.exp(fit.coef), math.exp(lo), math.exp(hi)
    return float(fit.coef), float(lo), float(hi)


def _terms_text(fit: Fit, fallback: tuple[str, ...]) -> str:
    terms = tuple(fit.terms or fallback)
    return "adjusted for " + ", ".join(terms) if terms else "no adjustment"


def estimate_cells(result: StudyResult | None) -> list[EstimateCell]:
    """The three cells of the strip (dashes before any analysis)."""
    cells = []
    family = result.family if result is not None else "linear"
    estimates = result.estimates if result is not None else {}
    sets = (
        {"proposed": result.proposed, "recommended": result.recommended}
        if result is not None
        else {}
    )
    for key, title in ESTIMATE_KEYS:
        fit = estimates.get(key)
        shown = display_scale(fit, family)
        if fit is None or shown is None:
            why = fit.message if fit is not None else ""
            cells.append(
                EstimateCell(key, title, DASH, "", "", why or "Not estimated yet (no data bound?)")
            )
            continue
        est, lo, hi = shown
        terms = _terms_text(fit, sets.get(key, ()))
        ci = f"95% CI {number(lo)} to {number(hi)}"
        tip = f"{title}: {number(est)} ({ci}), {terms}" + (f", n = {fit.n}" if fit.n else "")
        if fit.contrasts and result is not None:
            ref, level = _reference(result), fit.contrast
            ci = f"{level} vs {ref}; CI {number(lo)} to {number(hi)}"
            tip += contrast_lines(fit.contrasts, family, ref, level)
        cells.append(EstimateCell(key, title, number(est), ci, terms, tip))
    return cells


def _reference(result: StudyResult) -> str:
    levels = result.exposure_levels
    return levels[0] if levels else ""


def contrast_lines(contrasts: tuple[Contrast, ...], family: str, reference: str, shown: str) -> str:
    """Every contrast of a multi-level exposure, one line each (for tooltips)."""
    lines = []
    for c in contrasts:
        est, (lo, hi) = c.coef, c.ci
        if ratio_family(family) and c.ratio is not None and c.ratio_ci is not None:
            est, (lo, hi) = c.ratio, c.ratio_ci
        mark = " (shown: it moved most from the crude estimate)" if c.level == shown else ""
        lines.append(
            f"\n{c.level} vs {reference}: {number(est)} (95% CI {number(lo)} to {number(hi)}){mark}"
        )
    return "".join(lines)


def evalue_text(result: StudyResult | None) -> tuple[str, str]:
    """(short text, tooltip) for the E-value of the recommended estimate."""
    ev = result.evalue if result is not None else None
    if ev is None:
        return DASH, "E-value: not available until the recommended model is fitted."
    text = number(ev.estimate)
    if is_number(ev.ci):
        text += f" (CI limit {number(ev.ci)})"
    conversion = ev.conversion or ""
    tip = (
        "E-value (VanderWeele & Ding 2017): how strongly an unmeasured confounder would have "
        "to be associated with both exposure and outcome to explain away the estimate."
    )
    if conversion:
        tip += " " + conversion
    return text, tip
