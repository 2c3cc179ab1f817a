"""Linear evidence table on a million rows: engine vs one-by-one OLS and vs one X.T @ X.

Run:  OPENBLAS_NUM_THREADS=1 .venv/bin/python benchmarks/bench_linear.py [--n 1000000] [--k 20]
      [--repeat 5] [--sm-repeat 1]

The engine and X.T @ X are timed in alternating repeats and the fastest of each
is kept, so load from other jobs hits both sides alike; the statsmodels loop is
slow and is timed --sm-repeat times (fastest kept).

Prints the measured times and ratios of one run; targets (issue 3): at least 50×
faster than 42 statsmodels OLS fits, within 3× of one pass of X.T @ X, peak
memory under 3× the numeric design.
"""

from __future__ import annotations

import argparse
import time
import tracemalloc

import numpy as np
import pandas as pd
import statsmodels.api as sm

from covariscope.analysis.design import TermSpec, make_design
from covariscope.analysis.evidence import EvidenceEngine, compute_evidence


def _frame(n: int, k: int) -> pd.DataFrame:
    rng = np.random.default_rng(12345)
    z = rng.normal(size=(n, k))
    x = z[:, : k // 2].sum(axis=1) * 0.3 + rng.normal(size=n)
    y = 0.5 * x + z @ np.linspace(-1, 1, k) + rng.normal(size=n)
    frame = pd.DataFrame(z, columns=[f"z{j}" for j in range(k)])
    frame["x"] = x
    frame["y"] = y
    return frame


def _design(frame: pd.DataFrame, k: int):  # type: ignore[no-untyped-def]
    covs = {f"z{j}": TermSpec(f"z{j}", "continuous") for j in range(k)}
    return make_design(
        frame, exposure=TermSpec("x", "continuous"), covariates=covs, outcome="y", family="linear"
    )


def _evidence(design, k: int):  # type: ignore[no-untyped-def]
    nodes = [f"z{j}" for j in range(k)]
    return compute_evidence(EvidenceEngine(design), candidates=nodes, added=nodes)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--n", type=int, default=1_000_000)
    parser.add_argument("--k", type=int, default=20)
    parser.add_argument(
        "--sm-models",
        type=int,
        default=None,
        help="time only this many of the OLS fits and scale to all (slow machines)",
    )
    parser.add_argument("--repeat", type=int, default=5, help="engine and X.T @ X repeats")
    parser.add_argument("--sm-repeat", type=int, default=1, help="statsmodels loop repeats")
    args = parser.parse_args()
    n, k = args.n, args.k
    frame = _frame(n, k)

    t0 = time.perf_counter()
    design = _design(frame, k)
    t_design = time.perf_counter() - t0

    X = np.column_stack([np.ones(n), design.values[:, :-1]])
    engine_times, xtx_times = [], []
    for _ in range(max(1, args.repeat)):
        t0 = time.perf_counter()
        table = _evidence(design, k)
        engine_times.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        _ = X.T @ X
        xtx_times.append(time.perf_counter() - t0)
    t_engine, t_xtx = min(engine_times), min(xtx_times)

    # The straightforward approach: each of the 42 models fitted with statsmodels OLS.
    y = design.y
    models = [
        [],
        *[[j] for j in range(k)],
        list(range(k)),
        *[[i for i in range(k) if i != j] for j in range(k)],
    ]
    timed = models if args.sm_models is None else models[:: max(1, len(models) // args.sm_models)]
    sm_times = []
    for _ in range(max(1, args.sm_repeat)):
        t0 = time.perf_counter()
        for cols in timed:
            sm.OLS(y, X[:, [0, 1, *[c + 2 for c in cols]]]).fit()
        sm_times.append((time.perf_counter() - t0) * len(models) / len(timed))
    t_sm = min(sm_times)
    del X

    full = sm.OLS(y, np.column_stack([np.ones(n), design.values[:, :-1]])).fit()
    agree = abs(table.full.coef - full.params[1]) / abs(full.params[1])

    tracemalloc.start()
    d2 = _design(frame, k)
    _, peak_design = tracemalloc.get_traced_memory()
    tracemalloc.reset_peak()
    base, _ = tracemalloc.get_traced_memory()
    _evidence(d2, k)
    _, peak_engine = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    size = d2.values.nbytes

    print(
        f"n = {n:,}, {k} continuous covariates, {len(models)} models; fastest of "
        f"{len(engine_times)} (engine, X.T @ X) and {len(sm_times)} (statsmodels) runs"
    )
    print(f"design build (once, shared):         {t_design:8.3f} s")
    print(
        f"engine: whole evidence table:        {t_engine:8.3f} s   (all runs: "
        + ", ".join(f"{t:.3f}" for t in engine_times)
        + ")"
    )
    print(
        f"numpy X.T @ X, one pass:             {t_xtx:8.3f} s   (all runs: "
        + ", ".join(f"{t:.3f}" for t in xtx_times)
        + ")"
    )
    scaled = "" if len(timed) == len(models) else f" ({len(timed)} timed, scaled to {len(models)})"
    print(f"statsmodels OLS, {len(models)} fits one by one:  {t_sm:8.3f} s{scaled}")
    print(f"speed-up vs statsmodels loop:        {t_sm / t_engine:8.1f} x   (target >= 50)")
    print(f"engine time / X.T @ X time:          {t_engine / t_xtx:8.2f} x   (target <= 3)")
    print(f"numeric design size:                 {size / 2**20:8.1f} MiB")
    print(f"peak memory, building the design:    {peak_design / size:8.2f} x design   (target < 3)")
    print(
        f"peak memory, evidence table:         {(peak_engine - base) / size:8.3f} x design (above the design itself)"
    )
    print(f"full-model exposure coef vs statsmodels, relative difference: {agree:.2e}")


if __name__ == "__main__":
    main()
