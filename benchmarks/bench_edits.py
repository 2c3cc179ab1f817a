"""What an edit costs once the study is warm, against a cold run (issue 9).

Two generated studies go through the same pipeline object the window uses
(one :class:`~covariscope.study.cache.StudyCache`, :func:`run_study`):
a linear one (``--n-linear`` rows, 20 covariates) and a logistic one
(``--n-logistic`` rows).  For each, the median time of a cold run (empty
cache) and of each edit kind on the warm cache — node moved, covariate
ticked, arrow added, column bound, family switched and back — and its ratio
to the cold run.  "bind" is set beside one pass over the new column (its
cross-products with the design's columns, X'x over the analytic sample), the
least any bind can cost, in wall time and in CPU time (the machine may be
shared); the bound columns miss no value, so the sample keeps its rows (a
column with missing values shrinks the sample, and every column is then read
again).  The bind's CPU time is also split by stage (``bind_stages``).

Then the whole process, as a user meets it: ``covariscope check --json`` on
the linear study written as a CSV, against pandas alone reading that CSV
(each in a fresh process, alternating ``--repeat`` times, medians): wall
time and CPU time (user + system), and the check's peak memory against the
size of its design.  Both run as an installed package does, from compiled
bytecode (kept in a temporary ``PYTHONPYCACHEPREFIX`` and written by one
untimed run of each first), whatever ``PYTHONDONTWRITEBYTECODE`` says.
``--check-only`` runs this part alone.

Then the GUI storm (``--storm ROWS``, default 200,000; 0 leaves it out):
the window, offscreen, opens a generated ROWS-row study saved as CSV and
project; 200 random edits (node moves, ticks, arrows added and removed,
family switches) are fired one per turn of the event loop without waiting
for the analysis; the figures are the time to fire them, the time from the
last edit until the window settles, and the longest the GUI thread stood
still (a 10 ms heartbeat), and the settled window's result is compared with
``covariscope check --json`` on the saved project (see benchmarks/gui_storm.py;
``--hunt`` prints where the GUI thread spent its stalls).

The last line is JSON: medians in seconds, keys ``move``, ``tick``,
``arrow``, ``bind``, ``family_back``, ``cold`` for ``linear_1e6`` and
``logistic_2e5`` (the keys keep those names at any ``--n``), the ``check``
figures, and the storm's ``storm_settle``, ``storm_fire``, ``max_stall``.

Run: ``python benchmarks/bench_edits.py`` (full size: 1e6 and 2e5 rows, a
200,000-row storm); ``--n-linear 100000 --n-logistic 20000 --storm 20000``
for a quick look; ``--storm-only`` for the storm alone.
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from covariscope.data.loading import LoadedTable, file_sha256
from covariscope.model.project import Project, project_from_dict, save_project
from covariscope.study import run_study
from covariscope.study.cache import StudyCache

K = 20  # covariates in the model
SPARE = 6  # unbound covariates, bound one per "bind" repetition


def make_frame(n: int, seed: int = 1) -> pd.DataFrame:
    """x, y, y_bin, c0..c19 (two binary, one three-level), e0..e5 spare columns."""
    rng = np.random.default_rng(seed)
    cols: dict[str, Any] = {}
    for j in range(K):
        cols[f"c{j}"] = rng.normal(size=n)
    cols["c0"] = (cols["c0"] > 0).astype(np.int64)
    cols["c1"] = (cols["c1"] > 0.5).astype(np.int64)
    cols["c2"] = np.array(["low", "mid", "high"])[rng.integers(0, 3, size=n)]
    x = sum(0.2 * cols[f"c{j}"] for j in range(3, 9)) + 0.3 * cols["c0"] + rng.normal(size=n)
    y = 1.0 * x + sum(0.3 * cols[f"c{j}"] for j in range(3, 14)) + rng.normal(size=n)
    for j in range(SPARE):
        cols[f"e{j}"] = rng.normal(size=n)
    frame = pd.DataFrame({"x": x, "y": y, **cols})
    frame["y_bin"] = (y > np.median(y)).astype(np.int64)
    return frame


def make_project(family: str) -> Project:
    nodes = [("x", "exposure"), ("y", "outcome")]
    nodes += [(f"c{j}", "covariate") for j in range(K)]
    nodes += [(f"e{j}", "covariate") for j in range(SPARE)]
    arrows = [("x", "y")]
    arrows += [(f"c{j}", "x") for j in range(9)] + [(f"c{j}", "y") for j in range(3, 14)]
    arrows += [(f"e{j}", "y") for j in range(SPARE)]
    return project_from_dict(
        {
            "format": "covariscope-project",
            "version": 1,
            "diagram": {
                "nodes": [
                    {
                        "id": i,
                        "kind": k,
                        "column": None if i.startswith("e") else i,
                        "x": 40.0 * n,
                        "y": 0.0,
                    }
                    for n, (i, k) in enumerate(nodes)
                ],
                "arrows": [{"from": a, "to": b} for a, b in arrows],
            },
            "analysis": {
                "family": family,
                "proposed": ["c0", "c3", "c4"],
                "column_types": {"c0": "binary", "c1": "binary", "c2": "categorical"},
                "family_columns": {"logistic": {"outcome": "y_bin"}},
            },
        }
    )


def _timed(fn: Callable[[], Any]) -> float:
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


def _timed_both(fn: Callable[[], Any]) -> tuple[float, float]:
    """Wall and CPU seconds (this process's, every thread) of one call."""
    t0, c0 = time.perf_counter(), time.process_time()
    fn()
    return time.perf_counter() - t0, time.process_time() - c0


class StageClock:
    """CPU seconds spent in each stage of the study cache (its own, not its
    nested stages'), while ``on`` is set: where a bind's time goes."""

    def __init__(self) -> None:
        self.on = False
        self.seconds: dict[str, float] = {}
        self._inner: list[float] = []
        for name in ("get", "get_many"):
            original = getattr(StudyCache, name)
            setattr(StudyCache, name, self._wrap(original))

    def _wrap(self, original: Callable[..., Any]) -> Callable[..., Any]:
        def timed(cache: StudyCache, stage: str, *args: Any, **kwargs: Any) -> Any:
            if not self.on:
                return original(cache, stage, *args, **kwargs)
            c0 = time.process_time()
            self._inner.append(0.0)
            try:
                return original(cache, stage, *args, **kwargs)
            finally:
                spent = time.process_time() - c0
                own = spent - self._inner.pop()
                self.seconds[stage] = self.seconds.get(stage, 0.0) + own
                if self._inner:
                    self._inner[-1] += spent

        return timed


def edit_times(frame: pd.DataFrame, family: str, repeat: int) -> dict[str, Any]:
    """Median seconds of a cold run and of each edit kind on a warm cache."""
    table = LoadedTable(frame, Path("bench.csv"), "text", f"bench-{family}-{len(frame)}")
    cold = [
        _timed(lambda: run_study(make_project(family), table=table, cache=StudyCache()))
        for _ in range(max(1, repeat // 2))
    ]
    project = make_project(family)
    cache = StudyCache()
    run_study(project, table=table, cache=cache)
    d = project.diagram

    def again() -> Any:
        return run_study(project, table=table, cache=cache)

    times: dict[str, list[float]] = {
        k: [] for k in ("move", "tick", "arrow", "bind", "family_back")
    }
    one_pass: list[tuple[float, float]] = []
    bind_cpu: list[float] = []
    stages: list[dict[str, float]] = []
    clock = StageClock()
    other = "linear" if family == "logistic" else "logistic"
    for r in range(repeat):
        d.update_node("c5", x=float(r), y=float(-r))
        times["move"].append(_timed(again))
        ticked = f"c{6 + r % 8}"
        project.analysis.proposed = sorted(set(project.analysis.proposed) ^ {ticked})
        times["tick"].append(_timed(again))
        d.add_arrow(f"c{14 + r % 6}", f"c{3 + r % 6}")
        times["arrow"].append(_timed(again))
        spare = f"e{r % SPARE}"
        if d.node(spare).column is None:
            one_pass.append(_one_pass(frame, spare, cache))
            d.update_node(spare, column=spare)
            clock.on, clock.seconds = True, {}
            wall, cpu = _timed_both(again)
            clock.on = False
            times["bind"].append(wall)
            bind_cpu.append(cpu)
            stages.append(
                {**clock.seconds, "(outside the stages)": cpu - sum(clock.seconds.values())}
            )
        project.analysis.family = other
        again()
        project.analysis.family = family
        times["family_back"].append(_timed(again))
    out: dict[str, Any] = {"cold": statistics.median(cold)}
    out.update({k: statistics.median(v) for k, v in times.items() if v})
    out["one_pass_bind_column"] = statistics.median(w for w, _ in one_pass)
    if bind_cpu:
        out["bind_cpu"] = statistics.median(bind_cpu)
        out["one_pass_bind_column_cpu"] = statistics.median(c for _, c in one_pass)
        names = {k for s in stages for k in s}
        out["bind_stages"] = {
            k: statistics.median(s.get(k, 0.0) for s in stages)
            for k in sorted(names, key=lambda k: -statistics.median(s.get(k, 0.0) for s in stages))
        }
    return out


def _one_pass(frame: pd.DataFrame, column: str, cache: StudyCache) -> tuple[float, float]:
    """One pass over a column: read it as numbers, mark missing values, cross it
    with the design it joins (X'x; the column misses nothing, so its rows are
    the sample's).  Wall and CPU seconds."""
    designs = [v for _, v in cache.entries("design")]
    values = designs[-1].values

    def work() -> None:
        v = frame[column].to_numpy(dtype=np.float64)
        np.isnan(v)
        np.dot(values.T, v[: len(values)] - v.mean())

    return _timed_both(work)


def check_process(frame: pd.DataFrame, folder: Path, repeat: int = 1) -> dict[str, float]:
    """`covariscope check --json` on a CSV against pandas reading it, each in a fresh process.

    The two alternate ``repeat`` times; the medians of wall time and of CPU
    time (user + system of the child) are compared, since on a shared
    machine the wall time also counts the waits for a free core.
    """
    csv = folder / "study.csv"
    frame.to_csv(csv, index=False)
    project = make_project("linear")
    project.data = None
    for j in range(SPARE):
        project.diagram.update_node(f"e{j}", column=f"e{j}")
    save_project(project, folder / "study.json")
    raw = json.loads((folder / "study.json").read_text())
    raw["data"] = {"path": "study.csv", "sha256": file_sha256(csv)}
    (folder / "study.json").write_text(json.dumps(raw))
    cli = "import sys; from covariscope.cli import main; sys.exit(main())"
    read_cmd = [sys.executable, "-c", f"import pandas as pd; pd.read_csv({str(csv)!r})"]
    check_cmd = [sys.executable, "-c", cli, "check", "--json", str(folder / "study.json")]
    env = _installed_env(folder / "bytecode")
    for cmd in (read_cmd, check_cmd):  # untimed: writes the bytecode both then read
        _process(cmd, env)
    reads, checks, loads = [], [], []
    for _ in range(repeat):
        loads.append(os.getloadavg()[0])
        reads.append(_process(read_cmd, env))
        checks.append(_process(check_cmd, env))
    read = [statistics.median(r[i] for r in reads) for i in range(3)]
    check = [statistics.median(c[i] for c in checks) for i in range(3)]
    design_bytes = len(frame) * (1 + K + SPARE + 2 + 1) * 8
    return {
        "check_seconds": check[0],
        "pandas_read_seconds": read[0],
        "ratio": check[0] / read[0],
        "check_cpu_seconds": check[2],
        "pandas_read_cpu_seconds": read[2],
        "cpu_ratio": check[2] / read[2],
        "check_peak_mb": max(c[1] for c in checks) / 1e6,
        "design_mb": design_bytes / 1e6,
        "peak_over_design": max(c[1] for c in checks) / design_bytes,
        "load_average": statistics.median(loads),
    }


def _installed_env(bytecode: Path) -> dict[str, str]:
    """The environment of a child that runs from compiled bytecode, as an
    installed package does (pip compiles it): bytecode is written to and read
    from ``bytecode``, not beside the sources."""
    env = dict(os.environ)
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    env["PYTHONPYCACHEPREFIX"] = str(bytecode)
    return env


def _process(cmd: list[str], env: dict[str, str]) -> tuple[float, float, float]:
    """Wall seconds, peak resident bytes and CPU seconds (user + system) of a child process.

    ``cmd`` is ``[python, "-c", code, *args]``.  The child reports its own
    peak (``VmHWM``, Linux) at exit: ``ru_maxrss`` of a forked child keeps the
    high-water mark of the parent's pages it was forked with, and this
    parent holds the whole study, which inflated the figure several-fold.
    """
    with tempfile.NamedTemporaryFile("r", suffix=".hwm") as peak:
        report = (
            "import atexit\n"
            "def _peak():\n"
            f"    with open('/proc/self/status') as s, open({peak.name!r}, 'w') as out:\n"
            "        out.write(next(l for l in s if l.startswith('VmHWM')).split()[1])\n"
            "atexit.register(_peak)\n"
        )
        cmd = [cmd[0], cmd[1], report + cmd[2], *cmd[3:]]
        t0 = time.perf_counter()
        pid = os.fork()
        if pid == 0:  # the child becomes the command
            with open(os.devnull, "w") as null:
                os.dup2(null.fileno(), 1)
            os.execve(cmd[0], cmd, env)
        _, status, usage = os.wait4(pid, 0)
        seconds = time.perf_counter() - t0
        if os.waitstatus_to_exitcode(status) != 0:
            raise SystemExit(f"{' '.join(cmd)} failed")
        text = peak.read().strip()
    peak = float(text) * 1024.0 if text else usage.ru_maxrss * 1024.0
    return seconds, peak, usage.ru_utime + usage.ru_stime


def storm_figures(rows: int, hunt: bool, watch: bool) -> dict[str, Any]:
    """The GUI storm on a generated ``rows``-row linear study (see gui_storm.py)."""
    from gui_storm import storm

    with tempfile.TemporaryDirectory() as name:
        folder = Path(name)
        csv = folder / "storm.csv"
        make_frame(rows, seed=3).to_csv(csv, index=False)
        project = make_project("linear")
        project.data = None
        save_project(project, folder / "storm.json")
        raw = json.loads((folder / "storm.json").read_text())
        raw["data"] = {"path": "storm.csv", "sha256": file_sha256(csv)}
        (folder / "storm.json").write_text(json.dumps(raw))
        covariates = [f"c{j}" for j in range(K)]
        figures = storm(folder / "storm.json", covariates, hunt=hunt, watch=watch)
    print(
        f"\nGUI storm, {rows:,} rows, 200 edits: fired in {figures['storm_fire']:.2f} s "
        f"(the window's own handling {figures['storm_edit_handling']:.2f} s), settled "
        f"{figures['storm_settle']:.2f} s after the last edit "
        f"({figures['storm_settle'] / figures['storm_fire']:.1f}× the firing); longest GUI "
        f"stall {1000 * figures['max_stall']:.0f} ms ({figures['stalls_over_100ms']} over "
        f"100 ms, {figures['stalls_over_50ms']} over 50 ms; while opening: "
        f"{1000 * figures['open_max_stall']:.0f} ms); data work on the GUI thread: {_work_calls(figures['gui_data_work_calls'])}; "
        f"equals check --json: {figures['storm_equals_check_json']}"
    )
    return figures


def _work_calls(count: int) -> str:
    return "not counted (--watch counts it)" if count < 0 else f"{count} calls"


def _print(name: str, figures: dict[str, Any]) -> None:
    cold = figures["cold"]
    print(f"\n{name}: cold run {cold:.3f} s")
    for k in ("move", "tick", "arrow", "bind", "family_back"):
        if k in figures:
            print(f"  {k:<12} {figures[k]:8.4f} s   {figures[k] / cold:7.4f} × cold")
    if "bind" in figures:
        p = figures["one_pass_bind_column"]
        print(f"  bind against one pass over the column ({p:.4f} s): {figures['bind'] / p:.2f}×")
        c, pc = figures["bind_cpu"], figures["one_pass_bind_column_cpu"]
        print(f"  in CPU time: bind {c:.4f} s against one pass {pc:.4f} s: {c / pc:.2f}×")
        shown = ", ".join(
            f"{k} {1000 * v:.0f}" for k, v in figures["bind_stages"].items() if v >= 0.0005
        )
        print(f"  the bind's CPU time by stage (ms; the column misses no value): {shown}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument(
        "--n-linear", type=int, default=1_000_000, help="rows of the linear study (0: none)"
    )
    parser.add_argument(
        "--n-logistic", type=int, default=200_000, help="rows of the logistic study (0: none)"
    )
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--no-check", action="store_true", help="skip the whole-process check")
    parser.add_argument(
        "--check-only", action="store_true", help="only the whole-process check (--repeat times)"
    )
    parser.add_argument(
        "--storm", type=int, default=200_000, help="rows of the GUI storm (0: none)"
    )
    parser.add_argument("--storm-only", action="store_true", help="only the GUI storm")
    parser.add_argument("--hunt", action="store_true", help="show where the GUI thread stalls")
    parser.add_argument(
        "--watch", action="store_true", help="count data work on the GUI thread (slows it)"
    )
    args = parser.parse_args()
    results: dict[str, Any] = {}
    if args.storm_only:
        results.update(storm_figures(args.storm, args.hunt, args.watch))
        print(json.dumps(results))
        return
    linear = make_frame(args.n_linear)
    if not args.check_only and args.n_linear:
        results["linear_1e6"] = edit_times(linear, "linear", args.repeat)
        _print(f"linear, {args.n_linear:,} rows", results["linear_1e6"])
    if not args.no_check:
        with tempfile.TemporaryDirectory() as folder:
            results["check"] = check_process(linear, Path(folder), args.repeat)
        c = results["check"]
        print(
            f"\ncheck --json: {c['check_seconds']:.2f} s against pandas read_csv "
            f"{c['pandas_read_seconds']:.2f} s ({c['ratio']:.2f}×); CPU {c['check_cpu_seconds']:.2f} s "
            f"against {c['pandas_read_cpu_seconds']:.2f} s ({c['cpu_ratio']:.2f}×); peak memory "
            f"{c['check_peak_mb']:.0f} MB = {c['peak_over_design']:.2f}× the design ({c['design_mb']:.0f} MB); "
            f"load average {c['load_average']:.1f} on {os.cpu_count()} cores"
        )
    del linear
    if args.check_only:
        print(json.dumps(results))
        return
    if args.n_logistic:
        logistic = make_frame(args.n_logistic, seed=2)
        results["logistic_2e5"] = edit_times(logistic, "logistic", args.repeat)
        _print(f"logistic, {args.n_logistic:,} rows", results["logistic_2e5"])
        del logistic
    if args.storm:
        results.update(storm_figures(args.storm, args.hunt, args.watch))
    print(json.dumps(results))


if __name__ == "__main__":
    main()
