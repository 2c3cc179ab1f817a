"""Facts about one covariate that its verdict sentence needs, read from the diagram.

Paths a collider opens, paths an unmeasured confounder would have closed,
why confounders form a collinear group and which member to keep.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence

import networkx as nx

from covariscope.analysis.graph import DiagramAnalysis, backdoor_paths, is_sufficient

__all__ = [
    "group_why",
    "needed_together",
    "opened_paths",
    "stands_for",
    "suggest_member",
    "would_close",
    "would_open",
]


def opened_paths(
    G: nx.DiGraph, x: str, y: str, proposed: Sequence[str], node: str
) -> tuple[tuple[str, ...], ...]:
    """Backdoor paths open given the proposed set but closed without ``node``."""
    with_open = {p.nodes for p in backdoor_paths(G, x, y, proposed).paths if p.open}
    rest = [p for p in proposed if p != node]
    without_open = {p.nodes for p in backdoor_paths(G, x, y, rest).paths if p.open}
    return tuple(sorted(with_open - without_open))


def would_close(da: DiagramAnalysis, node: str) -> tuple[tuple[str, ...], ...]:
    facts = da.roles[node]
    paths = da.paths.paths
    out = [
        paths[i].nodes
        for i, collider in facts.on_paths
        if not collider and i < len(paths) and paths[i].open
    ]
    return tuple(out)


def would_open(da: DiagramAnalysis, node: str) -> tuple[tuple[str, ...], ...]:
    """Blocked backdoor paths on which ``node`` is a collider (or descends from one)."""
    facts = da.roles[node]
    paths = da.paths.paths
    return tuple(
        paths[i].nodes for i, collider in facts.on_paths if i < len(paths) and not paths[i].open
    )


def group_why(
    group: Sequence[str],
    proxy_groups: Sequence[Sequence[str]],
    r2_pairs: Mapping[tuple[str, str], float],
    flagged: Sequence[Sequence[str]],
    r2_guide: float,
    names: Mapping[str, str],
    member: str | None = None,
) -> str:
    """Why confounders form a collinear group, as a clause naming the numbers.

    With ``member``, an R² that involves that member is named first, so the
    clause speaks of the covariate whose verdict it explains.
    """
    members = set(group)
    reasons: list[str] = []
    if any(len(members & set(g)) >= 2 for g in proxy_groups):
        reasons.append("a proxy link joins them")
    high = sorted(
        (
            (member in (a, b), r2, a, b)
            for (a, b), r2 in r2_pairs.items()
            if {a, b} <= members and r2 >= r2_guide
        ),
        reverse=True,
    )
    if high:
        own, r2, a, b = high[0]
        if len(members) == 2:
            who = "their R²"
        elif own:
            other = b if a == member else a
            who = f"its R² with {names.get(other, other)}"
        else:
            who = f"the {names.get(a, a)}–{names.get(b, b)} R²"
        reasons.append(f"{who} is {r2:.3g} against the guide {r2_guide:g}")
    if any(len(members & set(d)) >= 2 for d in flagged):
        reasons.append("they share a dimension with a high condition index")
    if len(reasons) > 1:
        return ", ".join(reasons[:-1]) + " and " + reasons[-1]
    return reasons[0] if reasons else ""


def needed_together(
    G: nx.DiGraph, x: str, y: str, group: Sequence[str], base: Sequence[str]
) -> tuple[str, ...]:
    """Members of a collinear group that the diagram needs whichever other is kept.

    Empty when some member alone, with the rest of ``base`` (the adjustment
    set in use), gives a sufficient set (then one of them is to be kept), or
    when the rest with the whole group is not sufficient either.  Otherwise
    the members whose removal, with every other member kept, leaves the set
    insufficient.
    """
    rest = [m for m in base if m not in group]
    if any(is_sufficient(G, x, y, [*rest, m]) for m in group):
        return ()
    if not is_sufficient(G, x, y, [*rest, *group]):
        return ()
    return tuple(
        m for m in group if not is_sufficient(G, x, y, [*rest, *(o for o in group if o != m)])
    )


def stands_for(G: nx.DiGraph, da: DiagramAnalysis, node: str) -> tuple[str, ...]:
    return tuple(
        sorted(
            a for a in nx.ancestors(G, node) if a in da.roles and da.roles[a].role == "confounder"
        )
    )


def suggest_member(
    group: Sequence[str],
    alone: Sequence[str],
    *,
    chosen: str | None,
    recommended: Sequence[str],
    proposed: Sequence[str],
    minimal: Sequence[tuple[str, ...]],
    se_of: Callable[[tuple[str, ...]], float | None],
    names: Mapping[str, str],
) -> tuple[str | None, str]:
    """The member of a collinear group to keep, and why (a clause)."""
    if chosen in group:
        return chosen, "it is the saved choice"
    # The smallest SE among the minimal sets that hold the member and no other.
    best_se: dict[str, float] = {}
    for m in group:
        ses = [
            se
            for s in minimal
            if m in s and not (set(group) - {m}) & set(s)
            for se in [se_of(s)]
            if se is not None and math.isfinite(se)
        ]
        if ses:
            best_se[m] = min(ses)
    in_rec = [m for m in group if m in recommended]
    pick = in_rec[0] if in_rec else (alone[0] if alone else None)
    if pick is None:
        return None, ""
    in_proposed = [m for m in group if m in proposed]
    if in_proposed == [pick]:
        return pick, "it is the member in the proposed set"
    others = {m: se for m, se in best_se.items() if m != pick}
    if pick in best_se and others:
        against = ", ".join(f"{se:.4g} with {names.get(m, m)}" for m, se in sorted(others.items()))
        return pick, (
            "its set gives the exposure estimate the smallest standard error "
            f"({best_se[pick]:.4g}, against {against})"
        )
    if pick in in_rec:
        return pick, "it is the member in the recommended set"
    return pick, "it alone gives a sufficient set"
