"""Sample quantiles by selection within brackets: numpy.quantile's numbers, bit for bit.

Reference: numpy.quantile, its default "linear" method (Hyndman & Fan 1996,
definition 7).  Bit for bit, not to a tolerance: the modification table
prints its quartiles and check --json prints every estimate in full.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import covariscope.analysis.quantiles as quantiles_module
from covariscope.analysis.quantiles import quantiles
from covariscope.analysis.spline_basis import KNOT_QUANTILES

PROBABILITIES = [
    [0.25, 0.5, 0.75],
    *(list(q) for q in KNOT_QUANTILES.values()),
    [0.0, 1.0],
    [0.0, 0.5, 1.0],
    [1e-9, 1 - 1e-9],
]


def _columns(n: int) -> dict[str, np.ndarray]:
    rng = np.random.default_rng(n)
    normal = rng.normal(size=n)
    with_inf = normal.copy()
    with_inf[:: n // 7] = np.inf
    with_inf[3 :: n // 5] = -np.inf
    return {
        "normal": normal,
        "skewed": rng.exponential(size=n) ** 3,
        "few values": rng.integers(0, 5, n).astype(float),
        "ascending": np.sort(normal),
        "descending": np.sort(normal)[::-1].copy(),
        "constant": np.full(n, 2.5),
        "infinities": with_inf,
        "half constant": np.r_[normal[: n // 2], np.full(n - n // 2, 0.25)],
    }


# infinity minus infinity warns in numpy's interpolation as in ours
@pytest.mark.filterwarnings("ignore:invalid value encountered in subtract:RuntimeWarning")
@pytest.mark.parametrize("n", [quantiles_module.SELECTION_ROWS, 100_003])
@pytest.mark.parametrize("probs", PROBABILITIES, ids=str)
def test_quantiles_equal_numpy_to_the_last_bit(n: int, probs: list[float]) -> None:
    for name, x in _columns(n).items():
        before = x.copy()
        got = quantiles(x, probs)
        np.testing.assert_array_equal(got, np.quantile(x, probs), err_msg=name)
        assert got.dtype == np.float64
        np.testing.assert_array_equal(x, before)  # the column is only read


def _partition_sizes(monkeypatch: pytest.MonkeyPatch) -> list[int]:
    """The size of every array np.partition is given while quantiles run."""
    sizes: list[int] = []
    partition = np.partition

    def counted(a: np.ndarray, kth: object) -> np.ndarray:
        sizes.append(a.size)
        return partition(a, kth)

    monkeypatch.setattr(quantiles_module.np, "partition", counted)
    return sizes


def test_a_sample_that_misses_every_bracket_still_gives_numpys_numbers(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    n = 200_000
    x = np.random.default_rng(3).normal(size=n)
    stride = n // quantiles_module._SAMPLE
    x[::stride] = 1e6  # every sampled value is the same outlier: each bracket is [1e6, 1e6]
    sizes = _partition_sizes(monkeypatch)
    probs = [0.25, 0.5, 0.75]
    got = quantiles(x, probs)
    monkeypatch.undo()
    np.testing.assert_array_equal(got, np.quantile(x, probs))
    assert sizes == [n, n, n]  # each quantile was found in the whole column


def test_within_brackets_only_a_slice_of_the_column_is_partitioned(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    n = 400_000
    x = np.random.default_rng(5).normal(size=n)
    sizes = _partition_sizes(monkeypatch)
    got = quantiles(x, [0.25, 0.5, 0.75])
    monkeypatch.undo()
    np.testing.assert_array_equal(got, np.quantile(x, [0.25, 0.5, 0.75]))
    assert len(sizes) == 3
    assert max(sizes) < n // 10


@pytest.mark.parametrize(
    "x",
    [
        np.r_[np.zeros(20_000), -np.zeros(20_000), np.ones(10_000)],  # zeros of both signs
        np.r_[np.random.default_rng(1).normal(size=40_000), np.nan],
        np.arange(40_000, dtype=np.int64),
        np.ones(10),
    ],
    ids=["signed zeros", "missing value", "integers", "short"],
)
def test_what_selection_does_not_take_goes_to_numpy(x: np.ndarray) -> None:
    probs = [0.25, 0.5, 0.75]
    got = quantiles(x, probs)
    expected = np.quantile(x, probs)
    np.testing.assert_array_equal(got, expected)
    np.testing.assert_array_equal(np.signbit(got), np.signbit(expected))


@settings(max_examples=60, deadline=None)
@given(
    values=st.lists(st.floats(-1e12, 1e12), min_size=64, max_size=400),
    probs=st.lists(st.floats(0.0, 1.0), min_size=1, max_size=7),
)
def test_any_column_and_probabilities_small_blocks(values: list[float], probs: list[float]) -> None:
    # The selection made to work on short columns with small samples, so that
    # brackets are often missed and the seams between them often crossed.
    x = np.array(values)
    with pytest.MonkeyPatch.context() as m:
        m.setattr(quantiles_module, "SELECTION_ROWS", 1)
        m.setattr(quantiles_module, "_SAMPLE", 16)
        m.setattr(quantiles_module, "_MARGIN", 1)
        got = quantiles(x, probs)
    np.testing.assert_array_equal(got, np.quantile(x, probs))
