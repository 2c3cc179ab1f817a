"""The outcome columns each model family reads, and what a blocked analysis lacks.

Pure functions from a project (and the data's column profiles) to what the
outcome-columns dialog shows, to what the analysis is missing before it can
use the data, and to the project's ``family_columns`` after a choice.  The
window's dialog (:mod:`covariscope.qt.outcome_dialog`) and messages bar
(:mod:`covariscope.qt.messages_bar`) show them.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

from covariscope.analysis.families import FAMILIES, family_of
from covariscope.data.profile import ColumnProfile
from covariscope.model.project import Project

__all__ = [
    "OUTCOME_FIELDS",
    "Blocker",
    "blockers",
    "family_columns_after",
    "outcome_column_in_use",
]

#: per family, the outcome settings it reads (key, label, explanation)
OUTCOME_FIELDS: Mapping[str, tuple[tuple[str, str, str], ...]] = MappingProxyType(
    {f.code.value: tuple((o.key, o.label, o.explanation) for o in f.fields) for f in FAMILIES}
)

#: what the fix offered with a blocker does
FIX_OUTCOME_COLUMNS = "outcome_columns"
FIX_BIND = "bind"


@dataclass(frozen=True)
class Blocker:
    """Why the analysis cannot use the data, and the fix to offer."""

    text: str
    fix: str
    fix_label: str


def outcome_column_in_use(project: Project, family: str | None = None) -> str | None:
    """The data column the family's model reads as its outcome (for Cox:
    the event column, the time being in ``family_columns``)."""
    family = family or project.analysis.family
    chosen = project.analysis.family_columns.get(family, {})
    fam = family_of(family)
    if fam.survival:
        column: str | None = chosen.get(fam.outcome_key)
        return column
    outcome = project.diagram.outcome
    node_column = outcome.column if outcome is not None else None
    return chosen.get("outcome") or node_column


def _column_type(
    project: Project, profiles: Mapping[str, ColumnProfile] | None, column: str
) -> str:
    saved = project.analysis.column_types.get(column)
    profile = (profiles or {}).get(column)
    return saved or (profile.type if profile is not None else "")


def blockers(
    project: Project, profiles: Mapping[str, ColumnProfile] | None, *, data_loaded: bool
) -> list[Blocker]:
    """What keeps the analysis from using the data (empty: nothing)."""
    d = project.diagram
    if d.exposure is None or d.outcome is None:
        return []
    if not data_loaded:
        return []
    family = project.analysis.family
    fam = family_of(family)
    model = fam.term.model
    out: list[Blocker] = []
    if d.exposure.column is None:
        out.append(
            Blocker(
                f"The exposure {d.exposure.label} has no data column, so only the "
                "diagram is analysed.",
                FIX_BIND,
                "Bind a column…",
            )
        )
    chosen = project.analysis.family_columns.get(family, {})
    if fam.survival:
        lacking = [w for w in fam.keys if w != "offset" and not chosen.get(w)]
        if lacking:
            out.append(
                Blocker(
                    f"The {model} needs a {' and an '.join(lacking)} column, so only the "
                    "diagram is analysed.",
                    FIX_OUTCOME_COLUMNS,
                    "Choose the outcome columns…",
                )
            )
        return out
    column = outcome_column_in_use(project, family)
    if column is None:
        out.append(
            Blocker(
                f"The outcome {d.outcome.label} has no data column, so only the "
                "diagram is analysed.",
                FIX_BIND,
                "Bind a column…",
            )
        )
    elif fam.outcome_types:
        kind = _column_type(project, profiles, column)
        if kind and kind not in fam.outcome_types:
            need = fam.outcome_need
            out.append(
                Blocker(
                    f"The {model} needs {need} outcome, but the column {column} is {kind}; "
                    "choose a binary outcome column, or the linear model.",
                    FIX_OUTCOME_COLUMNS,
                    "Choose the outcome columns…",
                )
            )
    return out


def family_columns_after(
    project: Project, family: str, chosen: Mapping[str, str | None]
) -> dict[str, dict[str, str]]:
    """The project's ``family_columns`` once ``chosen`` (key → column, None:
    not set) is the choice for ``family``."""
    out = {k: dict(v) for k, v in project.analysis.family_columns.items()}
    cols = {k: v for k, v in chosen.items() if v}
    if cols:
        out[family] = cols
    else:
        out.pop(family, None)
    return out
