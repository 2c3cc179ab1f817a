"""The estimates strip: crude, proposed and recommended estimates with their
confidence intervals, and the E-value, in the study's effect measure."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

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


def display_scale(fit: Any, family: str) -> tuple[float, float, float] | None:
    """Estimate and CI on the scale the user reads: the ratio for ratio
    families, the coefficient otherwise; None when not fitted."""
    if not fit_ok(fit):
        return None
    lo, hi = fit.ci
    if ratio_family(family):
        return math.exp(fit.coef), math.exp(lo), math.exp(hi)
    return float(fit.coef), float(lo), float(hi)


def _terms_text(fit: Any, fallback: tuple[str, ...]) -> str:
    terms = tuple(getattr(fit, "terms", ()) or fallback)
    return "adjusted for " + ", ".join(terms) if terms else "no adjustment"


def estimate_cells(result: Any) -> list[EstimateCell]:
    """The three cells of the strip (dashes before any analysis).

    ``result`` is a :class:`covariscope.study.StudyResult` or None.
    """
    cells = []
    family = getattr(result, "family", "linear") if result is not None else "linear"
    estimates = getattr(result, "estimates", {}) or {} if result is not None else {}
    for key, title in ESTIMATE_KEYS:
        fit = estimates.get(key)
        shown = display_scale(fit, family)
        sets = {
            "proposed": tuple(getattr(result, "proposed", ()) or ()),
            "recommended": tuple(getattr(result, "recommended", ()) or ()),
        }
        if shown is None:
            why = getattr(fit, "message", "") if fit is not None else ""
            cells.append(
                EstimateCell(key, title, DASH, "", "", why or "Not estimated yet (no data bound?)")
            )
            continue
        est, lo, hi = shown
        terms = _terms_text(fit, sets.get(key, ()))
        ci = f"95% CI {number(lo)} to {number(hi)}"
        n = getattr(fit, "n", None)
        tip = f"{title}: {number(est)} ({ci}), {terms}" + (f", n = {n}" if n else "")
        contrasts = tuple(getattr(fit, "contrasts", ()) or ())
        if contrasts:
            ref, level = _reference(result), str(getattr(fit, "contrast", ""))
            ci = f"{level} vs {ref}; CI {number(lo)} to {number(hi)}"
            tip += contrast_lines(contrasts, family, ref, level)
        cells.append(EstimateCell(key, title, number(est), ci, terms, tip))
    return cells


def _reference(result: Any) -> str:
    levels = tuple(getattr(result, "exposure_levels", ()) or ())
    return levels[0] if levels else ""


def contrast_lines(contrasts: tuple[Any, ...], family: str, reference: str, shown: str) -> str:
    """Every contrast of a multi-level exposure, one line each (for tooltips)."""
    lines = []
    for c in contrasts:
        ratio = ratio_family(family) and c.ratio is not None and c.ratio_ci is not None
        est, (lo, hi) = (c.ratio, c.ratio_ci) if ratio else (c.coef, c.ci)
        mark = " (shown: it moved most from the crude estimate)" if c.level == shown else ""
        lines.append(
            f"\n{c.level} vs {reference}: {number(est)} (95% CI {number(lo)} to {number(hi)}){mark}"
        )
    return "".join(lines)


def evalue_text(result: Any) -> tuple[str, str]:
    """(short text, tooltip) for the E-value of the recommended estimate."""
    ev = getattr(result, "evalue", None) if result is not None else None
    if ev is None:
        return DASH, "E-value: not available until the recommended model is fitted."
    est = getattr(ev, "estimate", None)
    ci = getattr(ev, "ci", None)
    text = number(est)
    if is_number(ci):
        text += f" (CI limit {number(ci)})"
    conversion = getattr(ev, "conversion", "") or ""
    tip = (
        "E-value (VanderWeele & Ding 2017): how strongly an unmeasured confounder would have "
        "to be associated with both exposure and outcome to explain away the estimate."
    )
    if conversion:
        tip += " " + conversion
    return text, tip
