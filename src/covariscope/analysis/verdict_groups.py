"""Collinear confounder groups, and the verdict for a confounder in one.

Confounders that the data cannot tell apart (a proxy link, a high R²
between them, a shared dimension with a high condition index) form a group.
When any one member, with the rest of the adjustment set, closes the paths
the group closes, the verdict is ``keep_one_of``.  When the diagram needs a
member whichever other is kept (two confounders on different backdoor paths
that happen to be correlated), it is ``adjust``, with the caution that the
collinearity widens the confidence interval.

References
----------
Belsley DA, Kuh E, Welsch RE (1980). *Regression Diagnostics*. Wiley
(condition indices and variance-decomposition proportions).
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from covariscope.analysis.verdict_terms import LABELS, Facts, Numbers, Verdict
from covariscope.analysis.verdict_wording import (
    format_set,
    guide,
    members_words,
    num,
    shift_clause,
)

__all__ = ["collinear_groups", "group_verdict"]


def _needed_together(f: Facts, n: Numbers, t: Mapping[str, float], ratio: bool) -> Verdict:
    """``adjust`` with the collinearity caution: the diagram needs this member
    whichever other member is kept, so keeping one of them would leave a
    backdoor path open."""
    others = [m for m in f.group if m != f.node]
    rest = [m for m in f.set_members if m not in f.group]
    beside = f" with {members_words(rest)}" if rest else ""
    numbers = [f.group_why] if f.group_why else []
    if n.aux_r2 is not None:
        numbers.append(
            f"its auxiliary R² in the full model is {num(n.aux_r2)} against the guide "
            f"{guide(t, 'r2')} and its VIF {num(n.vif)} against {guide(t, 'vif')}"
        )
    why = f" ({'; '.join(numbers)})" if numbers else ""
    needs = (
        "the diagram needs both"
        if len(f.group) == 2
        else "the diagram needs it whichever other member is kept"
    )
    data = f"; {shift_clause(n, ratio)}" if n.added is not None else ""
    return Verdict(
        f.node,
        "adjust",
        LABELS["adjust"],
        f"Adjust: the diagram requires it as a confounder on an open backdoor path, and though "
        f"it is collinear with {', '.join(others)}{why}, no member of {format_set(f.group)} "
        f"alone gives a sufficient set{beside} and leaving it out is not sufficient either, so "
        f"{needs}; expect a wider confidence interval, and consider whether they truly are "
        f"distinct constructs{data}.",
    )


def group_verdict(f: Facts, n: Numbers, t: Mapping[str, float], *, ratio: bool = False) -> Verdict:
    """The verdict for a confounder in a collinear group of two or more (``f.group``).

    ``keep_one_of`` when some member, with the rest of the adjustment set,
    still gives a sufficient set; ``adjust``, with the collinearity caution,
    for a member the diagram needs beside the others (``f.group_needed``).
    ``ratio`` says the change reads the ratio scale.

    Examples
    --------
    >>> f = Facts("a", "confounder", group=("a", "b"), group_alone=("a", "b"))
    >>> group_verdict(f, Numbers(), {"r2": 0.9, "vif": 10.0}).code
    'keep_one_of'
    >>> needed = Facts("a", "confounder", group=("a", "b"), group_needed=True)
    >>> group_verdict(needed, Numbers(), {"r2": 0.9, "vif": 10.0}).code
    'adjust'
    """
    if f.group_needed:
        return _needed_together(f, n, t, ratio)
    others = [m for m in f.group if m != f.node]
    rest = [m for m in f.set_members if m not in f.group]
    beside = f" with {members_words(rest)}" if rest else ""
    lacking = [m for m in f.group if m not in f.group_alone]
    if not f.group_alone:
        alone = f"no single member alone gives a sufficient set{beside}"
    elif not lacking:
        alone = f"each member alone gives a sufficient set{beside}"
    else:
        alone = (
            f"only {', '.join(f.group_alone)} alone gives a sufficient set{beside} "
            f"({', '.join(lacking)} alone does not)"
        )
    suggestion = (
        f"; {f.suggested} is suggested{(' because ' + f.suggested_why) if f.suggested_why else ''}"
        if f.suggested
        else ""
    )
    if f.group_why:
        vif = f"; its VIF in the full model is {num(n.vif)} against {guide(t, 'vif')}"
        why = f" ({f.group_why}{vif if n.vif is not None else ''})"
    elif n.aux_r2 is not None:
        why = (
            f" (its auxiliary R² in the full model is {num(n.aux_r2)} against the guide "
            f"{guide(t, 'r2')}, its VIF {num(n.vif)} against {guide(t, 'vif')})"
        )
    else:
        why = ""
    return Verdict(
        f.node,
        "keep_one_of",
        LABELS["keep_one_of"],
        f"Keep one of {format_set(f.group)}: it and {', '.join(others)} carry the same "
        f"confounding and close the same paths{why}; {alone}{suggestion}; another member "
        "may be chosen, and the choice is saved with the project.",
        group=tuple(f.group),
        suggested=f.suggested,
    )


def collinear_groups(
    confounders: Iterable[str],
    *,
    proxy_groups: Iterable[Iterable[str]] = (),
    pair_r2: Mapping[tuple[str, str], float] | None = None,
    flagged: Iterable[Iterable[str]] = (),
    r2_threshold: float = 0.9,
) -> tuple[tuple[str, ...], ...]:
    """Groups of confounders that close the same paths and collide in the data.

    Two confounders are joined when a proxy link joins them (through their
    measure group), when the R² between them is at least ``r2_threshold``,
    or when they share a flagged condition-index dimension.  Groups are the
    connected components with two or more members, each sorted.

    Examples
    --------
    >>> collinear_groups(["a", "b", "c"], pair_r2={("a", "b"): 0.95, ("a", "c"): 0.2})
    (('a', 'b'),)
    """
    members = list(dict.fromkeys(confounders))
    known = set(members)
    parent = {m: m for m in members}

    def find(a: str) -> str:
        while parent[a] != a:
            parent[a] = parent[parent[a]]
            a = parent[a]
        return a

    def join(nodes: Iterable[str]) -> None:
        inside = [m for m in nodes if m in known]
        for other in inside[1:]:
            parent[find(other)] = find(inside[0])

    for group in proxy_groups:
        join(group)
    for (a, b), r2 in (pair_r2 or {}).items():
        if r2 >= r2_threshold:
            join((a, b))
    for dimension in flagged:
        join(dimension)
    out: dict[str, list[str]] = {}
    for m in members:
        out.setdefault(find(m), []).append(m)
    return tuple(sorted(tuple(sorted(g)) for g in out.values() if len(g) >= 2))
