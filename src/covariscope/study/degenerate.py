"""Designs that cannot answer the question, found before any model is fitted.

Each check is by class, not by case: a column bound twice in roles that
exclude each other, a numeric column spoiled by a few text values, values
whose squares leave double precision, and an outcome that the exposure
determines exactly.  For the exposure and the outcome (and the columns the
family reads beside them) the study stops with a :class:`DesignError`; a
covariate with the same problem is left out with a message, and the rest of
the study runs.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from typing import Any

from covariscope.analysis.collinearity import AliasFinding
from covariscope.analysis.families import family_of
from covariscope.data.profile import ColumnProfile
from covariscope.errors import DesignError
from covariscope.model.diagram import Diagram

__all__ = [
    "LARGEST_MAGNITUDE",
    "SMALLEST_SPREAD",
    "aliased_pairs",
    "check_crude_fit",
    "check_question_columns",
    "usable_covariates",
]

LARGEST_MAGNITUDE = 1e150
"""Cross-products of values past this overflow double precision (1e308)."""
SMALLEST_SPREAD = 1e-150
"""Differences below this underflow when squared; the column is not constant
(its values differ) but cannot be used at this scale."""

_ROLE_WORDS = {"outcome": "outcome", "time": "survival time", "event": "event indicator"}


def _stray_problem(label: str, column: str, profile: ColumnProfile) -> str | None:
    if not profile.stray_values:
        return None
    values = ", ".join(repr(v) for v in profile.stray_values)
    rows = ", ".join(str(r) for r in profile.stray_rows)
    return (
        f'{label} (column "{column}") holds numbers except for the text value(s) {values} '
        f"in data row(s) {rows}, which made it look like text or categories. Correct or "
        "empty those cells in the file (a missing value is an empty cell), or set the "
        "column's type if it really is categorical."
    )


def _range_problem(label: str, column: str, profile: ColumnProfile) -> str | None:
    low, high = profile.minimum, profile.maximum
    if profile.type not in ("continuous", "count") or low is None or high is None:
        return None
    try:
        low, high = float(low), float(high)
    except (TypeError, ValueError):
        return None
    magnitude = max(abs(low), abs(high))
    if not math.isfinite(magnitude) or magnitude > LARGEST_MAGNITUDE:
        return (
            f'{label} (column "{column}") holds values as large as {magnitude:.3g}, beyond '
            f"what a model can square in double precision (about {LARGEST_MAGNITUDE:.0e}). "
            "Rescale the column (for example change its unit, or take logarithms)."
        )
    spread = high - low
    if 0 < spread < SMALLEST_SPREAD:
        return (
            f'{label} (column "{column}") varies, but only by {spread:.3g} in all, too little '
            f"for double precision once squared (below {SMALLEST_SPREAD:.0e}); it is not "
            "constant. Rescale the column (multiply it by a power of ten)."
        )
    return None


def check_question_columns(
    diagram: Diagram,
    exposure: str,
    x_col: str,
    cols: Mapping[str, str | None],
    profiles: Mapping[str, ColumnProfile],
    family: str,
) -> None:
    """Refuse an exposure column that is also the outcome (time, event) column,
    and exposure or outcome columns with stray text or out-of-range values."""
    x_label = diagram.node(exposure).label
    for role, word in _ROLE_WORDS.items():
        if cols.get(role) == x_col:
            raise DesignError(
                f'The exposure "{x_label}" and the {word} are both the column "{x_col}", so '
                "the question would be how a variable affects itself. Bind the "
                f"{word} to its own column."
            )
    outcome_col = cols.get("outcome")
    if (
        family_of(family).least_squares
        and outcome_col is not None
        and outcome_col in profiles
        and profiles[outcome_col].single_value
    ):
        value = profiles[outcome_col].minimum
        raise DesignError(
            f'The outcome (column "{outcome_col}") takes the single value {value} in every '
            "row, so there is no difference for the exposure to explain. Bind the outcome "
            "to the column that varies between participants."
        )
    named = {"exposure": x_col, **{k: v for k, v in cols.items() if v}}
    for role, column in named.items():
        if column not in profiles:
            continue
        label = f"The {_ROLE_WORDS.get(role, role)}"
        problem = _stray_problem(label, column, profiles[column]) or _range_problem(
            label, column, profiles[column]
        )
        if problem:
            raise DesignError(problem)


def usable_covariates(
    diagram: Diagram,
    bound: list[str],
    taken: Mapping[str, str],
    profiles: Mapping[str, ColumnProfile],
    messages: list[str],
) -> list[str]:
    """The bound covariates a model can use; each one left out gets a message.

    ``taken`` maps the columns of the exposure and outcome (and time, event,
    offset) to the role that reads them.
    """
    usable: list[str] = []
    for b in bound:
        node = diagram.node(b)
        column = node.column
        assert column is not None
        label = f'The covariate "{node.label}"'
        if column in taken:
            problem: str | None = (
                f'{label} is bound to "{column}", the column of the {taken[column]}; a '
                "variable cannot be adjusted for itself. Bind it to its own column."
            )
        else:
            profile = profiles[column]
            problem = _stray_problem(label, column, profile) or _range_problem(
                label, column, profile
            )
        if problem:
            messages.append(f"{problem} It is left out of the models.")
            continue
        usable.append(b)
    return usable


def check_crude_fit(crude: Any, exposure_label: str, outcome_label: str) -> None:
    """Refuse an outcome that is an exact linear function of the exposure
    (the crude linear model leaves no residual at all): there is nothing to
    estimate, and every standard error would be zero."""
    if crude is None:
        return
    rss, tss = float(crude.rss), float(crude.tss)
    if tss > 0 and rss <= 1e-12 * tss:  # R² within 1e-12 of 1: no real data
        raise DesignError(
            f'The outcome "{outcome_label}" is an exact linear function of the exposure '
            f'"{exposure_label}" in every row (no residual variation at all), so there is '
            "no effect to estimate from data: check that the outcome is bound to the "
            "right column and is not computed from the exposure."
        )


def aliased_pairs(
    findings: Iterable[AliasFinding],
    covariates: set[str],
    groups: Iterable[Iterable[str]] = (),
) -> dict[str, tuple[str, ...]]:
    """Covariate → the other covariates it is aliased with in the data (both
    ways round: the one found to be a combination, and those it combines).
    A constant (aliased with the intercept only) is not a pair, nor are
    members of one measure group (the diagram already says they measure the
    same thing)."""
    group_of = {m: i for i, g in enumerate(groups) for m in g}
    out: dict[str, list[str]] = {}
    for finding in findings:
        others = [
            m
            for m in finding.combination
            if m in covariates
            and m != finding.node
            and (m not in group_of or group_of[m] != group_of.get(finding.node))
        ]
        if finding.node not in covariates or not others:
            continue
        out.setdefault(finding.node, [])
        for m in others:
            if m not in out[finding.node]:
                out[finding.node].append(m)
            partners = out.setdefault(m, [])
            if finding.node not in partners:
                partners.append(finding.node)
    return {k: tuple(v) for k, v in out.items()}
