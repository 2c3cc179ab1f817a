"""Plain sentences about a proposed adjustment set, built from its review.

Every screen that says whether the proposed set suffices (``check``, the
window's paths panel, the page, the analysis messages) reads its words from
here, so a set that holds a mediator is never called insufficient with "0 open
paths", and members that can go one at a time but not together are said to be
"either one, not both".
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from covariscope.analysis.adjustment import ProposalReview
from covariscope.vocabulary import Role, role_label

__all__ = [
    "PROPOSED_SET",
    "collider_openers",
    "descendant_reasons",
    "insufficiency_reasons",
    "sufficiency_sentence",
    "unnecessary_words",
]

#: The one name of the analyst's set on every screen and the page.
PROPOSED_SET = "Proposed set"

#: Why a descendant of the exposure spoils a set, by its role.
_DESCENDANT_WHY: Mapping[str, str] = {
    Role.MEDIATOR: "adjusting for it removes part of the effect",
    Role.DESCENDANT_OF_EXPOSURE: "adjusting for it can bias the estimate",
    Role.DESCENDANT_OF_OUTCOME: "adjusting for it can bias the estimate",
}


def _names(ids: Iterable[str], label_of: Mapping[str, str]) -> list[str]:
    return [label_of.get(i, i) for i in ids]


def _joined(names: list[str]) -> str:
    """``a``; ``a and b``; ``a, b and c``."""
    if len(names) <= 1:
        return "".join(names)
    return ", ".join(names[:-1]) + " and " + names[-1]


def collider_openers(review: ProposalReview) -> tuple[str, ...]:
    """Members that open a backdoor path through a collider (the harmful
    members that are not descendants of the exposure)."""
    return tuple(h for h in review.harmful if h not in review.exposure_descendants)


def descendant_reasons(
    review: ProposalReview, roles: Mapping[str, str], label_of: Mapping[str, str]
) -> tuple[str, ...]:
    """One clause per member that descends from the exposure: which role, and why it
    spoils the set."""
    out = []
    for m in review.exposure_descendants:
        role = roles.get(m)
        why = _DESCENDANT_WHY.get(role or "", _DESCENDANT_WHY[Role.DESCENDANT_OF_EXPOSURE])
        word = role_label(role) if role in _DESCENDANT_WHY else "descendant of exposure"
        out.append(f"it holds {label_of.get(m, m)}, a {word} ({why})")
    return tuple(out)


def insufficiency_reasons(
    review: ProposalReview, roles: Mapping[str, str], label_of: Mapping[str, str]
) -> tuple[str, ...]:
    """Why a proposed set fails the backdoor criterion, one clause per reason.

    Parameters
    ----------
    review : ProposalReview
        The set's review (:func:`covariscope.analysis.adjustment.review_proposal`).
    roles : mapping
        Node id to role code (what each member is for the total effect).
    label_of : mapping
        Node id to the label people read.

    Returns
    -------
    tuple of str
        Empty for a sufficient set.

    Examples
    --------
    >>> import networkx as nx
    >>> from covariscope.analysis.adjustment import review_proposal
    >>> G = nx.DiGraph([("c", "x"), ("c", "y"), ("x", "m"), ("m", "y")])
    >>> r = review_proposal(G, "x", "y", ["c", "m"])
    >>> insufficiency_reasons(r, {"m": "mediator"}, {"m": "Inflammation"})
    ('it holds Inflammation, a mediator (adjusting for it removes part of the effect)',)
    """
    if review.sufficient:
        return ()
    out = list(descendant_reasons(review, roles, label_of))
    if review.open_paths_total or not review.open_paths_total_exact:
        total = review.open_paths_total
        plural = "s" if total != 1 or not review.open_paths_total_exact else ""
        clause = f"it leaves {review.open_paths_text()} backdoor path{plural} open"
        openers = collider_openers(review)
        if openers:
            verb = "opens" if len(openers) == 1 else "open"
            clause += f" ({_joined(_names(openers, label_of))} {verb} a collider path)"
        out.append(clause)
    if not out:
        out.append("the exposure and the outcome stay connected through a backdoor path given it")
    return tuple(out)


def sufficiency_sentence(
    review: ProposalReview, roles: Mapping[str, str], label_of: Mapping[str, str]
) -> str:
    """``"sufficient"`` or ``"not sufficient: <reasons>"`` for the proposed set.

    >>> import networkx as nx
    >>> from covariscope.analysis.adjustment import review_proposal
    >>> G = nx.DiGraph([("c", "x"), ("c", "y"), ("x", "y")])
    >>> sufficiency_sentence(review_proposal(G, "x", "y", []), {}, {"c": "Age"})
    'not sufficient: it leaves 1 backdoor path open'
    """
    if review.sufficient:
        return "sufficient"
    return "not sufficient: " + "; ".join(insufficiency_reasons(review, roles, label_of))


def unnecessary_words(review: ProposalReview, label_of: Mapping[str, str]) -> str:
    """The members the set can do without, with "either one, not both" where
    dropping them together would leave it insufficient; empty when none.

    >>> import networkx as nx
    >>> from covariscope.analysis.adjustment import review_proposal
    >>> G = nx.DiGraph([("c", "a"), ("c", "b"), ("a", "x"), ("b", "y"), ("x", "y"), ("s", "y")])
    >>> r = review_proposal(G, "x", "y", ["a", "b", "s"])
    >>> unnecessary_words(r, {"a": "Area", "b": "Income", "s": "Smoking"})
    'Smoking; either Area or Income, not both'
    """
    grouped = {m for g in review.not_together for m in g}
    parts = []
    free = [m for m in review.unnecessary if m not in grouped]
    if free:
        parts.append(", ".join(_names(free, label_of)))
    for g in review.not_together:
        names = _names(g, label_of)
        if len(names) == 2:
            parts.append(f"either {names[0]} or {names[1]}, not both")
        else:
            parts.append(
                f"{', '.join(names)}, one at a time (dropping several together can reopen a path)"
            )
    return "; ".join(parts)
