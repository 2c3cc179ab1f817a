"""The recommended adjustment set, chosen among the minimal sufficient sets.

Order of preference (DESIGN §2, issue "verdicts"): most members of the
analyst's proposed set (then fewest members outside it); no two members of
one collinear group; the analyst's saved choice within a group; then the
smallest standard error of the exposure estimate; finally the sorted ids,
so the choice is reproducible.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from covariscope.vocabulary import group_key

__all__ = ["Recommendation", "pair_r2", "recommend_set"]


@dataclass(frozen=True)
class Recommendation:
    """The recommended set and the plain reason it was chosen (``members``
    is None when no measured set is sufficient)."""

    members: tuple[str, ...] | None
    reason: str


def _clashes(members: Sequence[str], groups: Iterable[Sequence[str]]) -> int:
    return sum(max(0, len(set(g) & set(members)) - 1) for g in groups)


def _against_choice(
    members: Sequence[str], groups: Iterable[Sequence[str]], choices: Mapping[str, str]
) -> int:
    count = 0
    for g in groups:
        chosen = choices.get(group_key(g))
        if chosen is None:
            continue
        count += sum(1 for m in members if m in g and m != chosen)
    return count


def _deciding(
    best: tuple[Any, ...],
    runner_up: tuple[Any, ...],
    best_se: float | None,
    runner_se: float | None,
    has_proposed: bool,
    choice_applied: bool = False,
) -> str:
    """The criterion that set the chosen set apart from the next one, in words."""
    if best[0] != runner_up[0]:
        chosen = ", the saved choice standing in for its collinear group" if choice_applied else ""
        return f"it holds the most members of the proposed set ({-best[0]}{chosen})."
    if best[1] != runner_up[1]:
        return "it holds the fewest covariates outside the proposed set."
    if best[2] != runner_up[2]:
        return "it holds no two members of one collinear group."
    if best[3] != runner_up[3]:
        return "it keeps the saved choice within its collinear group."
    if best[4] != runner_up[4] and best_se is not None and runner_se is not None:
        tie = (
            f"it and the next both hold {-best[0]} member(s) of the proposed set; "
            if has_proposed
            else ""
        )
        return (
            f"{tie}it gives the exposure estimate the smallest standard error "
            f"({best_se:.4g}, against {runner_se:.4g} for the next)."
        )
    return "the sets tie on every criterion, so the first by name is taken."


def recommend_set(
    minimal_sets: Sequence[Sequence[str]],
    *,
    proposed: Iterable[str] = (),
    groups: Iterable[Sequence[str]] = (),
    keep_choices: Mapping[str, str] | None = None,
    se_of: Callable[[tuple[str, ...]], float | None] | None = None,
) -> Recommendation:
    """Choose one minimal sufficient set.

    Parameters
    ----------
    minimal_sets : sequence of sequences of str
        The minimal sufficient sets (measured covariates only).
    proposed : iterable of str
        The analyst's proposed set.
    groups : iterable of sequences of str
        Collinear confounder groups.
    keep_choices : mapping
        Saved choice per group, keyed by the group's members sorted and joined by ``|``.
    se_of : callable, optional
        Standard error of the exposure estimate in the model with a set
        (None or NaN when it could not be fitted).

    Examples
    --------
    >>> r = recommend_set([("a", "c"), ("b", "c")], proposed=["b", "c"])
    >>> r.members
    ('b', 'c')
    >>> se = {("a",): 0.2, ("b",): 0.1}.get
    >>> recommend_set([("a",), ("b",)], se_of=se).members
    ('b',)
    """
    choices = dict(keep_choices or {})
    group_list = [tuple(g) for g in groups]
    wanted = set(proposed)
    as_proposed = set(wanted)
    # A saved choice within a group is the analyst's later word on that group:
    # it stands in for whichever members the proposed set holds.
    for g in group_list:
        chosen = choices.get(group_key(g))
        if chosen in g:
            wanted = (wanted - set(g)) | {chosen}
    if not minimal_sets:
        return Recommendation(
            None,
            "No set of measured covariates is sufficient in this diagram, so none is recommended.",
        )
    scored = []
    for raw in minimal_sets:
        members = tuple(sorted(raw))
        se = se_of(members) if se_of is not None else None
        se_key = se if se is not None and math.isfinite(se) else math.inf
        key = (
            -len(wanted & set(members)),
            len(set(members) - wanted),
            _clashes(members, group_list),
            _against_choice(members, group_list, choices),
            se_key,
            members,
        )
        scored.append((key, members, se))
    scored.sort()
    best_key, best, best_se = scored[0]
    if len(scored) == 1:
        reason = "It is the only minimal sufficient set."
    else:
        reason = f"Chosen among {len(scored)} minimal sufficient sets: " + _deciding(
            best_key, scored[1][0], best_se, scored[1][2], bool(wanted), wanted != as_proposed
        )
    return Recommendation(best, reason)


def pair_r2(correlation: Any, blocks: Mapping[str, Sequence[int]]) -> dict[tuple[str, str], float]:
    """R² between every two terms, from the correlation matrix of the design.

    For one-column terms it is the squared correlation; for a multi-column
    term, the largest R² of one of its columns regressed on the other term's
    columns (with an intercept, as the correlation matrix implies).

    Examples
    --------
    >>> import numpy as np
    >>> r = np.array([[1.0, 0.9], [0.9, 1.0]])
    >>> round(pair_r2(r, {"a": [0], "b": [1]})[("a", "b")], 2)
    0.81
    """
    import numpy as np

    corr = np.asarray(correlation, dtype=float)
    names = sorted(blocks)
    out: dict[tuple[str, str], float] = {}
    for i, a in enumerate(names):
        for b in names[i + 1 :]:
            best = 0.0
            for own, other in ((blocks[a], blocks[b]), (blocks[b], blocks[a])):
                other_idx = list(other)
                sub = corr[np.ix_(other_idx, other_idx)]
                for j in own:
                    c = corr[np.ix_([j], other_idx)].ravel()
                    try:
                        r2 = float(c @ np.linalg.solve(sub, c))
                    except np.linalg.LinAlgError:
                        r2 = 1.0
                    best = max(best, min(1.0, r2))
            out[(a, b)] = best
    return out
