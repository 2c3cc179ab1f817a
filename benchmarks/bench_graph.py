"""Time the graph criteria on a 40-node diagram against trying every subset.

Run: .venv/bin/python benchmarks/bench_graph.py

Ours: roles, all minimal adjustment sets, and the backdoor path listing
(capped at 500, with its total counted under a work budget) on a seeded
40-node diagram with 30 measured covariates.  On a dense 40-node diagram
(76 arrows, millions of backdoor paths) the budgeted count is timed against
the exact count.  The straightforward approach tries every subset of
measured covariates with networkx.is_d_separator; it is timed in full on a
smaller diagram and, for the 40-node one, estimated from the measured cost of
one check times the number of subsets.
"""

from __future__ import annotations

import itertools
import random
import statistics
import time

import networkx as nx

from covariscope.analysis.graph import analyse_diagram, backdoor_paths, minimal_adjustment_sets
from covariscope.analysis.paths import COUNT_BUDGET


def make_diagram(n: int, n_unmeasured: int, seed: int) -> tuple[nx.DiGraph, str, str]:
    rng = random.Random(seed)
    names = [f"v{i:02d}" for i in range(n)]
    G = nx.DiGraph()
    G.add_nodes_from(names)
    for j in range(1, n):
        for i in rng.sample(range(j), min(j, rng.choice((1, 1, 2, 2, 3)))):
            G.add_edge(names[i], names[j])
    x, y = names[n // 2], names[n - 3]
    G.add_edge(x, y)
    covariates = [v for v in names if v not in (x, y)]
    hidden = set(rng.sample(covariates, n_unmeasured))
    for v in names:
        G.nodes[v]["kind"] = {x: "exposure", y: "outcome"}.get(v, "covariate")
        G.nodes[v]["measured"] = v not in hidden
    return G, x, y


def brute_force_sets(G: nx.DiGraph, x: str, y: str) -> list[tuple[str, ...]]:
    desc = nx.descendants(G, x)
    H = G.copy()
    H.remove_edges_from(list(G.out_edges(x)))
    cands = sorted(
        v for v, m in G.nodes(data="measured") if m and v not in (x, y) and v not in desc
    )
    good = [
        frozenset(s)
        for k in range(len(cands) + 1)
        for s in itertools.combinations(cands, k)
        if nx.is_d_separator(H, {x}, {y}, set(s))
    ]
    return sorted(tuple(sorted(s)) for s in good if not any(t < s for t in good))


def best_of(fn, repeat: int = 5) -> float:  # type: ignore[no-untyped-def]
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    G, x, y = make_diagram(40, 8, seed=5)
    measured = sum(1 for v, m in G.nodes(data="measured") if m and v not in (x, y))
    analysis = analyse_diagram(G, x, y, proposed=sorted(G.predecessors(x)))
    print(
        f"diagram: {G.number_of_nodes()} nodes, {G.number_of_edges()} arrows, {measured} measured covariates"
    )
    print(
        f"  backdoor paths: {analysis.paths.total_text()} (listed {len(analysis.paths.paths)}), "
        f"minimal sets: {len(analysis.minimal_sets)}"
    )
    t_all = best_of(lambda: analyse_diagram(G, x, y, proposed=sorted(G.predecessors(x))))
    t_sets = best_of(lambda: minimal_adjustment_sets(G, x, y))
    t_paths = best_of(lambda: backdoor_paths(G, x, y, given=sorted(G.predecessors(x)), cap=500))
    print(f"ours, roles + all minimal sets + paths + review: {t_all * 1000:.1f} ms")
    print(f"ours, all minimal sets alone:                  {t_sets * 1000:.1f} ms")
    print(f"ours, path statuses (cap 500):                 {t_paths * 1000:.1f} ms")

    # The straightforward approach in full on a diagram small enough to finish.
    g, sx, sy = make_diagram(20, 3, seed=7)
    small_cands = sum(
        1
        for v, m in g.nodes(data="measured")
        if m and v not in (sx, sy) and v not in nx.descendants(g, sx)
    )
    ours_small = best_of(lambda: minimal_adjustment_sets(g, sx, sy))
    t0 = time.perf_counter()
    brute = brute_force_sets(g, sx, sy)
    brute_small = time.perf_counter() - t0
    assert [tuple(s) for s in minimal_adjustment_sets(g, sx, sy)] == brute
    print(
        f"20-node diagram ({small_cands} candidate covariates, {2**small_cands} subsets): "
        f"brute force {brute_small * 1000:.0f} ms, ours {ours_small * 1000:.2f} ms, "
        f"ratio {brute_small / ours_small:.0f}x (same sets)"
    )

    # Estimate for the 40-node diagram: one separation check times all subsets.
    H = G.copy()
    H.remove_edges_from(list(G.out_edges(x)))
    desc = nx.descendants(G, x)
    cands = [v for v, m in G.nodes(data="measured") if m and v not in (x, y) and v not in desc]
    rng = random.Random(1)
    per_check = statistics.median(
        best_of(lambda: nx.is_d_separator(H, {x}, {y}, set(rng.sample(cands, len(cands) // 2))), 3)
        for _ in range(50)
    )
    estimate = per_check * 2 ** len(cands)
    print(
        f"40-node diagram ({len(cands)} candidate covariates): brute force estimated "
        f"{estimate:.0f} s ({per_check * 1e6:.0f} µs × 2^{len(cands)} checks), "
        f"ratio ≈ {estimate / t_sets:.1e}x"
    )

    dense_diagram_timings()


def make_dense_diagram(n: int, arrows: int, seed: int) -> tuple[nx.DiGraph, str, str]:
    """A connected seeded diagram with the given number of arrows, all measured."""
    rng = random.Random(seed)
    names = [f"v{i:02d}" for i in range(n)]
    G = nx.DiGraph()
    G.add_nodes_from(names)
    for j in range(1, n):
        G.add_edge(names[rng.randrange(j)], names[j])
    while G.number_of_edges() < arrows - 1:
        i, j = sorted(rng.sample(range(n), 2))
        G.add_edge(names[i], names[j])
    x, y = names[n // 2], names[n - 3]
    G.add_edge(x, y)
    for v in names:
        G.nodes[v]["kind"] = {x: "exposure", y: "outcome"}.get(v, "covariate")
        G.nodes[v]["measured"] = True
    return G, x, y


def dense_diagram_timings() -> None:
    """Budgeted count (the default) against the exact count on a dense diagram."""
    G, x, y = make_dense_diagram(40, 76, seed=1)
    proposed = sorted(G.predecessors(x))
    budgeted = backdoor_paths(G, x, y)
    t_budget = best_of(lambda: backdoor_paths(G, x, y), 3)
    t_all = best_of(lambda: analyse_diagram(G, x, y, proposed=proposed), 3)
    t0 = time.perf_counter()
    exact = backdoor_paths(G, x, y, count_budget=None)
    t_exact = time.perf_counter() - t0
    print(
        f"dense diagram: {G.number_of_nodes()} nodes, {G.number_of_edges()} arrows; "
        f"backdoor paths {exact.total:,} (exact), budgeted count says {budgeted.total_text()}"
    )
    print(f"ours, paths with the count budget ({COUNT_BUDGET:,}): {t_budget * 1000:.0f} ms")
    print(f"ours, roles + all minimal sets + paths + review:   {t_all * 1000:.0f} ms")
    print(f"exact count without a budget: {t_exact:.1f} s, ratio {t_exact / t_budget:.0f}x")


if __name__ == "__main__":
    main()
