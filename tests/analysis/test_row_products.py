"""Products over the rows let go of the interpreter lock (issue 9: the GUI
thread never stalls while the analysis thread works).

``np.matmul`` (the ``@`` operator) and the ``np.linalg`` solvers hold the
lock for the whole call; ``np.dot`` and ``scipy.linalg.qr`` let it go (see
the docstring of :mod:`covariscope.analysis.fitting_common` for the figures).
The functions that pass over the rows are read here: none may use ``@`` or
call ``np.linalg`` on the rows.  (A check of the source, since a test may not
time threads.)
"""

from __future__ import annotations

import ast
import inspect

import numpy as np
import pytest

from covariscope.analysis import (
    claim_fits,
    column_fit,
    fitting_common,
    glm_batch,
    linear,
    passes,
    rows,
    splines,
)
from covariscope.analysis.families.logistic import LogitLink
from covariscope.analysis.families.risk_ratio import PoissonLink

#: every function that multiplies matrices with one row per observation
ROW_FUNCTIONS = [
    (passes, "_pass_rows"),
    (linear, "centred_cross"),
    (linear, "centred_products"),
    (linear, "linear_summary"),
    (fitting_common, "_crossprod_rows"),
    (rows, "_sums_of"),
    (rows, "sandwich_sums"),
    (column_fit, "_linear_extra"),
    (claim_fits, "_fit"),
    (glm_batch, "batch_pass"),
    (glm_batch._Round, "rows"),
    (LogitLink, "columns_sums"),
    (PoissonLink, "columns_sums"),
    (LogitLink, "block_sums"),
    (PoissonLink, "block_sums"),
    (LogitLink, "batch_sums"),
    (PoissonLink, "batch_sums"),
]


def _tree(module, name):
    return ast.parse(inspect.getsource(getattr(module, name)).strip())


@pytest.mark.parametrize(("module", "name"), ROW_FUNCTIONS)
def test_row_products_use_np_dot_not_matmul(module, name):
    used = [n for n in ast.walk(_tree(module, name)) if isinstance(n, ast.BinOp | ast.AugAssign)]
    assert not [n for n in used if isinstance(n.op, ast.MatMult)], f"{module.__name__}.{name}"


def test_the_spline_start_solves_through_a_lock_free_qr():
    calls = [
        ast.unparse(n.func)
        for n in ast.walk(_tree(splines, "_as_spline"))
        if isinstance(n, ast.Call)
    ]
    assert "scipy.linalg.qr" in calls
    # only the small triangular system goes to np.linalg
    tree = _tree(splines, "_as_spline")
    lstsq = [
        n
        for n in ast.walk(tree)
        if isinstance(n, ast.Call) and ast.unparse(n.func).endswith("lstsq")
    ]
    assert [ast.unparse(n.args[0]) for n in lstsq] == ["r"]


def test_the_spline_start_equals_least_squares():
    """Same answer as np.linalg.lstsq on the rows, a rank-deficient basis included."""
    rng = np.random.default_rng(3)
    raw = rng.normal(size=400)
    for basis in (
        np.column_stack([raw**2, np.sin(raw), raw**3]),
        np.column_stack([raw**2, np.sin(raw), raw**2]),  # a repeated column
    ):
        linear_fit = column_fit.ColumnFit(np.array([2.0]), np.eye(1), None, names=("x",))
        got = splines._as_spline(linear_fit, "x", raw, basis, ["x", "b1", "b2", "b3"])
        design = np.column_stack([np.ones(len(raw)), basis])
        want = 2.0 * np.linalg.lstsq(design, raw, rcond=None)[0]
        assert list(got) == ["(intercept)", "b1", "b2", "b3"]
        assert np.allclose(list(got.values()), want, atol=1e-9)
