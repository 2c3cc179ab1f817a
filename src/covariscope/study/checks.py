"""The diagram-check stage: the diagram's independence claims tested on the sample.

Reads the diagram (arrows, proxy links), the bindings (which nodes have
data, through the design) and two settings (correction, limit); linear
claims reuse the evidence engine's cross-product summary, so they cost no
pass over the rows.  Its inputs are exactly :func:`checks_key`'s.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Mapping
from dataclasses import replace

import networkx as nx

from covariscope.analysis.claim_tests import (
    ClaimMemo,
    DiagramChecks,
    check_claims,
    design_claim_data,
)
from covariscope.analysis.claim_wording import verdict_clause
from covariscope.analysis.claims import SeparatorMemo, implied_claims
from covariscope.analysis.evidence import EvidenceEngine
from covariscope.analysis.verdicts import Verdict
from covariscope.model.project import Project

__all__ = ["check_diagram", "checks_key", "with_failed_claims"]


def checks_key(project: Project, G: nx.DiGraph, engine: EvidenceEngine) -> str:
    """What the stage reads: the data digest, arrows, proxy links and settings.

    Moving a node or editing a label or note leaves it unchanged.
    """
    a = project.analysis
    parts = (
        engine.design.key,
        sorted(G.edges),
        sorted(tuple(sorted(p)) for p in G.graph.get("proxies", [])),
        a.claim_correction,
        a.claim_limit,
    )
    return hashlib.sha256(repr(parts).encode()).hexdigest()


def check_diagram(
    project: Project,
    G: nx.DiGraph,
    exposure: str,
    outcome: str,
    engine: EvidenceEngine,
    *,
    cancel: Callable[[], bool] | None = None,
    memo: ClaimMemo | None = None,
    separators: SeparatorMemo | None = None,
    on_claim: Callable[[int, int], None] | None = None,
) -> DiagramChecks:
    """Every claim of the diagram among the nodes with data, tested and corrected.

    ``memo`` keeps each claim's test across runs (see
    :func:`~covariscope.analysis.claim_tests.check_claims`), ``separators``
    each pair's separating set (see
    :func:`~covariscope.analysis.claims.implied_claims`); ``on_claim(k, n)``
    hears of each claim tested.
    """
    data = design_claim_data(engine.design, engine.summary, outcome)
    claims = implied_claims(
        G,
        exposure,
        outcome,
        data.columns,
        limit=project.analysis.claim_limit,
        memo=separators,
    )
    return check_claims(
        claims,
        data,
        method=project.analysis.claim_correction,
        cancel=cancel,
        memo=memo,
        on_claim=on_claim,
    )


def with_failed_claims(
    verdicts: Mapping[str, Verdict], checks: DiagramChecks, names: Mapping[str, str]
) -> dict[str, Verdict]:
    """The verdicts, each ``review`` sentence naming the strongest failed claim on its covariate."""
    out = dict(verdicts)
    for node, verdict in verdicts.items():
        failures = checks.failures_involving(node)
        if verdict.code != "review" or not failures:
            continue
        clause = verdict_clause(failures[0], names, len(failures) - 1)
        reason = f"{verdict.reason.rstrip().rstrip('.')}; {clause}."
        out[node] = replace(verdict, reason=reason)
    return out
