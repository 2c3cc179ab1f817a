"""Graph criteria for choosing covariates: one entry point and the public names.

The engine reads a causal diagram (a ``networkx.DiGraph`` whose nodes carry
``kind`` and ``measured``, with ``G.graph["proxies"]`` the proxy links) for
the total effect of one exposure on one outcome.  The work lives in topic
modules (``constructs``, ``paths``, ``adjustment``, ``roles``); this module
re-exports their public names and bundles them in :func:`analyse_diagram`.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

import networkx as nx

from covariscope.analysis.adjustment import (
    ProposalReview,
    is_sufficient,
    list_minimal_sets,
    minimal_adjustment_sets,
    review_on,
    review_proposal,
)
from covariscope.analysis.constructs import MergedDiagram, merge_diagram
from covariscope.analysis.paths import PathListing, PathStatus, backdoor_paths, listing
from covariscope.analysis.roles import ROLES, RoleFacts, classify_covariates, roles_on

__all__ = [
    "ROLES",
    "DiagramAnalysis",
    "MergedDiagram",
    "PathListing",
    "PathStatus",
    "ProposalReview",
    "RoleFacts",
    "analyse_diagram",
    "backdoor_paths",
    "classify_covariates",
    "is_sufficient",
    "merge_diagram",
    "minimal_adjustment_sets",
    "review_proposal",
]


@dataclass(frozen=True)
class DiagramAnalysis:
    """Everything the graph criteria say about one diagram.

    ``identifiable`` is False when no set of measured covariates suffices;
    ``minimal_sets_complete`` is False when the listing of minimal sets
    stopped at its budget (:data:`~covariscope.analysis.adjustment.MINIMAL_SETS_BUDGET`).
    """

    exposure: str
    outcome: str
    roles: Mapping[str, RoleFacts]
    minimal_sets: tuple[tuple[str, ...], ...]
    identifiable: bool
    review: ProposalReview
    paths: PathListing
    groups: tuple[tuple[str, ...], ...]
    measures_exposure: frozenset[str]
    measures_outcome: frozenset[str]
    minimal_sets_complete: bool = True

    @property
    def roles_unsettled(self) -> tuple[str, ...]:
        """Covariates whose role a search left unsettled at its work budget
        (the confounder rule, or the collider rule); the messages say which."""
        return tuple(k for k, v in self.roles.items() if v.confounding_stopped or v.search_stopped)

    def to_json(self) -> dict[str, Any]:
        """The plain-data form that ``covariscope check --json`` prints."""
        return {
            "exposure": self.exposure,
            "outcome": self.outcome,
            "roles": {k: v.role for k, v in self.roles.items()},
            "roles_unsettled": list(self.roles_unsettled),
            "minimal_sets": [list(s) for s in self.minimal_sets],
            "identifiable": self.identifiable,
            "proposed": list(self.review.proposed),
            "proposed_sufficient": self.review.sufficient,
            "open_paths": [list(p) for p in self.review.open_paths],
            "unnecessary": list(self.review.unnecessary),
            "unnecessary_not_together": [list(g) for g in self.review.not_together],
            "harmful": list(self.review.harmful),
        }


def analyse_diagram(
    G: nx.DiGraph, exposure: str, outcome: str, proposed: Iterable[str] = ()
) -> DiagramAnalysis:
    """Roles, minimal adjustment sets, path listing and a proposal's review.

    Parameters
    ----------
    G : networkx.DiGraph
        The diagram.
    exposure, outcome : str
        Node ids of X and Y.
    proposed : iterable of str
        The covariates the analyst proposes to adjust for.

    Returns
    -------
    DiagramAnalysis

    Raises
    ------
    covariscope.errors.DiagramError
        Unknown exposure or outcome, exposure equal to outcome, a cycle, or a
        proposed id that is not a covariate of the diagram.

    Examples
    --------
    >>> import networkx as nx
    >>> G = nx.DiGraph([("c", "x"), ("c", "y"), ("x", "y")])
    >>> a = analyse_diagram(G, "x", "y", proposed=["c"])
    >>> a.minimal_sets, a.review.sufficient
    ((('c',),), True)
    """
    md = merge_diagram(G, exposure, outcome)
    unadjusted = listing(md.graph, exposure, outcome, frozenset(), 500)
    minimal = list_minimal_sets(md, exposure, outcome)
    return DiagramAnalysis(
        exposure=exposure,
        outcome=outcome,
        roles=roles_on(md, exposure, outcome, unadjusted),
        minimal_sets=minimal.sets,
        minimal_sets_complete=minimal.complete,
        identifiable=bool(minimal.sets),
        review=review_on(md, exposure, outcome, proposed),
        paths=unadjusted,
        groups=md.groups,
        measures_exposure=md.measures_exposure,
        measures_outcome=md.measures_outcome,
    )
