"""Data sources on large files: DuckDB against in memory and Dask, same run.

Writes a generated study (exposure, outcome, a 0/1 outcome and N
covariates, float64) as Parquet in row groups, then times ``covariscope
check`` on it, each run in a fresh process that reports its wall time and
peak resident memory (VmHWM):

1. the large file with DuckDB, linear and logistic: wall time, peak memory
   and its ratio to the rows' in-memory size (target ≤ 0.25);
2. the medium file: DuckDB against the in-memory engine (the straightforward
   approach) for the linear and the logistic table, and Dask on a 2-worker
   local cluster, with the ratios.

Usage (sizes as the issue asks; scale down on a small machine and say so)::

    python benchmarks/bench_sources.py --large 5e7 --medium 1e7 --covariates 20 \\
        --folder /path/with/space

The generated files are deleted at the end unless ``--keep``; ``--reuse FOLDER
--generate-only`` writes them ahead of the timed run (``--reuse FOLDER`` again).
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

CHUNK = 1_000_000

_RUN = """
import json, sys, time
start = time.perf_counter()
from covariscope.cli import main
from covariscope.data.sources.duck_sql import SqlRows
import io, contextlib
passes = {{"n": 0, "seconds": 0.0}}

def counted(method):
    def run(*args, **kwargs):
        began = time.perf_counter()
        try:
            return method(*args, **kwargs)
        finally:
            passes["n"] += 1
            passes["seconds"] += time.perf_counter() - began
    return run

for name in ("column_stats", "glm_sums", "sandwich_sums", "reduce"):
    setattr(SqlRows, name, counted(getattr(SqlRows, name)))
out = io.StringIO()
with contextlib.redirect_stdout(out):
    rc = main(["check", {project!r}, "--engine", {engine!r}, "--family", {family!r}, "--json"])
wall = time.perf_counter() - start
status = open("/proc/self/status").read()
peak = int(status.split("VmHWM:")[1].split()[0]) * 1024
result = json.loads(out.getvalue()) if rc == 0 else None
coef = result["estimates"]["full"]["coef"] if result else None
print(json.dumps({{"rc": rc, "wall": wall, "peak": peak, "full": coef, **{{
    "passes": passes["n"], "pass_seconds": passes["seconds"]}}}}))
"""


def write_study(folder: Path, rows: int, covariates: int, seed: int = 2026) -> Path:
    """Parquet file of generated rows and a project that binds every column."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    weights = np.linspace(0.1, 0.5, covariates)
    writer = None
    done = 0
    while done < rows:
        m = min(CHUNK, rows - done)
        z = rng.normal(size=(m, covariates))
        lin = z[:, : min(3, covariates)].sum(axis=1) / 2
        x = rng.normal(size=m) + lin
        y = 0.5 * x + z @ weights + rng.normal(size=m)
        yb = (rng.random(m) < 1 / (1 + np.exp(-(0.3 * x + z @ weights / 2 - 1)))).astype(float)
        columns = {"x": x, "y": y, "yb": yb}
        columns.update({f"c{j}": z[:, j] for j in range(covariates)})
        table = pa.table(columns)
        if writer is None:
            writer = pq.ParquetWriter(folder / "rows.parquet", table.schema)
        writer.write_table(table, row_group_size=CHUNK)
        done += m
    assert writer is not None
    writer.close()
    nodes = [
        {"id": "x", "label": "x", "kind": "exposure", "column": "x", "x": 0, "y": 0},
        {"id": "y", "label": "y", "kind": "outcome", "column": "y", "x": 300, "y": 0},
    ]
    arrows = [{"from": "x", "to": "y"}]
    for j in range(covariates):
        nodes.append({"id": f"c{j}", "label": f"c{j}", "column": f"c{j}", "x": 30 * j, "y": 90})
        arrows += [{"from": f"c{j}", "to": "x"}, {"from": f"c{j}", "to": "y"}]
    project = {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {"nodes": nodes, "arrows": arrows},
        "data": {"path": "rows.parquet"},
        "analysis": {
            "family": "linear",
            "family_columns": {"logistic": {"outcome": "yb"}},
            "proposed": [f"c{j}" for j in range(covariates)],
        },
    }
    path = folder / "study.json"
    path.write_text(json.dumps(project), encoding="utf-8")
    return path


def run(project: Path, engine: str, family: str) -> dict[str, float]:
    """One `check` in a fresh process: wall time, peak memory, the full model's estimate."""
    code = _RUN.format(project=str(project), engine=engine, family=family)
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(p for p in sys.path if p))
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, env=env, check=False
    )
    lines = [line for line in done.stdout.splitlines() if line.startswith("{")]
    if done.returncode != 0 or not lines:
        raise SystemExit(f"{engine} {family} failed: {done.stderr[-1500:]}")
    figures: dict[str, float] = json.loads(lines[-1])
    if figures["rc"] != 0:
        raise SystemExit(f"{engine} {family}: check failed: {done.stderr[-1500:]}")
    return figures


def _passes(r: dict[str, float], rows: int, full: int) -> None:
    """The database passes of a DuckDB run, and what they would take at ``full`` rows."""
    if not r.get("passes"):
        return
    each = r["pass_seconds"] / r["passes"]
    line = f"   {'':9s} {int(r['passes'])} reads of the rows (aggregate queries or streamed), {each:.2f} s each"
    if full > rows:
        line += (
            f"; at {full:,} rows (passes scale with rows): about "
            f"{r['passes'] * each * full / rows / 60:.0f} min of passes"
        )
    print(line)


def _gb(n: float) -> str:
    return f"{n / 2**30:.2f} GB"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--large", type=float, default=5e7, help="rows of the large file")
    parser.add_argument(
        "--large-logistic",
        type=float,
        default=None,
        help="rows for its logistic run (default: --large)",
    )
    parser.add_argument("--medium", type=float, default=1e7, help="rows of the medium file")
    parser.add_argument(
        "--medium-logistic",
        type=float,
        default=None,
        help="rows for the medium logistic runs (default: --medium)",
    )
    parser.add_argument("--covariates", type=int, default=20)
    parser.add_argument("--no-dask", action="store_true", help="skip the Dask runs")
    parser.add_argument(
        "--large-families",
        default="linear,logistic",
        help="families of the large-file runs, comma-separated (default: linear,logistic)",
    )
    parser.add_argument("--no-medium", action="store_true", help="skip the medium-file runs")
    parser.add_argument(
        "--medium-families",
        default="linear,logistic",
        help="families of the medium-file runs, comma-separated (default: linear,logistic)",
    )
    parser.add_argument("--no-large", action="store_true", help="skip the large-file runs")
    parser.add_argument("--folder", type=Path, default=None, help="where to write the files")
    parser.add_argument("--keep", action="store_true", help="keep the generated files")
    parser.add_argument(
        "--reuse",
        type=Path,
        default=None,
        help="a folder of files kept by an earlier run (--keep): used as they are, never deleted",
    )
    parser.add_argument(
        "--generate-only", action="store_true", help="write the files (with --reuse) and stop"
    )
    args = parser.parse_args()
    root = args.reuse or Path(tempfile.mkdtemp(prefix="covariscope-bench-", dir=args.folder))
    k = args.covariates
    try:
        print(f"{k} covariates; timings in fresh processes, on whatever load the machine carries.")
        sizes = {
            ("large", "linear"): int(args.large),
            ("large", "logistic"): int(args.large_logistic or args.large),
            ("medium", "linear"): int(args.medium),
            ("medium", "logistic"): int(args.medium_logistic or args.medium),
        }
        projects: dict[int, Path] = {}
        for rows in sorted(set(sizes.values())):
            start = time.perf_counter()
            folder = root / f"rows{rows}-k{k}"
            if (folder / "study.json").exists():
                projects[rows] = folder / "study.json"
                continue
            projects[rows] = write_study(folder, rows, k)
            size = (folder / "rows.parquet").stat().st_size
            print(
                f"wrote {rows:,} rows ({_gb(size)} Parquet) in {time.perf_counter() - start:.0f} s"
            )
        if args.generate_only:
            return
        done: dict[tuple[int, str, str], dict[str, float]] = {}

        def measured(rows: int, engine: str, family: str) -> dict[str, float]:
            if (rows, engine, family) not in done:
                done[rows, engine, family] = run(projects[rows], engine, family)
            return done[rows, engine, family]

        print("\n1. Large file, DuckDB")
        for family in [] if args.no_large else args.large_families.split(","):
            rows = sizes[("large", family)]
            frame = rows * (k + 3) * 8
            r = measured(rows, "duckdb", family)
            print(
                f"   {family:9s} {rows:>12,} rows  wall {r['wall']:7.1f} s  peak {_gb(r['peak'])}  "
                f"in-memory size {_gb(frame)}  ratio {r['peak'] / frame:.3f} (target ≤ 0.25)"
            )
            _passes(r, rows, int(args.large))
        if args.no_medium:
            return
        print("\n2. Medium file: DuckDB and Dask (2 local workers) against in memory")
        for family in args.medium_families.split(","):
            rows = sizes[("medium", family)]
            base = measured(rows, "memory", family)
            print(
                f"   {family:9s} {rows:>12,} rows  memory  wall {base['wall']:7.1f} s  peak {_gb(base['peak'])}"
            )
            for engine in ("duckdb", "dask"):
                if engine == "dask" and args.no_dask:
                    continue
                r = measured(rows, engine, family)
                same = abs(r["full"] - base["full"]) <= 1e-8 * abs(base["full"])
                print(
                    f"   {'':9s} {'':>12s}       {engine:6s}  wall {r['wall']:7.1f} s  peak {_gb(r['peak'])}  "
                    f"time ratio {r['wall'] / base['wall']:.2f}  memory ratio {r['peak'] / base['peak']:.2f}  "
                    f"same estimate: {same}"
                )
                _passes(r, rows, rows)
    finally:
        if not args.keep and args.reuse is None:
            shutil.rmtree(root, ignore_errors=True)


if __name__ == "__main__":
    main()
