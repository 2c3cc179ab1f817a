"""The messages the window shows in its messages bar, by severity.

Three severities: a *problem* keeps the analysis from using the data (with
the fix to offer); *review* is a place where the diagram and the data
disagree; a *caution* is everything else the analysis says (rows lost,
non-collapsibility, the standing cautions).  The bar shows their counts and
the first problem; the list shows them all.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from covariscope.data.profile import ColumnProfile
from covariscope.model.project import Project
from covariscope.study.result import StudyResult
from covariscope.views.outcome_settings import blockers

__all__ = ["SEVERITIES", "Message", "count_words", "window_messages"]

#: severity code → (singular, plural) for the counts
SEVERITIES: Mapping[str, tuple[str, str]] = {
    "problem": ("problem", "problems"),
    "review": ("disagreement to review", "disagreements to review"),
    "caution": ("caution", "cautions"),
}


@dataclass(frozen=True)
class Message:
    """One line of the messages bar; ``fix`` names the fix to offer ('' none)."""

    severity: str
    text: str
    fix: str = ""
    fix_label: str = ""


def window_messages(
    project: Project,
    result: StudyResult | None,
    profiles: Mapping[str, ColumnProfile] | None,
    *,
    data_loaded: bool,
) -> list[Message]:
    """Every message for the window: problems first, then the disagreements,
    then the analysis's cautions, each once."""
    out = [
        Message("problem", b.text, b.fix, b.fix_label)
        for b in blockers(project, profiles, data_loaded=data_loaded)
    ]
    # the bound data gave no estimate (`check` refuses the question): a problem,
    # unless the window's own check above already names it with its fix
    data_problem = result.data_problem if result is not None and not out else ""
    if data_problem:
        out.append(Message("problem", data_problem))
    if result is not None:
        out.extend(Message("review", text) for text in result.disagreements)
        out.extend(
            Message("caution", text)
            for text in result.messages
            # the problem above, said once (the analysis's own note repeats it)
            if not (data_problem and text.startswith(data_problem))
        )
    seen: set[str] = set()
    unique = []
    for m in out:
        if m.text not in seen:
            seen.add(m.text)
            unique.append(m)
    return unique


def count_words(messages: list[Message]) -> str:
    """``"1 problem · 2 cautions"``; ``"No messages"`` when there are none."""
    parts = []
    for code, (one, many) in SEVERITIES.items():
        n = sum(1 for m in messages if m.severity == code)
        if n:
            parts.append(f"{n} {one if n == 1 else many}")
    return " · ".join(parts) if parts else "No messages"
