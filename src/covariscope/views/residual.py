"""The residual-confounding check and the spline choice, in words.

The numbers come from :mod:`covariscope.analysis.splines`; this module names
and formats them, and says what a user's choice of form changes."""

from __future__ import annotations

from collections.abc import Mapping

from covariscope.analysis.splines import ResidualCheck
from covariscope.model.project import Project
from covariscope.views.format import number, percent

__all__ = [
    "FORM_CHOICES",
    "flagged_residual_lines",
    "residual_figures",
    "residual_line",
    "spline_knots_after",
]

#: The forms a continuous covariate may take: (knots, label); 0 is linear.
FORM_CHOICES: tuple[tuple[int, str], ...] = (
    (0, "Linear"),
    *((k, f"Natural cubic spline, {k} knots") for k in range(3, 8)),
)


def residual_figures(check: ResidualCheck | None, name: str) -> list[tuple[str, str]]:
    """Rows for the dialog's figures table."""
    if check is None:
        return []
    if check.message:
        return [(f"Residual-confounding check of {name}", check.message)]
    verdict = (
        "past the change guide: consider the spline" if check.flagged else "within the change guide"
    )
    return [
        (f"Exposure estimate with {name} linear (recommended model)", number(check.linear, 3)),
        (f"… with {name} as a spline ({check.knots} knots)", number(check.spline, 3)),
        (f"Change, linear → spline (%; {verdict})", percent(check.change_pct)),
    ]


def residual_line(check: ResidualCheck, name: str) -> str:
    """One line for the page or ``check`` text, for a flagged confounder."""
    return (
        f"{name}: entered as a natural cubic spline ({check.knots} knots) instead of linearly, "
        f"it moves the exposure estimate by {percent(check.change_pct)}% (past the change "
        "guide): its effect is curved, and the linear form leaves residual confounding; "
        "consider the spline."
    )


def flagged_residual_lines(
    checks: Mapping[str, ResidualCheck], names: Mapping[str, str]
) -> list[str]:
    """:func:`residual_line` for every flagged confounder."""
    return [residual_line(r, names.get(c, c) or c) for c, r in checks.items() if r.flagged]


def spline_knots_after(project: Project, column: str, knots: int) -> dict[str, int] | None:
    """The project's spline choices once ``column`` takes ``knots`` (0: linear);
    None when nothing changes."""
    current = dict(project.analysis.spline_knots)
    if current.get(column, 0) == knots:
        return None
    if knots:
        current[column] = knots
    else:
        current.pop(column, None)
    return current
