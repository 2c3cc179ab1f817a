"""Natural cubic spline basis: patsy's ``cr()`` called as a function vs the formula.

Run:  .venv/bin/python benchmarks/bench_spline_basis.py [--n 100000] [--knots 4] [--repeat 5]

- engine: :func:`covariscope.analysis.spline_basis.spline_basis` (knots at
  Harrell's quantiles, ``patsy.cr`` called directly);
- straightforward: the same knots through the formula
  ``patsy.dmatrix("cr(x, knots=..., constraints='center') - 1", ...)``.

The two bases are compared, then the times (fastest of ``--repeat``) and
their ratio printed.
"""

from __future__ import annotations

import argparse
import time
from collections.abc import Callable

import numpy as np
import patsy

from covariscope.analysis.spline_basis import knot_positions, spline_basis


def _formula(x: np.ndarray, knots: int) -> np.ndarray:
    where = knot_positions(x, knots)
    return np.asarray(
        patsy.dmatrix(
            "cr(x, knots=inner, lower_bound=lo, upper_bound=hi, constraints='center') - 1",
            {"x": x, "inner": where[1:-1], "lo": where[0], "hi": where[-1]},
        )
    )


def _best(f: Callable[[], object], repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        f()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=100_000)
    parser.add_argument("--knots", type=int, default=4)
    parser.add_argument("--repeat", type=int, default=5)
    args = parser.parse_args()
    x = np.random.default_rng(1).gamma(2.0, 1.0, args.n)
    ours, reference = spline_basis(x, args.knots), _formula(x, args.knots)
    print(f"largest difference between the bases: {np.max(np.abs(ours - reference)):.2e}")
    engine = _best(lambda: spline_basis(x, args.knots), args.repeat)
    plain = _best(lambda: _formula(x, args.knots), args.repeat)
    print(
        f"n = {args.n:,}, {args.knots} knots: engine {engine:.3f} s, formula {plain:.3f} s, ratio {plain / engine:.1f}x"
    )


if __name__ == "__main__":
    main()
