"""The recommended adjustment set, chosen among the minimal sufficient sets.

Order of preference (DESIGN §2, issue "verdicts"): most members of the
analyst's proposed set (then fewest members outside it); no two members of
one collinear group; the analyst's saved choice within a group; then the set
whose exposure estimate lies closest to the one that adjusts for every member
of the collinear groups it draws on (the member that carries the most of the
confounding: a noisier measure of a confounder leaves residual confounding,
yet, being less correlated with the exposure, gives the smaller standard
error — Greenland S (1980), "The effect of misclassification in the presence
of covariates", Am J Epidemiol 112:564-9; Fewell Z, Davey Smith G, Sterne JAC
(2007), "The impact of residual and unmeasured confounding in epidemiologic
studies", Am J Epidemiol 166:646-55); only then the smallest standard error
of the exposure estimate; finally the sorted ids, so the choice is
reproducible.
"""

from __future__ import annotations

import math
from collections import Counter
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from covariscope.vocabulary import group_key

__all__ = [
    "MemberRanking",
    "Recommendation",
    "pair_r2",
    "rank_members",
    "recommend_set",
    "shortfall",
]

#: the exposure coefficient of the model with a set (None when it cannot be fitted)
EstimateOf = Callable[[tuple[str, ...]], float | None]

#: shortfalls closer than this share of the whole-group estimate count as equal,
#: so that the standard error decides between members that are equivalent
_TIE = 1e-6


@dataclass(frozen=True)
class Recommendation:
    """The recommended set and the plain reason it was chosen (``members``
    is None when no measured set is sufficient)."""

    members: tuple[str, ...] | None
    reason: str


class _GroupIndex:
    """Which collinear group each member belongs to, built once, so that
    scoring a set costs its own size, not the size of every group."""

    def __init__(self, groups: Iterable[Sequence[str]], choices: Mapping[str, str]) -> None:
        self.groups = [tuple(g) for g in groups]
        self.groups_of: dict[str, list[int]] = {}
        for i, g in enumerate(self.groups):
            for m in set(g):
                self.groups_of.setdefault(m, []).append(i)
        self.chosen = [choices.get(group_key(g)) for g in self.groups]

    def clashes(self, members: Sequence[str]) -> int:
        """Members beyond the first of each group the set draws on."""
        drawn = Counter(i for m in set(members) for i in self.groups_of.get(m, ()))
        return sum(n - 1 for n in drawn.values())

    def against_choice(self, members: Sequence[str]) -> int:
        """Members of a group with a saved choice that are not the choice."""
        count = 0
        for m in members:
            for i in self.groups_of.get(m, ()):
                if self.chosen[i] is not None and m != self.chosen[i]:
                    count += 1
        return count

    def touched(self, members: Sequence[str]) -> set[str]:
        """Every member of the groups the set draws on."""
        drawn = {i for m in members for i in self.groups_of.get(m, ())}
        return {m for i in drawn for m in self.groups[i]}


def _finite(value: float | None) -> float | None:
    return value if value is not None and math.isfinite(value) else None


def shortfall(
    members: Sequence[str], groups: Iterable[Sequence[str]], estimate_of: EstimateOf | None
) -> tuple[float, float | None, float | None]:
    """How far a set's exposure estimate lies from the one that adjusts for
    every member of the collinear groups it draws on.

    Returns ``(distance, estimate, whole)``: the absolute difference on the
    coefficient scale (0 when the set draws on no group; infinite when a
    model cannot be fitted), the set's estimate and the whole-group estimate.

    Examples
    --------
    >>> est = {("a", "c"): 1.0, ("b", "c"): 1.3, ("a", "b", "c"): 1.05}.get
    >>> shortfall(("a", "c"), [("a", "b")], est)
    (0.050000000000000044, 1.0, 1.05)
    >>> shortfall(("c",), [("a", "b")], est)[0]
    0.0
    """
    return _shortfall(members, _GroupIndex(groups, {}), estimate_of)


def _shortfall(
    members: Sequence[str], index: _GroupIndex, estimate_of: EstimateOf | None
) -> tuple[float, float | None, float | None]:
    members = tuple(sorted(members))
    whole = tuple(sorted(set(members) | index.touched(members)))
    if whole == members:
        return 0.0, None, None
    if estimate_of is None:
        return 0.0, None, None
    own, full = _finite(estimate_of(members)), _finite(estimate_of(whole))
    if own is None or full is None:
        return math.inf, own, full
    return abs(own - full), own, full


def _tie_key(distance: float, whole: float | None) -> float:
    """The distance rounded to the tie tolerance, so that SE decides only
    between sets that are otherwise equivalent."""
    if not math.isfinite(distance) or distance == 0.0:
        return distance
    scale = max(abs(whole or 0.0), 1e-12) * _TIE
    return float(round(distance / scale))


@dataclass(frozen=True)
class MemberRanking:
    """The members of a collinear group, by how much of the confounding each carries.

    ``alone`` is the exposure estimate adjusting for the rest of the set and
    one member; ``whole`` adjusting for the rest and every member; ``se``
    the standard error with one member.  ``best`` carries the most of the
    confounding (its estimate is closest to ``whole``); ``by_se`` is True
    when the estimates tie and the smaller standard error decided.
    """

    group: tuple[str, ...]
    whole: float | None
    alone: dict[str, float]
    se: dict[str, float]
    best: str | None
    by_se: bool = False


def rank_members(
    group: Sequence[str],
    rest: Sequence[str],
    *,
    estimate_of: EstimateOf,
    se_of: Callable[[tuple[str, ...]], float | None] | None = None,
) -> MemberRanking:
    """Rank the members of a collinear group by the confounding each carries.

    The member whose one-member set (with ``rest``) moves the exposure
    estimate closest to adjusting for the whole group carries the most of
    the confounding; the standard error breaks ties only (see the module's
    references: a noisier measure looks more precise and adjusts less).

    Examples
    --------
    >>> est = {("a", "c"): 1.02, ("b", "c"): 1.30, ("a", "b", "c"): 1.0}.get
    >>> se = {("a", "c"): 0.2, ("b", "c"): 0.1}.get
    >>> rank_members(("a", "b"), ("c",), estimate_of=est, se_of=se).best
    'a'
    """
    members = tuple(sorted(group))
    rest_t = tuple(m for m in rest if m not in members)
    whole = _finite(estimate_of(tuple(sorted((*rest_t, *members)))))
    alone: dict[str, float] = {}
    ses: dict[str, float] = {}
    for m in members:
        s = tuple(sorted((*rest_t, m)))
        b = _finite(estimate_of(s))
        se = _finite(se_of(s)) if se_of is not None else None
        if b is not None:
            alone[m] = b
        if se is not None:
            ses[m] = se
    if whole is None or not alone:
        return MemberRanking(members, whole, alone, ses, None)
    keys = {m: _tie_key(abs(b - whole), whole) for m, b in alone.items()}
    closest = min(keys.values())
    tied = sorted(m for m, k in keys.items() if k == closest)
    best = min(tied, key=lambda m: (ses.get(m, math.inf), m))
    return MemberRanking(members, whole, alone, ses, best, by_se=len(tied) > 1)


def _deciding(
    best: tuple[Any, ...],
    runner_up: tuple[Any, ...],
    best_se: float | None,
    runner_se: float | None,
    has_proposed: bool,
    choice_applied: bool = False,
    estimates: tuple[tuple[float, float | None, float | None], ...] = (),
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
    if best[4] != runner_up[4] and estimates:
        (_, own, whole), (_, other, _) = estimates
        if own is not None and whole is not None and other is not None:
            return (
                f"its exposure estimate ({own:.4g}) is the closest to adjusting for every member "
                f"of its collinear group ({whole:.4g}; the next set gives {other:.4g}), so its "
                "member carries the most of the confounding; a noisier measure leaves residual "
                "confounding even when its standard error looks smaller."
            )
        return "its estimate is the closest to adjusting for every member of its collinear group."
    if best[5] != runner_up[5] and best_se is not None and runner_se is not None:
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
    estimate_of: EstimateOf | None = None,
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
    estimate_of : callable, optional
        The exposure coefficient of the model with a set; between sets that
        draw on a collinear group, the one whose estimate is closest to
        adjusting for the whole group is preferred (:func:`shortfall`).

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
    index = _GroupIndex(group_list, choices)  # once: each set then costs its own size
    scored = []
    for raw in minimal_sets:
        members = tuple(sorted(raw))
        se = se_of(members) if se_of is not None else None
        se_key = se if se is not None and math.isfinite(se) else math.inf
        gap = _shortfall(members, index, estimate_of)
        key = (
            -len(wanted & set(members)),
            len(set(members) - wanted),
            index.clashes(members),
            index.against_choice(members),
            _tie_key(gap[0], gap[2]),
            se_key,
            members,
        )
        scored.append((key, members, se, gap))
    scored.sort()
    best_key, best, best_se, best_gap = scored[0]
    if len(scored) == 1:
        reason = "It is the only minimal sufficient set."
    else:
        reason = f"Chosen among {len(scored)} minimal sufficient sets: " + _deciding(
            best_key,
            scored[1][0],
            best_se,
            scored[1][2],
            bool(wanted),
            wanted != as_proposed,
            (best_gap, scored[1][3]),
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
