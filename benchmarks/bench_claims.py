"""Diagram checks on a million rows: claims from the cross-product matrix vs one OLS per claim.

Run:  OPENBLAS_NUM_THREADS=1 .venv/bin/python benchmarks/bench_claims.py [--n 1000000] [--k 20]
      [--repeat 3]
      OPENBLAS_NUM_THREADS=1 .venv/bin/python benchmarks/bench_claims.py --demo

``--demo`` times the diagram-check stage of the bundled demo study instead
(mixed types: logistic and multinomial directions as well as linear ones),
wall clock and process CPU time, fastest of ``--repeat``.

A seeded diagram of an exposure, an outcome and k continuous covariates (each
arrow drawn with probability 0.15 along a random causal order; the exposure
and outcome sit mid-order) and data generated from it by linear equations.
Every independence claim the diagram makes is tested twice:

- engine: :func:`check_claims` on the study's one-pass cross-product summary
  (the summary is the one the evidence table already computes; its pass is
  timed separately and printed);
- straightforward: for each claim, ``statsmodels.OLS(a, [1, S, b]).fit()`` on
  the rows and the t test of ``b``.

The p-values of the two are compared, then the times and their ratio printed.
Target (issue 13): all claims within a few seconds for 1e6 rows × 20 covariates.
"""

from __future__ import annotations

import argparse
import time

import networkx as nx
import numpy as np
import statsmodels.api as sm

from covariscope.analysis.claim_tests import check_claims, claim_data
from covariscope.analysis.claims import implied_claims
from covariscope.analysis.linear import linear_summary


def _diagram(k: int, seed: int = 7) -> tuple[nx.DiGraph, list[str]]:
    rng = np.random.default_rng(seed)
    order = [f"z{j}" for j in range(k)]
    order.insert(k // 3, "x")
    order.insert(2 * k // 3 + 1, "y")
    G = nx.DiGraph()
    G.add_nodes_from(order)
    for i, u in enumerate(order):
        for v in order[i + 1 :]:
            if rng.random() < 0.15:
                G.add_edge(u, v)
    G.add_edge("x", "y")
    return G, order


def _data(G: nx.DiGraph, order: list[str], n: int, seed: int = 11) -> np.ndarray:
    rng = np.random.default_rng(seed)
    index = {v: j for j, v in enumerate(order)}
    values = np.empty((n, len(order)))
    for v in order:
        col = rng.standard_normal(n)
        for u in G.predecessors(v):
            col += rng.uniform(0.2, 0.6) * values[:, index[u]]
        values[:, index[v]] = col
    return values


def demo(repeat: int) -> None:
    """The diagram-check stage of the demo study, on its analytic sample."""
    from pathlib import Path

    from covariscope.data.loading import load_table
    from covariscope.data.sources.memory import MemorySource
    from covariscope.model.project import load_project
    from covariscope.study.checks import check_diagram
    from covariscope.study.whole_source import prepare_evidence

    path = Path(__file__).resolve().parents[1] / "demo_data" / "demo_project.json"
    project = load_project(path)
    x, y = project.diagram.require_question()
    G = project.diagram.to_networkx()
    source = MemorySource(load_table(project.data.resolve(project.path)))  # type: ignore[union-attr]
    _, engine, _ = prepare_evidence(project, source, "linear", x, y, [])
    assert engine is not None
    _ = engine.summary  # the evidence table computes it before the checks run
    wall = cpu = float("inf")
    for _ in range(repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        checks = check_diagram(project, G, x, y, engine)
        wall = min(wall, time.perf_counter() - t0)
        cpu = min(cpu, time.process_time() - c0)
    tests = sorted({r.test for r in checks.results})
    print(f"demo: {checks.tested} claims ({', '.join(tests)}), {checks.failed} failed")
    print(f"demo diagram-check stage: {wall:.2f} s wall, {cpu:.2f} s CPU (fastest of {repeat})")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=1_000_000)
    parser.add_argument("--k", type=int, default=20)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--demo", action="store_true", help="time the demo study's checks")
    args = parser.parse_args()
    if args.demo:
        demo(args.repeat)
        return

    G, order = _diagram(args.k)
    values = _data(G, order, args.n)
    columns = {v: [j] for j, v in enumerate(order)}
    types = dict.fromkeys(order, "continuous")
    claims = implied_claims(G, "x", "y", order, limit=10_000)
    print(f"{args.n:,} rows, {len(order)} measured variables, {len(claims.claims)} claims")

    t0 = time.perf_counter()
    summary = linear_summary(values)
    pass_time = time.perf_counter() - t0
    data = claim_data(values, columns, types, summary=summary)

    engine = float("inf")
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        checks = check_claims(claims, data)
        engine = min(engine, time.perf_counter() - t0)

    t0 = time.perf_counter()
    p_loop = []
    for c in claims.claims:
        given = [columns[g][0] for g in c.given]
        X = np.column_stack([np.ones(args.n), values[:, given], values[:, columns[c.b][0]]])
        p_loop.append(sm.OLS(values[:, columns[c.a][0]], X).fit().pvalues[-1])
    loop = time.perf_counter() - t0

    p_engine = np.array([r.p for r in checks.results])
    worst = float(np.max(np.abs(np.log(np.maximum(p_engine, 1e-300) / np.maximum(p_loop, 1e-300)))))
    print(
        f"one pass over the rows (cross-product summary, shared with the evidence): {pass_time:.2f} s"
    )
    print(f"engine, every claim from the summary:  {engine:.3f} s  ({checks.failed} failed)")
    print(f"statsmodels OLS, one fit per claim:     {loop:.2f} s")
    print(f"ratio (statsmodels / engine):           {loop / engine:.0f}×")
    print(f"ratio (statsmodels / (pass + engine)):  {loop / (pass_time + engine):.1f}×")
    print(f"largest |log p ratio| between the two:  {worst:.2e}")


if __name__ == "__main__":
    main()
