"""Which member of a collinear group to keep: the user's choice.

A ``keep_one_of`` verdict names its group and the member the program
suggests; the user may keep another one.  The choice is saved in the
project as ``analysis.keep_choices[group_key] = member`` and the analysis
then builds the recommended set around it.
"""

from __future__ import annotations

from dataclasses import dataclass

from covariscope.model.project import Project
from covariscope.study.result import StudyResult
from covariscope.vocabulary import group_key

__all__ = ["KeepChoice", "keep_choice", "keep_choices_after", "kept_words"]


@dataclass(frozen=True)
class KeepChoice:
    """One covariate's collinear group, as the choice widgets show it."""

    node: str
    group: tuple[str, ...]
    key: str
    #: the member kept now: the saved choice, else the suggestion (None: neither)
    kept: str | None
    #: True when ``kept`` was chosen by the user and saved with the project
    saved: bool
    #: node id → label, for every member
    labels: dict[str, str]

    def names(self) -> str:
        """The members by label, in the group's order."""
        return ", ".join(self.labels[m] for m in self.group)


def keep_choice(project: Project, result: StudyResult | None, node_id: str) -> KeepChoice | None:
    """The group ``node_id`` is to keep one of, or None when its verdict is
    not ``keep_one_of`` (or there is no analysis yet)."""
    verdict = result.verdicts.get(node_id) if result is not None else None
    if result is None or verdict is None or verdict.code != "keep_one_of":
        return None
    group = tuple(verdict.group)
    if not group:
        group = next((tuple(g) for g in result.collinear_groups if node_id in g), ())
    if len(group) < 2:
        return None
    key = group_key(group)
    saved = project.analysis.keep_choices.get(key)
    saved = saved if saved in group else None
    kept = saved or verdict.suggested
    diagram = project.diagram
    labels = {m: (diagram.node(m).label or m) if m in diagram else m for m in group}
    return KeepChoice(
        node=node_id,
        group=group,
        key=key,
        kept=kept if kept in group else None,
        saved=saved is not None,
        labels=labels,
    )


def kept_words(choice: KeepChoice) -> str:
    """Which member is kept, in a few words for the verdict cell:
    ``"Income kept"``, ``"this one kept"``, with ``"(your choice)"`` once
    the user chose it; empty when no member is kept yet."""
    if choice.kept is None:
        return ""
    who = "this one" if choice.kept == choice.node else choice.labels[choice.kept]
    return f"{who} kept" + (" (your choice)" if choice.saved else "")


def keep_choices_after(project: Project, key: str, member: str | None) -> dict[str, str] | None:
    """The project's ``keep_choices`` once ``member`` is kept of the group
    filed under ``key`` (None forgets the choice); None when nothing changes."""
    current = dict(project.analysis.keep_choices)
    if member is None:
        if key not in current:
            return None
        del current[key]
        return current
    if member not in key.split("|"):
        raise ValueError(f"{member!r} is not a member of the group {key!r}")
    if current.get(key) == member:
        return None
    current[key] = member
    return current
