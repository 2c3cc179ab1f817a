"""Simulation with known truth: a linear structural model drawn from a diagram."""

from __future__ import annotations

import networkx as nx
import numpy as np
import pandas as pd
import pytest

from covariscope.analysis.design import TermSpec, make_design
from covariscope.analysis.evidence import EvidenceEngine, compute_evidence

TRUE_EFFECT = 0.5

# Diagram: z confounds (z → x, z → y); w → x only (instrument); p → y only (precision);
# q → z, so {z} is the minimal sufficient set and {q} alone is not.
ARROWS = {
    ("q", "z"): 0.8,
    ("z", "x"): 0.9,
    ("z", "y"): 1.2,
    ("w", "x"): 0.7,
    ("p", "y"): 0.6,
    ("x", "y"): TRUE_EFFECT,
}


def _draw(rng: np.random.Generator, n: int) -> pd.DataFrame:
    graph = nx.DiGraph()
    graph.add_weighted_edges_from((a, b, w) for (a, b), w in ARROWS.items())
    values: dict[str, np.ndarray] = {}
    for node in nx.topological_sort(graph):
        noise = rng.normal(size=n)
        values[node] = noise + sum(
            graph[p][node]["weight"] * values[p] for p in graph.predecessors(node)
        )
    return pd.DataFrame(values)


def _engine(frame: pd.DataFrame) -> EvidenceEngine:
    covs = {c: TermSpec(c, "continuous") for c in frame.columns if c not in ("x", "y")}
    return EvidenceEngine(
        make_design(
            frame,
            exposure=TermSpec("x", "continuous"),
            covariates=covs,
            outcome="y",
            family="linear",
        )
    )


def test_minimal_set_covers_truth_and_crude_is_biased():
    rng = np.random.default_rng(20240611)  # seed fixed before looking at the outcome
    covered = 0
    crude = []
    for _ in range(100):
        engine = _engine(_draw(rng, 200))
        adjusted = engine.fit(["z"])
        covered += adjusted.ci[0] <= TRUE_EFFECT <= adjusted.ci[1]
        crude.append(engine.fit([]).coef)
    # The band.  With 100 replicates the binomial SD at 95 % is about 2.2, so this
    # band is only about ±1 SD wide (a random seed lands in it about 75 % of the time); this
    # fixed seed gives 97, at the edge.  The 1,000-replicate test below is the honest check.
    assert 93 <= covered <= 97
    # Crude estimate is confounded upward: its mean over replicates sits far above the truth.
    crude_arr = np.asarray(crude)
    assert crude_arr.mean() - TRUE_EFFECT > 10 * crude_arr.std() / np.sqrt(len(crude_arr))


def test_near_copy_of_exposure_inflates_se_more_than_double():
    rng = np.random.default_rng(7)
    frame = _draw(rng, 500)
    frame["xcopy"] = frame["x"] + 0.05 * rng.normal(size=len(frame))
    table = compute_evidence(_engine(frame), candidates=["z", "p", "xcopy"], added=["z", "xcopy"])
    assert table.covariates["xcopy"].added.se_inflation_pct > 100
    assert table.covariates["xcopy"].vif_exposure_added > 100
    assert table.covariates["z"].added.change_pct == pytest.approx(
        100 * (table.covariates["z"].added.with_fit.coef - table.crude.coef) / abs(table.crude.coef)
    )


def test_coverage_over_many_replicates_is_nominal():
    # Binomial spread for 1,000 replicates at 95 %: SD = √(1000 · 0.95 · 0.05) ≈ 6.9, so
    # 950 ± 21 is a ±3 SD band that a correct interval misses about 3 times in 1,000.
    rng = np.random.default_rng(8675309)  # seed fixed before looking at the outcome
    covered = 0
    for _ in range(1000):
        fit = _engine(_draw(rng, 60)).fit(["z"])
        covered += fit.ci[0] <= TRUE_EFFECT <= fit.ci[1]
    assert 929 <= covered <= 971
