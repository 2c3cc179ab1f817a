"""Logistic, risk-ratio and Cox evidence tables against the straightforward loops.

Workloads (issue 12), each timed in one process, engine and reference
alternating, ``--repeat`` times, medians compared:

* logistic, n × 20 covariates, 42 models: the engine's whole evidence table
  against a loop of statsmodels ``Logit(...).fit()`` and against the
  minimal-pass floor (one X'WX pass of the full model × the Newton steps the
  full model alone needs from a cold start × 3);
* risk ratio, same design: against a loop of statsmodels GLM Poisson with
  HC0 standard errors;
* Cox, n × 20, 42 models: against a loop of lifelines ``CoxPHFitter``
  (the ``bench`` extra) and a loop of statsmodels ``PHReg``;
* whole process: ``covariscope check --json`` on a CSV study (logistic,
  20 covariates) against a script that reads the CSV with pandas and runs
  the statsmodels Logit loop — both as fresh processes.

The reference loops are slow at full size: ``--subset M`` times M of their 42
models (spread over crude + C, full and full − C) and scales the time by
42 / M; the output says so.  The driver runs the workloads twice, as child
processes, with OPENBLAS_NUM_THREADS unset and = 1, and prints one JSON line
with every ratio.

Run (full size, once)::

    PYTHONPATH=src python benchmarks/bench_iterative.py --n 1000000 --n-cox 100000 \\
        --n-check 300000 --repeat 3 --subset 6

Develop with the defaults (small sizes).
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

K = 20
NODES = [f"z{j}" for j in range(K)]


def invented_cohort(n: int, seed: int = 2024) -> pd.DataFrame:
    """Twenty correlated covariates, a confounded exposure, a binary outcome and a survival time."""
    rng = np.random.default_rng(seed)
    z = rng.normal(size=(n, K))
    z[:, 1:] += 0.3 * z[:, :-1]
    x = z[:, : K // 2].sum(axis=1) * 0.2 + rng.normal(size=n)
    eta = 0.4 * x + z @ np.linspace(-0.3, 0.3, K)
    frame = pd.DataFrame(z, columns=NODES)
    frame["x"] = x
    frame["y"] = (rng.random(n) < 1 / (1 + np.exp(-(-1.0 + eta)))).astype(float)
    frame["t"] = np.ceil(rng.exponential(1 / np.exp(0.5 * eta)) * 365) / 365
    frame["e"] = (rng.random(n) < 0.7).astype(float)
    return frame


def model_terms() -> list[list[int]]:
    """The 42 models: crude, crude + C, full, full − C (covariate indices)."""
    return [
        [],
        *[[j] for j in range(K)],
        list(range(K)),
        *[[i for i in range(K) if i != j] for j in range(K)],
    ]


def subset(models: list[list[int]], m: int) -> list[list[int]]:
    """m models spread over the list (always the full model among them)."""
    if m >= len(models):
        return models
    picks = {round(float(i)) for i in np.linspace(0, len(models) - 1, m)}
    picks.add(K + 1)
    return [models[i] for i in sorted(picks)]


def median_time(fn: Callable[[], Any]) -> float:
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


def alternate(
    fns: dict[str, Callable[[], Any]], repeat: int
) -> tuple[dict[str, float], dict[str, float]]:
    """Median wall-clock and processor times (every thread of this process) by
    name, the functions run in turn; on a machine shared with other work the
    processor time tells how much work each side did, which wall time blurs."""
    times: dict[str, list[float]] = {k: [] for k in fns}
    cpu: dict[str, list[float]] = {k: [] for k in fns}
    for _ in range(repeat):
        for k, fn in fns.items():
            c0 = time.process_time()
            times[k].append(median_time(fn))
            cpu[k].append(time.process_time() - c0)
    medians = {k: statistics.median(v) for k, v in times.items()}
    return medians, {k: statistics.median(v) for k, v in cpu.items()}


def engine_table(frame: pd.DataFrame, family: str) -> Callable[[], Any]:
    from covariscope.analysis.design import TermSpec, make_design
    from covariscope.analysis.evidence import EvidenceEngine, compute_evidence

    kw: dict[str, Any] = (
        {"outcome": None, "time": "t", "event": "e"} if family == "cox" else {"outcome": "y"}
    )
    covs = {c: TermSpec(c, "continuous") for c in NODES}

    def run() -> Any:
        design = make_design(
            frame, exposure=TermSpec("x", "continuous"), covariates=covs, family=family, **kw
        )
        return compute_evidence(EvidenceEngine(design), candidates=NODES, added=NODES)

    return run


def pass_counts(frame: pd.DataFrame, family: str) -> dict[str, Any]:
    """Passes over the rows per model of one table, fresh (information formed)
    and score-only, by model group (crude, crude + C, full, full − C), and the
    reads of the rows: models fitted in lockstep share each read."""
    from covariscope.analysis import glm, glm_batch, glm_newton
    from covariscope.analysis.design import TermSpec, make_design
    from covariscope.analysis.evidence import EvidenceEngine, compute_evidence

    flags: list[bool] = []  # the information flag of each pass, in the order reported
    reads = 0
    single, batch = glm_newton.glm_pass, glm_batch.batch_pass

    def one(*args: Any, **kw: Any) -> Any:
        nonlocal reads
        reads += 1
        flags.append(bool(kw.get("info", True)))
        return single(*args, **kw)

    def many(X: Any, y: Any, link: Any, requests: Any, **kw: Any) -> Any:
        nonlocal reads
        reads += 1
        flags.extend(bool(req.info) for _, req in requests)
        return batch(X, y, link, requests, **kw)

    step = glm.information_and_score

    def first_step(*args: Any, **kw: Any) -> Any:
        # the one pass that starts every crude + C model: a read, no model's own pass
        out = step(*args, **kw)
        flags.pop()
        return out

    per_model: dict[int, list[bool]] = {}

    def passed(model: int, total: int, passes: int) -> None:
        per_model.setdefault(model, []).append(flags.pop(0))

    covs = {c: TermSpec(c, "continuous") for c in NODES}
    design = make_design(
        frame, exposure=TermSpec("x", "continuous"), covariates=covs, family=family, outcome="y"
    )
    glm_newton.glm_pass, glm_batch.batch_pass = one, many  # type: ignore[assignment]
    glm.information_and_score = first_step  # type: ignore[assignment]
    try:
        compute_evidence(
            EvidenceEngine(design), candidates=NODES, added=NODES, pass_progress=passed
        )
    finally:
        glm_newton.glm_pass, glm_batch.batch_pass = single, batch  # type: ignore[assignment]
        glm.information_and_score = step  # type: ignore[assignment]
    models = [per_model.get(k, []) for k in range(1, 2 * K + 3)]
    groups = {"crude": models[:1], "crude+C": models[1 : K + 1]}
    groups |= {"full": models[K + 1 : K + 2], "full-C": models[K + 2 :]}
    out: dict[str, Any] = {}
    for name, group in groups.items():
        fresh = sum(1 for m in group for info in m if info)
        score = sum(1 for m in group for info in m if not info)
        out[name] = {"models": len(group), "fresh": fresh, "score_only": score}
    out["fresh_per_model"] = sum(g["fresh"] for g in out.values()) / len(models)
    out["reads_of_the_rows"] = reads
    return out


def floor_logistic(frame: pd.DataFrame) -> float:
    """One X'WX pass of the full model × its cold Newton steps × 3."""
    from covariscope.analysis.fitting_common import weighted_crossprod
    from covariscope.analysis.glm import newton_glm

    X = np.asfortranarray(np.column_stack([np.ones(len(frame)), frame[["x", *NODES]]]))
    y = frame["y"].to_numpy()
    steps = newton_glm(X, y, "logistic").iterations
    w = np.full(len(frame), 0.2)
    t = min(median_time(lambda: weighted_crossprod(X, w)) for _ in range(3))
    return t * steps * 3


def statsmodels_loop(
    frame: pd.DataFrame, family: str, models: list[list[int]]
) -> Callable[[], Any]:
    import statsmodels.api as sm
    from statsmodels.duration.hazard_regression import PHReg

    Z = frame[NODES].to_numpy()
    x = frame["x"].to_numpy()

    def run() -> None:
        for cols in models:
            if family == "cox":
                X = np.column_stack([x, Z[:, cols]])
                PHReg(frame["t"].to_numpy(), X, status=frame["e"].to_numpy(), ties="efron").fit()
                continue
            X = np.column_stack([np.ones(len(x)), x, Z[:, cols]])
            if family == "logistic":
                sm.Logit(frame["y"].to_numpy(), X).fit(disp=0)
            else:
                sm.GLM(frame["y"].to_numpy(), X, family=sm.families.Poisson()).fit(cov_type="HC0")

    return run


def lifelines_loop(frame: pd.DataFrame, models: list[list[int]]) -> Callable[[], Any] | None:
    try:
        from lifelines import CoxPHFitter
    except ImportError:
        return None

    def run() -> None:
        for cols in models:
            sub = frame[["x", *[NODES[j] for j in cols], "t", "e"]]
            CoxPHFitter().fit(sub, duration_col="t", event_col="e")

    return run


PANDAS_SCRIPT = """
import sys, numpy as np, pandas as pd, statsmodels.api as sm
frame = pd.read_csv(sys.argv[1])
nodes = [f"z{j}" for j in range(20)]
models = [[], *[[j] for j in range(20)], list(range(20)), *[[i for i in range(20) if i != j] for j in range(20)]]
picks = [int(v) for v in sys.argv[2].split(",")]
y, x, Z = frame["y"].to_numpy(), frame["x"].to_numpy(), frame[nodes].to_numpy()
for i in picks:
    X = np.column_stack([np.ones(len(x)), x, Z[:, models[i]]])
    sm.Logit(y, X).fit(disp=0)
"""


def write_study(folder: Path, frame: pd.DataFrame) -> Path:
    csv = folder / "study.csv"
    frame[["x", *NODES, "y"]].to_csv(csv, index=False)
    nodes = [
        {
            "id": "x",
            "label": "Exposure",
            "kind": "exposure",
            "measured": True,
            "column": "x",
            "x": 0,
            "y": 0,
            "note": "",
        },
        {
            "id": "y",
            "label": "Outcome",
            "kind": "outcome",
            "measured": True,
            "column": "y",
            "x": 400,
            "y": 0,
            "note": "",
        },
    ]
    nodes += [
        {
            "id": c,
            "label": c,
            "kind": "covariate",
            "measured": True,
            "column": c,
            "x": 20 * j,
            "y": 100,
            "note": "",
        }
        for j, c in enumerate(NODES)
    ]
    arrows = [{"from": "x", "to": "y"}]
    arrows += [{"from": c, "to": t} for c in NODES for t in ("x", "y")]
    project = {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {"nodes": nodes, "arrows": arrows, "proxies": []},
        "data": {"path": "study.csv", "sha256": None},
        "analysis": {"family": "logistic", "proposed": NODES[:5]},
    }
    path = folder / "study.json"
    path.write_text(json.dumps(project))
    return path


def whole_process(frame: pd.DataFrame, m: int, repeat: int) -> dict[str, Any]:
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        project = write_study(folder, frame)
        models = model_terms()
        picks = sorted({models.index(c) for c in subset(models, m)})
        script = folder / "loop.py"
        script.write_text(PANDAS_SCRIPT)
        py = sys.executable

        def ours() -> None:
            subprocess.run(
                [py, "-m", "covariscope.cli", "check", "--json", str(project)],
                check=True,
                stdout=subprocess.DEVNULL,
            )

        def theirs() -> None:
            subprocess.run(
                [py, str(script), str(folder / "study.csv"), ",".join(map(str, picks))], check=True
            )

        t, _ = alternate({"engine": ours, "reference": theirs}, repeat)
    # The reference's reading and start-up is counted once; its model loop is
    # scaled from the models timed (start-up: one run with no model at all).
    return {"engine_s": t["engine"], "reference_s": t["reference"], "models_timed": len(picks)}


def child(args: argparse.Namespace) -> dict[str, Any]:
    out: dict[str, Any] = {"openblas_threads": os.environ.get("OPENBLAS_NUM_THREADS", "unset")}
    models = model_terms()
    some = subset(models, args.subset)
    scale = len(models) / len(some)
    big = invented_cohort(args.n)
    for family, ref_name in (("logistic", "statsmodels_logit"), ("risk_ratio", "statsmodels_glm")):
        t, cpu = alternate(
            {"engine": engine_table(big, family), "ref": statsmodels_loop(big, family, some)},
            args.repeat,
        )
        out[family] = {
            "n": args.n,
            "engine_s": t["engine"],
            f"{ref_name}_s": t["ref"] * scale,
            f"vs_{ref_name}": t["ref"] * scale / t["engine"],
            "cpu_ratio": cpu["ref"] * scale / cpu["engine"],
        }
        out[family]["passes"] = pass_counts(big, family)
        if family == "logistic":
            floor = floor_logistic(big)
            out[family]["floor_s"] = floor
            out[family]["engine_over_floor"] = t["engine"] / floor
    del big
    cox = invented_cohort(args.n_cox)
    fns = {"engine": engine_table(cox, "cox"), "phreg": statsmodels_loop(cox, "cox", some)}
    life = lifelines_loop(cox, some)
    if life is not None:
        fns["lifelines"] = life
    t, cpu = alternate(fns, args.repeat)
    out["cox"] = {
        "n": args.n_cox,
        "engine_s": t["engine"],
        "phreg_s": t["phreg"] * scale,
        "vs_phreg": t["phreg"] * scale / t["engine"],
        "cpu_ratio_phreg": cpu["phreg"] * scale / cpu["engine"],
    }
    if "lifelines" in t:
        out["cox"]["lifelines_s"] = t["lifelines"] * scale
        out["cox"]["vs_lifelines"] = t["lifelines"] * scale / t["engine"]
    whole = whole_process(invented_cohort(args.n_check), args.subset, args.repeat)
    # The reference loop timed M models; its reading and start-up are in every run,
    # so only the fitting share is scaled: measured again with one model.
    one = whole_process_reading(args.n_check, args.repeat)
    fit_share = max(whole["reference_s"] - one, 0.0) * scale
    ref_total = one + fit_share
    out["check"] = {
        "n": args.n_check,
        "engine_s": whole["engine_s"],
        "reference_s": ref_total,
        "vs_pandas_statsmodels": ref_total / whole["engine_s"],
    }
    out["reference_models_timed"] = f"{len(some)} of {len(models)}, time scaled by {scale:.2f}"
    return out


def whole_process_reading(n: int, repeat: int) -> float:
    """The pandas + statsmodels script with no model: start-up and reading only."""
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        write_study(folder, invented_cohort(n))
        script = folder / "loop.py"
        script.write_text(PANDAS_SCRIPT.replace('[int(v) for v in sys.argv[2].split(",")]', "[]"))
        cmd = [sys.executable, str(script), str(folder / "study.csv"), ""]
        return statistics.median(
            median_time(lambda: subprocess.run(cmd, check=True)) for _ in range(repeat)
        )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--n", type=int, default=20_000, help="rows, logistic and risk ratio")
    parser.add_argument("--n-cox", type=int, default=5_000, help="rows, Cox")
    parser.add_argument("--n-check", type=int, default=20_000, help="rows of the CSV study")
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--subset", type=int, default=42, help="reference models timed")
    parser.add_argument(
        "--blas-threads",
        choices=["both", "unset", "1"],
        default="both",
        help="OPENBLAS_NUM_THREADS settings to run (default: unset, then 1)",
    )
    parser.add_argument("--child", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        print(json.dumps(child(args)))
        return
    rows = []
    settings = {"both": (None, "1"), "unset": (None,), "1": ("1",)}[args.blas_threads]
    for threads in settings:
        env = dict(os.environ)
        env.pop("OPENBLAS_NUM_THREADS", None)
        if threads:
            env["OPENBLAS_NUM_THREADS"] = threads
        cmd = [sys.executable, __file__, "--child", *sys.argv[1:]]
        res = subprocess.run(cmd, env=env, check=True, capture_output=True, text=True)
        row = json.loads(res.stdout.strip().splitlines()[-1])
        rows.append(row)
        report(row)
    print(
        json.dumps(
            {
                "bench": "iterative",
                "load_1min": os.getloadavg()[0],
                "runs": [
                    {
                        "openblas_threads": r["openblas_threads"],
                        "logistic_vs_statsmodels": round(r["logistic"]["vs_statsmodels_logit"], 2),
                        "logistic_over_floor": round(r["logistic"]["engine_over_floor"], 2),
                        "logistic_cpu_vs_statsmodels": round(r["logistic"]["cpu_ratio"], 2),
                        "risk_ratio_cpu_vs_statsmodels": round(r["risk_ratio"]["cpu_ratio"], 2),
                        "cox_cpu_vs_phreg": round(r["cox"]["cpu_ratio_phreg"], 2),
                        "risk_ratio_vs_statsmodels": round(
                            r["risk_ratio"]["vs_statsmodels_glm"], 2
                        ),
                        "cox_vs_lifelines": round(r["cox"].get("vs_lifelines", float("nan")), 2),
                        "cox_vs_phreg": round(r["cox"]["vs_phreg"], 2),
                        "check_vs_pandas_statsmodels": round(
                            r["check"]["vs_pandas_statsmodels"], 2
                        ),
                    }
                    for r in rows
                ],
            }
        )
    )


def report(r: dict[str, Any]) -> None:
    print(
        f"OPENBLAS_NUM_THREADS={r['openblas_threads']}; reference loops: "
        f"{r['reference_models_timed']}; medians"
    )
    lg, rr, cx, ck = r["logistic"], r["risk_ratio"], r["cox"], r["check"]
    print(
        f"  logistic n={lg['n']:,}: engine {lg['engine_s']:.2f} s, statsmodels loop "
        f"{lg['statsmodels_logit_s']:.2f} s ({lg['vs_statsmodels_logit']:.1f}x, target >= 20); "
        f"floor {lg['floor_s']:.2f} s (engine {lg['engine_over_floor']:.2f}x, target <= 3); "
        f"processor time {lg['cpu_ratio']:.1f}x less"
    )
    for name, fam in (("logistic", lg), ("risk ratio", rr)):
        counts = ", ".join(
            f"{k}: {v['models']} models, {v['fresh']} fresh + {v['score_only']} score-only passes"
            for k, v in fam["passes"].items()
            if isinstance(v, dict)
        )
        print(f"  {name} passes ({fam['passes']['fresh_per_model']:.2f} fresh per model): {counts}")
    print(
        f"  risk ratio n={rr['n']:,}: engine {rr['engine_s']:.2f} s, statsmodels GLM loop "
        f"{rr['statsmodels_glm_s']:.2f} s ({rr['vs_statsmodels_glm']:.1f}x, target >= 20); "
        f"processor time {rr['cpu_ratio']:.1f}x less"
    )
    life = (
        f"lifelines {cx['lifelines_s']:.2f} s ({cx['vs_lifelines']:.1f}x, target >= 10), "
        if "lifelines_s" in cx
        else "lifelines not installed, "
    )
    print(
        f"  Cox n={cx['n']:,}: engine {cx['engine_s']:.2f} s, {life}"
        f"PHReg {cx['phreg_s']:.2f} s ({cx['vs_phreg']:.1f}x, target >= 30); "
        f"processor time {cx['cpu_ratio_phreg']:.1f}x less than PHReg"
    )
    print(
        f"  check --json n={ck['n']:,}: {ck['engine_s']:.2f} s, pandas + statsmodels "
        f"{ck['reference_s']:.2f} s ({ck['vs_pandas_statsmodels']:.1f}x, target >= 10)"
    )


if __name__ == "__main__":
    main()
