"""Facts about one covariate that its verdict sentence needs, read from the diagram.

Paths a collider opens, paths an unmeasured confounder would have closed,
why confounders form a collinear group and which member to keep.
"""

from __future__ import annotations

import math
from collections import Counter
from collections.abc import Callable, Iterable, Mapping, Sequence

import networkx as nx

from covariscope.analysis.adjustment import Backdoor
from covariscope.analysis.constructs import MergedDiagram
from covariscope.analysis.graph import DiagramAnalysis
from covariscope.analysis.paths import given_constructs, listing
from covariscope.analysis.recommend import MemberRanking, rank_members

__all__ = [
    "PATH_CAP",
    "GroupReasons",
    "SetInUse",
    "needed_together",
    "opened_paths",
    "stands_for",
    "suggest_member",
    "would_close",
    "would_open",
]

#: Open paths listed when naming those a collider in the proposed set opens.
PATH_CAP = 500


def opened_paths(
    md: MergedDiagram, x: str, y: str, proposed: Sequence[str], nodes: Iterable[str]
) -> dict[str, tuple[tuple[str, ...], ...]]:
    """For each of ``nodes``: the backdoor paths open given the proposed set
    but closed without that node.

    The open paths are listed once for all the nodes (capped, under the
    walk's work budget).  A path open given the set closes without one
    member exactly when one of its colliders has that member's construct as
    its only adjusted descendant (its non-colliders are not adjusted, or it
    would not be open); which adjusted construct, if only one, lies at or
    below each node is found in one pass over the diagram, not one search
    per node.
    """
    M = md.graph
    given = given_constructs(md, proposed, x, y)
    opened = listing(M, x, y, given, PATH_CAP, only_open=True)
    sole = _sole_adjusted_below(M, given)
    shared = Counter(md.construct_of[p] for p in proposed)
    closing: dict[str, list[tuple[str, ...]]] = {}
    for path in opened.paths:
        for c in {sole[k] for k in path.colliders if sole.get(k) is not None}:
            closing.setdefault(str(c), []).append(path.nodes)
    out: dict[str, tuple[tuple[str, ...], ...]] = {}
    for node in nodes:
        c = md.construct_of[node]
        # a member whose construct another member also adjusts closes nothing
        found = closing.get(c, []) if node in proposed and shared[c] == 1 else []
        out[node] = tuple(sorted(found))
    return out


def _sole_adjusted_below(M: nx.DiGraph, given: frozenset[str]) -> dict[str, str | None]:
    """For each node: the one construct of ``given`` at or below it, or None
    when there is none or more than one (sets of at most two carried up the
    diagram, effects first: linear)."""
    below: dict[str, frozenset[str]] = {}
    for v in reversed(list(nx.topological_sort(M))):
        found = {v} if v in given else set()
        for w in M.succ[v]:
            if len(found) >= 2:
                break
            found |= below[w]
        below[v] = frozenset(sorted(found)[:2])
    return {v: next(iter(b)) if len(b) == 1 else None for v, b in below.items()}


def would_close(da: DiagramAnalysis, node: str) -> tuple[tuple[str, ...], ...]:
    """Open backdoor paths on which ``node`` lies as a non-collider (what adjusting for it would
    close).
    """
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


class GroupReasons:
    """What makes confounders a collinear group, indexed once per result by
    member, so that each covariate's clause costs its group's size, not the
    number of proxy groups and R² pairs in the study.

    ``proxy_groups`` are the measure groups, ``r2_pairs`` the R² of each
    pair of terms, ``flagged`` the variables of each dimension with a high
    condition index, ``r2_guide`` the R² guide, ``names`` the labels.
    """

    def __init__(
        self,
        proxy_groups: Sequence[Sequence[str]],
        r2_pairs: Mapping[tuple[str, str], float],
        flagged: Sequence[Sequence[str]],
        r2_guide: float,
        names: Mapping[str, str],
    ) -> None:
        self.proxy_group_of = {m: i for i, g in enumerate(proxy_groups) for m in g}
        self.pairs_of: dict[str, list[tuple[str, str, float]]] = {}
        for (a, b), r2 in r2_pairs.items():
            if r2 >= r2_guide:
                self.pairs_of.setdefault(a, []).append((a, b, r2))
        self.flagged = [set(d) for d in flagged]
        self.r2_guide = r2_guide
        self.names = names

    def why(self, group: Sequence[str], member: str | None = None) -> str:
        """Why the members of ``group`` form a collinear group, as a clause
        naming the numbers.  With ``member``, an R² that involves that
        member is named first, so the clause speaks of the covariate whose
        verdict it explains."""
        members = set(group)
        names = self.names
        reasons: list[str] = []
        proxies = [self.proxy_group_of[m] for m in members if m in self.proxy_group_of]
        if len(proxies) > len(set(proxies)):
            reasons.append("a proxy link joins them")
        high = sorted(
            (
                (member in (a, b), r2, a, b)
                for m in members
                for a, b, r2 in self.pairs_of.get(m, ())
                if b in members
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
            reasons.append(f"{who} is {r2:.3g} against the guide {self.r2_guide:g}")
        if any(len(members & d) >= 2 for d in self.flagged):
            reasons.append("they share a dimension with a high condition index")
        if len(reasons) > 1:
            return ", ".join(reasons[:-1]) + " and " + reasons[-1]
        return reasons[0] if reasons else ""


class SetInUse:
    """The adjustment set in use, as constructs, for the questions asked of
    each collinear group (built once per result): the set without a group's
    members is one set difference, not a new reading of every member.

    ``check`` is the criterion for the diagram, ``members`` the set.
    """

    def __init__(self, check: Backdoor, members: Sequence[str]) -> None:
        self.check = check
        self.members = tuple(members)
        self._of = check.merged.construct_of
        self._held = set(self.members)
        self._counts = Counter(self._of[m] for m in self.members)
        self._constructs = frozenset(self._counts)

    def without(self, group: Sequence[str]) -> frozenset[str]:
        """Constructs the set adjusts once the members of ``group`` are out."""
        dropped = Counter(self._of[m] for m in set(group) if m in self._held)
        gone = {c for c, k in dropped.items() if k == self._counts[c]}
        return self._constructs - gone if gone else self._constructs

    def suffices(self, rest: frozenset[str], members: Iterable[str]) -> bool:
        """Whether ``rest`` (constructs) with ``members`` meets the criterion."""
        return self.check.suffices_constructs(rest | {self._of[m] for m in members})


def needed_together(in_use: SetInUse, group: Sequence[str]) -> tuple[str, ...]:
    """Members of a collinear group that the diagram needs whichever other is kept.

    Empty when some member alone, with the rest of the set in use, gives a
    sufficient set (then one of them is to be kept), or when the rest with
    the whole group is not sufficient either.  Otherwise the members whose
    removal, with every other member kept, leaves the set insufficient.
    """
    rest = in_use.without(group)
    if any(in_use.suffices(rest, [m]) for m in group):
        return ()
    if not in_use.suffices(rest, group):
        return ()
    return tuple(m for m in group if not in_use.suffices(rest, [o for o in group if o != m]))


def stands_for(
    G: nx.DiGraph, da: DiagramAnalysis, nodes: Iterable[str]
) -> dict[str, tuple[str, ...]]:
    """For each of ``nodes``: the confounders among its ancestors (what a
    confounder proxy stands for).

    One pass over the diagram in causal order, each node carrying the set of
    confounders above it as a bit mask: one search for all the nodes, not
    one per node.
    """
    confounders = sorted(c for c, f in da.roles.items() if f.role == "confounder" and c in G)
    bit = {c: 1 << i for i, c in enumerate(confounders)}
    above: dict[str, int] = {}
    for v in nx.topological_sort(G):
        mask = 0
        for p in G.pred[v]:
            mask |= above[p] | bit.get(p, 0)
        above[v] = mask
    out: dict[str, tuple[str, ...]] = {}
    for node in nodes:
        mask = above.get(node, 0)
        found: list[str] = []
        while mask:  # the set bits only: the cost of the answer, not of every confounder
            low = mask & -mask
            found.append(confounders[low.bit_length() - 1])
            mask ^= low
        out[node] = tuple(found)
    return out


def suggest_member(
    group: Sequence[str],
    alone: Sequence[str],
    *,
    chosen: str | None,
    recommended: Sequence[str],
    proposed: Sequence[str],
    rest: Sequence[str],
    estimate_of: Callable[[tuple[str, ...]], float | None],
    se_of: Callable[[tuple[str, ...]], float | None],
    names: Mapping[str, str],
    contrast: str = "",
) -> tuple[str | None, str]:
    """The member of a collinear group to keep, and why (a clause).

    ``contrast`` names the contrast ``estimate_of`` reads for a multi-level
    exposure ("high vs low"; empty otherwise).

    The saved choice wins; then the member the proposed set holds alone;
    then the member that carries the most of the confounding
    (:func:`~covariscope.analysis.recommend.rank_members`), the standard
    error deciding only between equivalent members.
    """
    if chosen in group:
        return chosen, "it is the saved choice"
    in_rec = [m for m in group if m in recommended]
    in_proposed = [m for m in group if m in proposed]
    if len(in_proposed) == 1 and in_proposed[0] in alone:
        return in_proposed[0], "it is the member in the proposed set"
    ranking = rank_members(
        [m for m in group if m in alone] or group, rest, estimate_of=estimate_of, se_of=se_of
    )
    pick = ranking.best or (in_rec[0] if in_rec else (alone[0] if alone else None))
    if pick is None:
        return None, ""
    if ranking.best is None or ranking.whole is None or len(ranking.alone) < 2:
        if pick in in_rec:
            return pick, "it is the member in the recommended set"
        return pick, "it alone gives a sufficient set"
    return pick, _carries_most(ranking, pick, names, contrast)


def _carries_most(
    ranking: MemberRanking, pick: str, names: Mapping[str, str], contrast: str = ""
) -> str:
    """Why ``pick`` is kept, naming the estimates (and the SEs when they decided)."""
    others = ", ".join(
        f"{b:.4g} with {names.get(m, m)}" for m, b in sorted(ranking.alone.items()) if m != pick
    )
    if ranking.by_se:
        return (
            "the members move the exposure estimate alike, and its set gives the smaller "
            f"standard error ({ranking.se.get(pick, math.nan):.4g})"
        )
    return (
        "it carries the most of the confounding: adjusting for it alone gives an exposure "
        f"estimate{f' ({contrast})' if contrast else ''} of {ranking.alone[pick]:.4g}, the closest to {ranking.whole:.4g} with the "
        f"whole group (against {others}); a noisier measure leaves residual confounding even "
        "when its standard error looks smaller"
    )
