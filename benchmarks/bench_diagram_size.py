"""How the analysis of a large diagram grows with its size.

Run: .venv/bin/python benchmarks/bench_diagram_size.py [N] [SHAPE ...]

The demo study (its data and its 16-node diagram) is given N extra
covariates that are not bound to a column, then 2N; each project is loaded
and analysed as ``covariscope check`` does, and the time at N, at 2N and
their ratio are printed.  A near-linear analysis gives a ratio near 2; a
quadratic one near 4.  Shapes of the extra nodes:

- ``fan``: each is a cause of the outcome (a thousand-parent outcome);
- ``chain``: a chain of causes ending in the outcome;
- ``random``: a sparse random diagram (two causes each among the earlier
  extra nodes), twenty of which cause the outcome;
- ``confounders``: each causes both the exposure and the outcome.

Half of the extra nodes are marked unmeasured.  The straightforward approach
this is measured against is the same engine at half the size: the ratio is
the point.  Timings on a shared machine vary; run it alone.
"""

from __future__ import annotations

import itertools
import json
import random
import shutil
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

from covariscope.data.sources.choose import open_source
from covariscope.model.project import load_project
from covariscope.study import run_study

DEMO = Path(__file__).resolve().parent.parent / "demo_data"
SHAPES = ("fan", "chain", "random", "confounders")


def _extra_arrows(ids: list[str], shape: str, rng: random.Random) -> list[dict[str, str]]:
    arrows: list[tuple[str, str]] = []
    if shape == "fan":
        arrows = [(i, "lungfn") for i in ids]
    elif shape == "chain":
        arrows = [*itertools.pairwise(ids), (ids[-1], "lungfn")]
    elif shape == "random":
        for j in range(1, len(ids)):
            arrows += [(ids[i], ids[j]) for i in rng.sample(range(j), min(j, 2))]
        arrows += [(i, "lungfn") for i in rng.sample(ids, min(20, len(ids)))]
    elif shape == "confounders":
        arrows = [(i, end) for i in ids for end in ("dust", "lungfn")]
    return [{"from": a, "to": b} for a, b in arrows]


def make_project(folder: Path, n_extra: int, shape: str, seed: int = 3) -> Path:
    """The demo project with ``n_extra`` unbound covariates of one shape."""
    data: dict[str, Any] = json.loads((DEMO / "demo_project.json").read_text())
    shutil.copy(DEMO / "demo_cohort.csv", folder / "demo_cohort.csv")
    ids = [f"extra{i}" for i in range(n_extra)]
    data["diagram"]["nodes"] += [
        {"id": i, "kind": "covariate", "measured": k % 2 == 0, "x": 10.0 * (k % 100), "y": 700.0}
        for k, i in enumerate(ids)
    ]
    data["diagram"]["arrows"] += _extra_arrows(ids, shape, random.Random(seed))
    path = folder / f"{shape}_{n_extra}.json"
    path.write_text(json.dumps(data))
    return path


def analyse(path: Path) -> float:
    """Seconds to load the project and analyse it with its data."""
    start = time.perf_counter()
    project = load_project(path)
    assert project.data is not None
    source = open_source(project.data.resolve(project.path), "memory")
    run_study(project, source=source)
    return time.perf_counter() - start


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1000
    shapes = sys.argv[2:] or list(SHAPES)
    with tempfile.TemporaryDirectory() as d:
        folder = Path(d)
        analyse(make_project(folder, 10, "fan"))  # imports and first-call costs
        print(
            f"{'shape':<12} {'nodes':>7} {'seconds':>8} {'nodes x2':>9} {'seconds':>8} {'ratio':>6}"
        )
        for shape in shapes:
            t1 = analyse(make_project(folder, n, shape))
            t2 = analyse(make_project(folder, 2 * n, shape))
            print(f"{shape:<12} {n + 16:>7} {t1:>8.2f} {2 * n + 16:>9} {t2:>8.2f} {t2 / t1:>6.2f}")


if __name__ == "__main__":
    main()
