"""How long the row kernels hold the interpreter lock (issue 9: the window's
GUI thread stalls while the analysis thread holds it).

A probe thread sleeps 1 ms at a time and records its longest wait while the
main thread runs one kernel over ``--rows`` rows: a kernel that lets go of
the lock leaves the probe waiting a few ms; one that holds it, about its
whole duration.  Each pair sets the straightforward call beside the one the
analysis uses (see covariscope.analysis.fitting_common), with the ratio of
the probe's longest waits.

Run: ``python benchmarks/bench_lock.py`` (``--rows 200000`` by default).
"""

from __future__ import annotations

import argparse
import json
import threading
import time
from collections.abc import Callable
from typing import Any

import numpy as np
import scipy.linalg


def probe_wait(fn: Callable[[], Any], repeat: int = 5) -> tuple[float, float]:
    """(seconds per call, the probe's longest wait in seconds) over ``repeat`` calls."""
    stop = threading.Event()
    worst = [0.0]

    def probe() -> None:
        last = time.perf_counter()
        while not stop.is_set():
            time.sleep(0.001)
            now = time.perf_counter()
            worst[0] = max(worst[0], now - last)
            last = now

    thread = threading.Thread(target=probe)
    thread.start()
    time.sleep(0.02)
    worst[0] = 0.0
    t0 = time.perf_counter()
    for _ in range(repeat):
        fn()
    spent = (time.perf_counter() - t0) / repeat
    stop.set()
    thread.join()
    return spent, worst[0]


def _lstsq_by_qr(design: np.ndarray, y: np.ndarray) -> np.ndarray:
    q, r = scipy.linalg.qr(design, mode="economic")
    return np.linalg.lstsq(r, np.dot(q.T, y), rcond=None)[0]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--rows", type=int, default=200_000)
    n = parser.parse_args().rows
    rng = np.random.default_rng(1)
    X = np.asfortranarray(rng.random((n, 10)))
    y, beta = rng.random(n), rng.random(10)
    spline = np.column_stack([np.ones(n), rng.random((n, 7))])
    pairs = {
        "cross product X'X": (lambda: X.T @ X, lambda: np.dot(X.T, X)),
        "linear predictor X b": (lambda: X @ beta, lambda: np.dot(X, beta)),
        "score r'X": (lambda: y @ X, lambda: np.dot(y, X)),
        "least squares, 8 columns": (
            lambda: np.linalg.lstsq(spline, y, rcond=None),
            lambda: _lstsq_by_qr(spline, y),
        ),
    }
    figures: dict[str, dict[str, float]] = {}
    print(f"{n:,} rows: ms per call, and the probe's longest wait (ms)")
    for name, (plain, ours) in pairs.items():
        (t_plain, w_plain), (t_ours, w_ours) = probe_wait(plain), probe_wait(ours)
        ratio = w_plain / max(w_ours, 1e-9)
        figures[name] = {"plain_wait": w_plain, "ours_wait": w_ours, "ratio": ratio}
        print(
            f"  {name:<26} straightforward {1000 * t_plain:6.1f} ms, wait {1000 * w_plain:6.1f}"
            f" | ours {1000 * t_ours:6.1f} ms, wait {1000 * w_ours:6.1f} | waits {ratio:5.1f}×"
        )
    print(json.dumps(figures))


if __name__ == "__main__":
    main()
