"""Time loading a large project against adding its arrows one at a time.

Run: .venv/bin/python benchmarks/bench_project_load.py [N_NODES]

Ours: ``load_project``, which adds the whole arrow list at once and checks
for cycles once (linear in the size of the diagram).  The straightforward
approach adds each arrow with ``Diagram.add_arrow``, which checks for cycles
after every arrow (quadratic).  Both build the same diagram from the same
seeded file; the ratio is printed.
"""

from __future__ import annotations

import json
import random
import sys
import tempfile
import time
from pathlib import Path

from covariscope.model.diagram import Diagram, Node
from covariscope.model.project import load_project


def make_file(folder: Path, n_nodes: int, seed: int = 7) -> tuple[Path, dict]:
    rng = random.Random(seed)
    ids = [f"v{i}" for i in range(n_nodes)]
    nodes = [{"id": i, "x": float(k), "y": 0.0} for k, i in enumerate(ids)]
    nodes[0]["kind"] = "exposure"
    nodes[-1]["kind"] = "outcome"
    arrows = set()
    for j in range(1, n_nodes):
        for i in rng.sample(range(j), min(j, 2)):
            arrows.add((ids[i], ids[j]))
    data = {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {"nodes": nodes, "arrows": [{"from": a, "to": b} for a, b in sorted(arrows)]},
    }
    path = folder / "big.json"
    path.write_text(json.dumps(data))
    return path, data


def naive(data: dict) -> Diagram:
    diagram = Diagram()
    for n in data["diagram"]["nodes"]:
        diagram.add_node(Node(**n))
    for a in data["diagram"]["arrows"]:
        diagram.add_arrow(a["from"], a["to"])
    return diagram


def main() -> None:
    n_nodes = int(sys.argv[1]) if len(sys.argv) > 1 else 1000
    with tempfile.TemporaryDirectory() as d:
        path, data = make_file(Path(d), n_nodes)
        start = time.perf_counter()
        ours = load_project(path).diagram
        t_ours = time.perf_counter() - start
        start = time.perf_counter()
        theirs = naive(data)
        t_naive = time.perf_counter() - start
    assert sorted(ours.arrows) == sorted(theirs.arrows)
    n_arrows = len(data["diagram"]["arrows"])
    print(f"{n_nodes} nodes, {n_arrows} arrows")
    print(f"load_project (one cycle check): {t_ours:.3f} s")
    print(f"arrow by arrow (check each):    {t_naive:.3f} s")
    print(f"ratio: {t_naive / t_ours:.1f}x")


if __name__ == "__main__":
    main()
