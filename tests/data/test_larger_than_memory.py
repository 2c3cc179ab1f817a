"""`check` on a Parquet file three times larger in memory than the process may hold.

A subprocess runs ``covariscope check --engine duckdb`` under an RLIMIT_DATA
limit; the file's rows would take over three times that limit as a pandas
frame (float64 columns; most of them are not bound to a node, and they are
stored compressed, so the file itself is small and quick to write).  The
result must be the one the in-memory engine gives on a smaller copy drawn
by the same generator and seed: the same roles, verdicts and recommended
set, and the same adjusted estimate up to sampling error (the true effect,
0.5, is known by construction).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path
from typing import Any

import numpy as np
import pytest

resource = pytest.importorskip("resource")

#: The limit placed on the subprocess (its imports alone take about 400 MB of data).
LIMIT = 640 * 2**20
BOUND = 6  # covariates in the diagram
FILLER = 54  # further float columns nobody binds
ROWS = 4_200_000  # (2 + 6 + 54) × 8 bytes × rows ≈ 3.1 × LIMIT
CHUNK = 200_000


def write_study(folder: Path, rows: int, seed: int = 5) -> Path:
    """The generated study: confounders c0..c5 of x and y, true effect of x on y 0.5."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    rng = np.random.default_rng(seed)
    folder.mkdir(parents=True, exist_ok=True)
    writer = None
    done = 0
    while done < rows:
        m = min(CHUNK, rows - done)
        # Half-unit steps: few distinct values, so the columns compress well.
        c = np.round(rng.normal(size=(m, BOUND)) * 2) / 2
        x = (rng.random(m) < 1 / (1 + np.exp(-c[:, :3].sum(axis=1) / 2))).astype(float)
        y = np.round(0.5 * x + c @ np.linspace(0.2, 0.6, BOUND) + rng.normal(size=m), 1)
        columns: dict[str, Any] = {"x": x, "y": y}
        columns.update({f"c{j}": c[:, j] for j in range(BOUND)})
        filler = pa.array(np.resize(np.arange(8.0), m))
        columns.update({f"f{j}": filler for j in range(FILLER)})
        table = pa.table(columns)
        if writer is None:
            writer = pq.ParquetWriter(folder / "rows.parquet", table.schema)
        writer.write_table(table, row_group_size=CHUNK)
        done += m
    assert writer is not None
    writer.close()
    nodes = [
        {"id": "x", "label": "x", "kind": "exposure", "column": "x", "x": 0, "y": 0},
        {"id": "y", "label": "y", "kind": "outcome", "column": "y", "x": 200, "y": 0},
    ]
    arrows = [{"from": "x", "to": "y"}]
    for j in range(BOUND):
        nodes.append({"id": f"c{j}", "label": f"c{j}", "column": f"c{j}", "x": 40 * j, "y": 90})
        arrows += [{"from": f"c{j}", "to": "x"}, {"from": f"c{j}", "to": "y"}]
    project = {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {"nodes": nodes, "arrows": arrows},
        "data": {"path": "rows.parquet"},
        "analysis": {"family": "linear", "proposed": [f"c{j}" for j in range(BOUND)]},
    }
    path = folder / "study.json"
    path.write_text(json.dumps(project), encoding="utf-8")
    return path


_LIMITED = """
import resource, sys
resource.setrlimit(resource.RLIMIT_DATA, ({limit}, {limit}))
from covariscope.cli import main
sys.exit(main(["check", {project!r}, "--engine", {engine!r}, "--json"]))
"""


def run_check(project: Path, engine: str, limit: int | None) -> dict[str, Any]:
    code = _LIMITED.format(
        limit=limit or resource.RLIM_INFINITY, project=str(project), engine=engine
    )
    env = dict(os.environ)
    env.update(
        PYTHONPATH=os.pathsep.join(p for p in sys.path if p),
        OPENBLAS_NUM_THREADS="1",
        ARROW_DEFAULT_MEMORY_POOL="system",  # arrow's own pool reserves address space up front
    )
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, env=env, check=False
    )
    assert done.returncode == 0, done.stderr[-2000:]
    result: dict[str, Any] = json.loads(done.stdout)
    return result


@pytest.mark.slow
def test_check_reads_a_file_three_times_the_memory_limit(tmp_path: Path) -> None:
    big = write_study(tmp_path / "big", ROWS)
    frame_bytes = ROWS * (2 + BOUND + FILLER) * 8
    assert frame_bytes >= 3 * LIMIT
    small = write_study(tmp_path / "small", ROWS // 100)
    limited = run_check(big, "duckdb", LIMIT)
    reference = run_check(small, "memory", None)
    assert limited["sample"]["used"] == ROWS
    for key in ("roles", "recommended", "minimal_sets"):
        assert limited[key] == reference[key]
    assert {k: v["verdict"] for k, v in limited["covariates"].items()} == {
        k: v["verdict"] for k, v in reference["covariates"].items()
    }
    big_fit = limited["estimates"]["recommended"]
    small_fit = reference["estimates"]["recommended"]
    assert abs(big_fit["coef"] - 0.5) < 4 * big_fit["se"]
    assert abs(small_fit["coef"] - big_fit["coef"]) < 4 * small_fit["se"]
