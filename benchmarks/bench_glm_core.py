"""Time the logistic evidence fits against a one-by-one statsmodels Logit loop.

The 42 models of one evidence table (crude, crude + C for 20 covariates, full,
full − C for 20 candidates) on n = 100,000 invented rows, fitted

* by `covariscope.analysis.glm.fit_glm` from a cold start,
* by `fit_glm` warm-started from the nearest model (crude → added, full → dropped),
* by `fit_glm` warm-started, on Fortran-ordered columns, with ``checked=True``
  and the column SDs given (what the evidence engine does, having checked the
  design once),
* by statsmodels ``Logit(y, X).fit()``, the straightforward approach,

all on the same design matrices, in one run.  Prints times and ratios.  The
engine's own further gains (one-step starts from the neighbouring fit) are
timed by bench_logistic.py.

Run: ``.venv/bin/python benchmarks/bench_glm_core.py [n] [k]``
"""

from __future__ import annotations

import sys
import time

import numpy as np
import statsmodels.api as sm

from covariscope.analysis.glm import fit_glm, newton_glm


def invented_cohort(n: int, k: int, seed: int = 20240) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    cov = rng.normal(size=(n, k))
    exposure = (rng.random(n) < 1 / (1 + np.exp(-(0.3 * cov[:, :5].sum(axis=1))))).astype(float)
    eta = -1.0 + 0.4 * exposure + cov @ rng.normal(0, 0.25, k)
    y = (rng.random(n) < 1 / (1 + np.exp(-eta))).astype(float)
    X = np.column_stack([np.ones(n), exposure, cov])
    return X, y


def model_list(k: int) -> list[tuple[str, list[int], list[int] | None]]:
    """(label, columns, columns of the model to warm-start from)."""
    crude = [0, 1]
    full = list(range(k + 2))
    models: list[tuple[str, list[int], list[int] | None]] = [("crude", crude, None)]
    models += [(f"+c{j}", [*crude, j + 2], crude) for j in range(k)]
    models.append(("full", full, None))
    models += [(f"-c{j}", [c for c in full if c != j + 2], full) for j in range(k)]
    return models


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    k = int(sys.argv[2]) if len(sys.argv) > 2 else 20
    X, y = invented_cohort(n, k)
    models = model_list(k)
    names = ["(intercept)", "exposure", *(f"c{j}" for j in range(k))]

    sd = X.std(axis=0)
    XF = np.asfortranarray(X)

    def ours(warm: bool, lean: bool = False) -> tuple[float, list[float], int]:
        fitted: dict[tuple[int, ...], np.ndarray] = {}
        coefs, iters = [], 0
        t0 = time.perf_counter()
        for _, cols, parent in models:
            Xm = XF[:, cols] if lean else np.ascontiguousarray(X[:, cols])
            start = None
            if warm and parent is not None and tuple(parent) in fitted:
                by_col = dict(zip(parent, fitted[tuple(parent)], strict=True))
                start = np.array([by_col.get(c, 0.0) for c in cols])
            fit, params = fit_glm(
                Xm,
                y,
                "logistic",
                column_names=[names[c] for c in cols],
                terms=(),
                start=start,
                checked=lean,
                scale=sd[cols] if lean else None,
            )
            assert params is not None
            fitted[tuple(cols)] = params
            coefs.append(fit.coef)
        elapsed = time.perf_counter() - t0
        # Iterations counted outside the timed loop.
        for _, cols, parent in models:
            start = None
            if warm and parent is not None:
                by_col = dict(zip(parent, fitted[tuple(parent)], strict=True))
                start = np.array([by_col.get(c, 0.0) for c in cols])
            iters += newton_glm(
                np.ascontiguousarray(X[:, cols]), y, "logistic", start=start
            ).iterations
        return elapsed, coefs, iters

    t_cold, coef_cold, it_cold = ours(warm=False)
    t_warm, coef_warm, it_warm = ours(warm=True)
    t_lean, coef_lean, _ = ours(warm=True, lean=True)

    t0 = time.perf_counter()
    coef_sm = []
    for _, cols, _ in models:
        res = sm.Logit(y, np.ascontiguousarray(X[:, cols])).fit(disp=0)
        coef_sm.append(res.params[1])
    t_sm = time.perf_counter() - t0

    agree = max(abs(a - b) for a, b in zip(coef_warm, coef_sm, strict=True))
    agree_cold = max(abs(a - b) for a, b in zip(coef_cold, coef_sm, strict=True))
    agree_lean = max(abs(a - b) for a, b in zip(coef_lean, coef_sm, strict=True))
    print(f"logistic evidence fits: {len(models)} models, n = {n:,}, {k} covariates")
    print(f"  statsmodels Logit loop      {t_sm:8.3f} s")
    print(
        f"  fit_glm, cold starts        {t_cold:8.3f} s   ({it_cold} Newton iterations)   ratio {t_sm / t_cold:5.2f}×"
    )
    print(
        f"  fit_glm, warm starts        {t_warm:8.3f} s   ({it_warm} Newton iterations)   ratio {t_sm / t_warm:5.2f}×"
    )
    print(
        f"  fit_glm, warm, checked=True, Fortran columns {t_lean:8.3f} s   ratio {t_sm / t_lean:5.2f}×"
    )
    print(
        f"  largest |Δ exposure coef| vs statsmodels: warm {agree:.1e}, cold {agree_cold:.1e}, "
        f"checked {agree_lean:.1e}"
    )
    print("  target (issue 3, whole evidence table): see bench_logistic.py")


if __name__ == "__main__":
    main()
