"""Wording for verdict sentences: percentages, guides, sets, paths, labels.

Each verdict's sentence names the numbers and the guides it used; these
helpers keep that wording the same across the rules.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import replace

from covariscope.analysis.verdict_terms import Facts, Numbers

__all__ = [
    "COMPARISON_WORDS",
    "MEMBERS_NAMED",
    "PATHS_NAMED",
    "Labels",
    "estimate_words",
    "format_set",
    "guide",
    "labelled",
    "largest_shift",
    "members_words",
    "names_words",
    "num",
    "path_words",
    "pct",
    "scale_words",
    "shift_clause",
]


def pct(value: float | None) -> str:
    """A signed percentage for a sentence (``+12.0%``); ``not defined`` for None."""
    if value is None:
        return "not defined"
    return f"{value if round(value, 1) else 0.0:+.1f}%"  # never "-0.0%"


def num(value: float | None, digits: int = 3) -> str:
    """A number to ``digits`` significant digits; ``not available`` when missing or not finite."""
    return "not available" if value is None or not math.isfinite(value) else f"{value:.{digits}g}"


def format_set(members: Iterable[str]) -> str:
    """``["age", "sex"]`` → ``"{age, sex}"``."""
    items = list(members)
    return "{" + ", ".join(items) + "}" if items else "the empty set"


#: Paths a verdict sentence names (the first of those the facts hold).
PATHS_NAMED = 3

#: Members of a set a verdict sentence names; the rest are counted.  Every
#: covariate's sentence may name the set in use, so naming all of a set of
#: hundreds made the sentences grow as the square of the diagram (2 MB of
#: reasons on a 616-node diagram).  Common practice: the set itself is shown
#: in full once, beside the sentences.
MEMBERS_NAMED = 12


def names_words(names: Sequence[str]) -> str:
    """Names joined by commas; past :data:`MEMBERS_NAMED`, the rest counted.

    >>> names_words(["age", "sex"])
    'age, sex'
    >>> names_words([f"v{i}" for i in range(14)])
    'v0, v1, v2, v3, v4, v5, v6, v7, v8, v9, v10, v11 and 2 more'
    """
    if len(names) <= MEMBERS_NAMED:
        return ", ".join(names)
    return f"{', '.join(names[:MEMBERS_NAMED])} and {len(names) - MEMBERS_NAMED:,} more"


def members_words(members: Sequence[str]) -> str:
    """A set as :func:`format_set` writes it; past :data:`MEMBERS_NAMED`
    members, the rest counted: ``{a, …, l} and 290 more``."""
    if len(members) <= MEMBERS_NAMED:
        return format_set(members)
    return f"{format_set(members[:MEMBERS_NAMED])} and {len(members) - MEMBERS_NAMED:,} more"


def path_words(nodes: Sequence[str]) -> str:
    """A path as its node names joined by dashes."""
    return " – ".join(nodes)


def _label(node: str, names: Mapping[str, str]) -> str:
    """A node's label; a measure group ("a|b") by its members' labels."""
    if "|" not in node:
        return names.get(node, node) or node
    return " | ".join(names.get(m, m) or m for m in node.split("|"))


class Labels:
    """The labels the sentences of one result use.

    Every covariate's facts may hold the set in use (hundreds of members);
    a set met again as the same object is labelled once per result, not
    once per covariate.

    Examples
    --------
    >>> labels = Labels({"a": "Age"})
    >>> members = tuple("abcdefghijklmn")
    >>> labels.many(members)[:2], labels.many(members) is labels.many(members)
    (('Age', 'b'), True)
    """

    def __init__(self, names: Mapping[str, str]) -> None:
        self.names = names
        self._sets: dict[int, tuple[Sequence[str], tuple[str, ...]]] = {}

    def one(self, node: str) -> str:
        """A node's label (a measure group by its members' labels)."""
        return _label(node, self.names)

    def many(self, nodes: Sequence[str]) -> tuple[str, ...]:
        """Labels of several nodes; a long sequence is labelled once."""
        if len(nodes) <= MEMBERS_NAMED:
            return tuple(self.one(n) for n in nodes)
        kept = self._sets.get(id(nodes))
        if kept is not None and kept[0] is nodes:
            return kept[1]
        out = tuple(self.one(n) for n in nodes)
        self._sets[id(nodes)] = (nodes, out)  # the sequence is kept, so its id stays its own
        return out


def labelled(f: Facts, names: Mapping[str, str] | Labels) -> Facts:
    """The facts with every node named by its label, for the sentence only.

    Of each list of paths only the :data:`PATHS_NAMED` a sentence names are
    kept and labelled: a collider's facts can hold hundreds of paths.
    ``names`` may be the result's :class:`Labels`, which label the set in
    use once for every covariate.
    """
    labels = names if isinstance(names, Labels) else Labels(names)
    one, many = labels.one, labels.many

    def paths(ps: Sequence[Sequence[str]]) -> tuple[tuple[str, ...], ...]:
        return tuple(many(p) for p in ps[:PATHS_NAMED])

    return replace(
        f,
        node=one(f.node),
        group=many(f.group),
        group_alone=many(f.group_alone),
        suggested=one(f.suggested) if f.suggested is not None else None,
        opened_paths=paths(f.opened_paths),
        would_open=paths(f.would_open),
        stands_for=many(f.stands_for),
        stands_for_adjusted=many(f.stands_for_adjusted),
        would_close=paths(f.would_close),
        set_members=many(f.set_members),
        aliased_with=many(f.aliased_with),
    )


def guide(t: Mapping[str, float], key: str) -> str:
    """A threshold as the sentence quotes it (percent thresholds with ``%``)."""
    value = t[key]
    if key in ("change_pct", "se_inflation_pct"):
        return f"{value:g}%"
    return f"{value:g}"


def scale_words(ratio_family: bool) -> str:
    """`` on the ratio scale`` for ratio measures, else nothing."""
    return " on the ratio scale" if ratio_family else ""


def estimate_words(n: Numbers) -> str:
    """ "the estimate", or for a multi-level exposure "the estimate of current vs
    never (the contrast that moved most)"."""
    if not n.contrast:
        return "the estimate"
    return f"the estimate of {n.contrast} (the contrast that moved most)"


def shift_clause(n: Numbers, ratio: bool) -> str:
    """ "adding it moves the estimate by +12.0% and its SE by +3.0%"."""
    if n.added is None:
        return "no comparison could be made"
    return (
        f"adding it to the crude model moves {estimate_words(n)} by {pct(n.added.change_read(ratio))}"
        f"{scale_words(ratio)} and its standard error by {pct(n.added.se_inflation_pct)}"
    )


def largest_shift(n: Numbers, ratio: bool) -> tuple[str, float] | None:
    """The comparison that shifts the estimate most: ("added"|"dropped", change)."""
    best: tuple[str, float] | None = None
    for name, shift in (("added", n.added), ("dropped", n.dropped)):
        if shift is None:
            continue
        value = shift.change_read(ratio)
        if value is not None and (best is None or abs(value) > abs(best[1])):
            best = (name, value)
    return best


COMPARISON_WORDS = {
    "added": "adding it to the crude model",
    "dropped": "adding it last (the full model against the full model without it)",
}
