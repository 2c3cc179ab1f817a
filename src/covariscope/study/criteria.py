"""The graph stages: graph criteria (roles, minimal sets) and the proposal review.

The criteria read the diagram's structure only — node ids, kinds, measured
flags, arrows, proxy links — so moving a node or editing its label or note
finds them in the cache.  The proposal review reads the structure and the
proposed set, so ticking a covariate recomputes the review alone.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import networkx as nx

from covariscope.analysis.adjustment import ProposalReview, list_minimal_sets, review_on
from covariscope.analysis.constructs import MergedDiagram, merge_diagram
from covariscope.analysis.graph import DiagramAnalysis
from covariscope.analysis.paths import PathListing, listing
from covariscope.analysis.roles import RoleFacts, roles_on
from covariscope.model.diagram import Diagram

__all__ = ["GraphCriteria", "graph_criteria", "proposal_review", "structure_key"]

#: Paths listed when nothing is adjusted (the listing says when it stopped early).
PATH_CAP = 500


@dataclass(frozen=True, eq=False)
class GraphCriteria:
    """What the diagram alone says, before any proposal: roles, minimal sets, paths."""

    key: tuple[Any, ...]
    graph: nx.DiGraph
    merged: MergedDiagram
    exposure: str
    outcome: str
    roles: dict[str, RoleFacts]
    minimal_sets: tuple[tuple[str, ...], ...]
    paths: PathListing
    #: False when the listing of minimal sets stopped at its budget
    minimal_sets_complete: bool = True

    def with_review(self, review: ProposalReview) -> DiagramAnalysis:
        """The whole diagram analysis, given a proposal's review."""
        md = self.merged
        return DiagramAnalysis(
            exposure=self.exposure,
            outcome=self.outcome,
            roles=self.roles,
            minimal_sets=self.minimal_sets,
            minimal_sets_complete=self.minimal_sets_complete,
            identifiable=bool(self.minimal_sets),
            review=review,
            paths=self.paths,
            groups=md.groups,
            measures_exposure=md.measures_exposure,
            measures_outcome=md.measures_outcome,
        )


def structure_key(diagram: Diagram, exposure: str, outcome: str) -> tuple[Any, ...]:
    """Exactly what the graph criteria read of a diagram (no position, label or note)."""
    return (
        exposure,
        outcome,
        tuple((n.id, n.kind, n.measured) for n in diagram.nodes),
        tuple(diagram.arrows),
        tuple(diagram.proxies),
    )


def graph_criteria(diagram: Diagram, exposure: str, outcome: str) -> GraphCriteria:
    """Roles, minimal adjustment sets and the unadjusted path listing of a diagram.

    Raises
    ------
    DiagramError
        A cycle through a measure group, or an unknown exposure or outcome.
    """
    G = diagram.to_networkx()
    md = merge_diagram(G, exposure, outcome)
    unadjusted = listing(md.graph, exposure, outcome, frozenset(), PATH_CAP)
    minimal = list_minimal_sets(md, exposure, outcome)
    return GraphCriteria(
        key=structure_key(diagram, exposure, outcome),
        graph=G,
        merged=md,
        exposure=exposure,
        outcome=outcome,
        roles=roles_on(md, exposure, outcome, unadjusted),
        minimal_sets=minimal.sets,
        minimal_sets_complete=minimal.complete,
        paths=unadjusted,
    )


def proposal_review(criteria: GraphCriteria, proposed: tuple[str, ...]) -> ProposalReview:
    """Whether the proposed set suffices, the paths it leaves open, what in it is not needed."""
    return review_on(criteria.merged, criteria.exposure, criteria.outcome, proposed)
