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
- ``confounders``: each causes both the exposure and the outcome;
- ``dense``: three causes each among the earlier extra nodes, every fifth a
  cause of the exposure and every seventh of the outcome (millions of
  backdoor paths);
- ``ladder``: two nodes per rung, each rung causing both nodes of the one
  below, the lowest causing the exposure and the top a collider on the way
  to the outcome (2**(N/2) branches with no open path: the walk budget);
- ``sets``: N/2 backdoor paths side by side, each closed by either of two
  covariates (2**(N/2) minimal sets: the minimal-set budget);
- ``proxies``: N/2 confounders, each measured twice (a proxy link between
  the two measures, one causing the exposure and the other the outcome):
  N/2 measure groups, each a collinear group whose members are checked
  against the backdoor criterion.

Half of the extra nodes are marked unmeasured (a fifth for ``dense``; none
for ``ladder``, ``sets`` and ``proxies``, whose point needs them measured).  The straightforward approach
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
SHAPES = ("fan", "chain", "random", "confounders", "dense", "ladder", "sets", "proxies")


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
    elif shape == "dense":
        for j in range(1, len(ids)):
            arrows += [(ids[i], ids[j]) for i in rng.sample(range(j), min(j, 3))]
        arrows += [(i, "dust") for i in ids[::5]] + [(i, "lungfn") for i in ids[::7]]
    elif shape == "ladder":
        rungs = len(ids) // 2
        arrows = [("ex_top", "ex_c"), ("ex_d", "ex_c"), ("ex_d", "lungfn"), ("ex_c", "dust")]
        arrows += [(ids[0], "dust"), (ids[1], "dust")]
        arrows += [(ids[2 * rungs - 2], "ex_top"), (ids[2 * rungs - 1], "ex_top")]
        for r in range(rungs - 1):
            arrows += [(ids[2 * r + 2 + u], ids[2 * r + v]) for u in (0, 1) for v in (0, 1)]
    elif shape == "sets":
        for k in range(len(ids) // 2):
            a, b = ids[2 * k], ids[2 * k + 1]
            arrows += [(b, a), (a, "dust"), (b, "lungfn")]
    elif shape == "proxies":
        for k in range(len(ids) // 2):
            arrows += [(ids[2 * k], "dust"), (ids[2 * k + 1], "lungfn")]
    return [{"from": a, "to": b} for a, b in arrows]


def _measured(shape: str, k: int) -> bool:
    if shape == "dense":
        return k % 5 != 0
    return shape in ("ladder", "sets", "proxies") or k % 2 == 0


def make_project(folder: Path, n_extra: int, shape: str, seed: int = 3) -> Path:
    """The demo project with ``n_extra`` unbound covariates of one shape."""
    data: dict[str, Any] = json.loads((DEMO / "demo_project.json").read_text())
    shutil.copy(DEMO / "demo_cohort.csv", folder / "demo_cohort.csv")
    ids = [f"extra{i}" for i in range(n_extra)]
    if shape == "ladder":
        ids += ["ex_top", "ex_c", "ex_d"]
    data["diagram"]["nodes"] += [
        {
            "id": i,
            "kind": "covariate",
            "measured": _measured(shape, k),
            "x": 10.0 * (k % 100),
            "y": 700.0,
        }
        for k, i in enumerate(ids)
    ]
    ids = ids[:n_extra]
    data["diagram"]["arrows"] += _extra_arrows(ids, shape, random.Random(seed))
    if shape == "proxies":
        pairs = zip(ids[::2], ids[1::2], strict=False)
        data["diagram"].setdefault("proxies", []).extend({"a": a, "b": b} for a, b in pairs)
    path = folder / f"{shape}_{n_extra}.json"
    path.write_text(json.dumps(data))
    return path


def analyse(path: Path) -> tuple[float, int]:
    """Seconds to load the project and analyse it with its data, and how many
    of the result's messages say a graph computation stopped at its budget."""
    start = time.perf_counter()
    project = load_project(path)
    assert project.data is not None
    source = open_source(project.data.resolve(project.path), "memory")
    result = run_study(project, source=source)
    return time.perf_counter() - start, sum("budget" in m for m in result.messages)


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1000
    shapes = sys.argv[2:] or list(SHAPES)
    with tempfile.TemporaryDirectory() as d:
        folder = Path(d)
        analyse(make_project(folder, 10, "fan"))  # imports and first-call costs
        print(
            f"{'shape':<12} {'nodes':>7} {'seconds':>8} {'nodes x2':>9} {'seconds':>8} "
            f"{'ratio':>6} {'budgets hit':>12}"
        )
        for shape in shapes:
            t1, hit1 = analyse(make_project(folder, n, shape))
            t2, hit2 = analyse(make_project(folder, 2 * n, shape))
            print(
                f"{shape:<12} {n + 16:>7} {t1:>8.2f} {2 * n + 16:>9} {t2:>8.2f} "
                f"{t2 / t1:>6.2f} {f'{hit1} / {hit2}':>12}"
            )


if __name__ == "__main__":
    main()
