"""The GUI storm of benchmarks/bench_edits.py (issue 9): the window, offscreen,
on a generated study; 200 random edits fired one per turn of the event loop,
never waiting for the analysis; then the time until the window settles, the
longest the GUI thread stood still, and whether the settled window says what
``covariscope check --json`` says on the saved project.

With ``watch=True`` every entry into data work on the GUI thread is
counted (a profile hook on that thread: it slows the thread, so the stall
figures of such a run overstate).  With ``hunt=True`` a sampling thread records the GUI thread's stack whenever
the heartbeat is late by more than 50 ms, and the stacks seen most are
printed: where the GUI thread spends its stalls; and the window's main
slots are timed (longest and total); and every thread's stack is dumped
(by faulthandler's watchdog, which needs no interpreter lock) whenever the
GUI thread is 150 ms late.  When the slots are short and the sampler saw
little, the dumps show what held the interpreter lock meanwhile.  And each
stall of 100 ms or more is split (Linux, :class:`SchedClock`) into the GUI
thread's own work, its wait for a CPU (a loaded machine) and the rest,
blocked (the interpreter lock).
"""

from __future__ import annotations

import faulthandler
import gc
import json
import math
import os
import random
import subprocess
import sys
import tempfile
import threading
import time
import traceback
from collections import Counter
from collections.abc import Callable
from pathlib import Path
from typing import Any

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

#: how late the heartbeat must be before the hunter samples the GUI thread
HUNT_LATE = 0.05


class QuietPrompts:
    """The window's questions answered without dialogs (the storm shows none)."""

    def __init__(self) -> None:
        self.said: list[tuple[str, str]] = []

    def save_changes(self, name: str) -> str:
        return "discard"

    def yes_no(self, title: str, text: str) -> bool:
        self.said.append((title, text))
        return False

    def warn(self, title: str, text: str) -> None:
        self.said.append((title, text))

    info = warn

    def open_path(self, *args: Any) -> None:
        return None

    def save_path(self, *args: Any) -> None:
        return None

    def printer(self) -> None:
        return None


class StallHunter(threading.Thread):
    """Samples the GUI thread's stack every few ms while its heartbeat is late."""

    def __init__(self, log: Any, gui: int, every: float = 0.005) -> None:
        super().__init__(daemon=True)
        self.log, self.gui, self.every = log, gui, every
        self.stacks: Counter[tuple[str, ...]] = Counter()
        self.halt = threading.Event()

    def run(self) -> None:
        while not self.halt.wait(self.every):
            last = self.log.last
            if last is None or time.perf_counter() - last < HUNT_LATE:
                continue
            frame = sys._current_frames().get(self.gui)  # a sampler's one way in
            if frame is None:
                continue
            stack = traceback.extract_stack(frame)
            ours = [f for f in stack if "covariscope" in f.filename]
            shown = (ours or stack)[-6:] + ([] if not ours or ours[-1] is stack[-1] else stack[-2:])
            self.stacks[tuple(f"{Path(f.filename).name}:{f.lineno} {f.name}" for f in shown)] += 1

    def report(self, top: int = 6) -> None:
        total = sum(self.stacks.values())
        if not total:
            print("  no stall of 50 ms or more was sampled")
            return
        print(f"  GUI thread during stalls ({total} samples of {1000 * self.every:.0f} ms):")
        for stack, n in self.stacks.most_common(top):
            print(f"   {n:5d} × " + "\n           ← ".join(reversed(stack)))


#: the window's slots timed by ``hunt`` (class attributes, patched before the window exists)
TIMED_SLOTS = (
    "_analysis_done",
    "_model_changed",
    "_project_changed",
    "request_analysis",
    "refresh_panels",
    "show_progress",
    "show_engine",
)


class SlotClock:
    """Timestamps around the window's slots: the longest and total time of each."""

    def __init__(self) -> None:
        self.longest: Counter[str] = Counter()
        self.total: Counter[str] = Counter()
        self.calls: Counter[str] = Counter()

    def wrap(self, cls: Any, names: tuple[str, ...]) -> Callable[[], None]:
        """Time ``names`` of ``cls``; the returned call puts them back."""
        originals = {n: getattr(cls, n) for n in names}
        for name, fn in originals.items():
            setattr(cls, name, self._timed(name, fn))
        return lambda: [setattr(cls, n, fn) for n, fn in originals.items()] and None

    def _timed(self, name: str, fn: Callable[..., Any]) -> Callable[..., Any]:
        def timed(*args: Any, **kwargs: Any) -> Any:
            t0 = time.perf_counter()
            try:
                return fn(*args, **kwargs)
            finally:
                spent = time.perf_counter() - t0
                self.longest[name] = max(self.longest[name], spent)
                self.total[name] += spent
                self.calls[name] += 1

        return timed

    def report(self) -> None:
        print("  window slots (longest / total over calls):")
        for name, longest in self.longest.most_common():
            print(
                f"   {name:<18} {1000 * longest:7.1f} ms / {self.total[name]:6.2f} s "
                f"over {self.calls[name]} calls"
            )


class LockWatch:
    """Every thread's stack when the GUI thread misses its beat by 150 ms.

    ``faulthandler.dump_traceback_later`` is armed again on every beat of
    the GUI thread; its watchdog runs without the interpreter lock, so it
    also sees the stalls the sampler cannot (the GUI thread waiting for the
    lock while a worker holds it: an import, a long NumPy call)."""

    def __init__(self, late: float = 0.15) -> None:
        from PySide6.QtCore import QTimer

        self.late = late
        # open from start() to the end of report(): no one block holds it
        self.file = tempfile.TemporaryFile("w+")  # noqa: SIM115
        self.timer = QTimer()
        self.timer.setInterval(10)
        self.timer.timeout.connect(self._arm)

    def _arm(self) -> None:
        faulthandler.dump_traceback_later(self.late, file=self.file)

    def start(self) -> None:
        self._arm()
        self.timer.start()

    def stop(self) -> None:
        self.timer.stop()
        faulthandler.cancel_dump_traceback_later()

    def report(self) -> None:
        self.file.seek(0)
        dumps = self.file.read().split("Timeout (")[1:]
        print(f"  stacks when the GUI thread was {1000 * self.late:.0f} ms late ({len(dumps)}):")
        for dump in dumps:
            for thread in dump.split("\n\n"):
                frames = [
                    line.strip()
                    for line in thread.splitlines()
                    if line.strip().startswith("File") and "frozen" not in line
                ]
                if frames:
                    print("   " + "\n      ← ".join(f[5:][:110] for f in frames[:3]))
            print("   --")
        self.file.close()


class SchedClock:
    """Where the GUI thread's time went during each stall (Linux only).

    Every 10 ms the GUI thread reads ``/proc/self/task/TID/schedstat`` of
    every thread of the process: time on a CPU and time runnable but waiting
    for one (ns).  A stall of the GUI thread is then split into its own work
    (on CPU), the machine's load (waiting for a CPU) and the rest, blocked:
    waiting for the interpreter lock (a thread that waits for it sleeps).
    Beside it, the other thread that ran or wanted to run most meanwhile: a
    blocked stall whose other thread mostly *waited for a CPU* was the lock
    held by a thread the machine had preempted - the loaded machine again,
    not a long call.
    """

    def __init__(self) -> None:
        from PySide6.QtCore import Qt, QTimer

        self.gui = threading.get_native_id()
        self.samples: list[tuple[float, dict[int, tuple[int, int]]]] = []
        self.timer = QTimer()
        self.timer.setTimerType(Qt.TimerType.PreciseTimer)
        self.timer.setInterval(10)
        self.timer.timeout.connect(self._sample)

    @staticmethod
    def available() -> bool:
        """The kernel keeps per-thread scheduler figures (Linux)."""
        return Path(f"/proc/self/task/{threading.get_native_id()}/schedstat").exists()

    def _sample(self) -> None:
        now = time.perf_counter()
        threads: dict[int, tuple[int, int]] = {}
        for task in Path("/proc/self/task").iterdir():
            try:
                cpu, wait = (task / "schedstat").read_text().split()[:2]
            except (OSError, ValueError):
                continue  # a thread that just ended
            threads[int(task.name)] = (int(cpu), int(wait))
        self.samples.append((now, threads))

    def start(self) -> None:
        self._sample()
        self.timer.start()

    def stop(self) -> None:
        self.timer.stop()
        self._sample()

    def split(self, start: float, gap: float) -> tuple[float, ...] | None:
        """GUI thread (on CPU, waiting for a CPU, blocked) and the busiest other
        thread (on CPU, waiting for a CPU), seconds, between the samples around a stall."""
        before = [s for s in self.samples if s[0] <= start + 1e-4]
        after = [s for s in self.samples if s[0] >= start + gap - 1e-4]
        if not before or not after or self.gui not in before[-1][1]:
            return None
        (t0, was), (t1, now) = before[-1], after[0]
        moved = {
            tid: ((now[tid][0] - c) / 1e9, (now[tid][1] - w) / 1e9)
            for tid, (c, w) in was.items()
            if tid in now
        }
        cpu, wait = moved.get(self.gui, (0.0, 0.0))
        others = [v for tid, v in moved.items() if tid != self.gui]
        busiest = max(others, key=sum, default=(0.0, 0.0))
        return cpu, wait, max(0.0, (t1 - t0) - cpu - wait), *busiest

    def causes(self, stalls: list[tuple[float, float]]) -> dict[str, int]:
        """How many of ``stalls`` went mostly to the GUI thread's own work, to
        waiting for a CPU (the machine's load) or to being blocked (the
        interpreter lock held by another thread)."""
        names = ("own work", "waiting for a CPU", "interpreter lock")
        found: Counter[str] = Counter()
        for start, gap in stalls:
            parts = self.split(start, gap)
            if parts is not None:
                found[names[max(range(3), key=lambda k: parts[k])]] += 1
        return {name: found[name] for name in names}

    def report(self, stalls: list[tuple[float, float]], origin: float) -> None:
        print(
            " stalls of 100 ms or more: GUI thread on CPU / waiting for a CPU / blocked"
            " (GIL) | busiest other thread on CPU / waiting for a CPU:"
        )
        for start, gap in stalls:
            parts = self.split(start, gap)
            if parts is not None:
                cpu, wait, blocked, other_cpu, other_wait = (1000 * x for x in parts)
                print(
                    f"   at {start - origin:6.2f} s, {1000 * gap:4.0f} ms: {cpu:4.0f} / "
                    f"{wait:4.0f} / {blocked:4.0f} ms | {other_cpu:4.0f} / {other_wait:4.0f} ms"
                )


class GcClock:
    """The cyclic garbage collector's passes of 20 ms or more (it holds the
    interpreter lock throughout): when, how long, on which thread."""

    def __init__(self) -> None:
        self.started: dict[int, float] = {}
        self.passes: list[tuple[float, float, int, str]] = []

    def __call__(self, phase: str, info: dict[str, int]) -> None:
        now = time.perf_counter()
        if phase == "start":
            self.started[threading.get_ident()] = now
            return
        began = self.started.pop(threading.get_ident(), now)
        if now - began >= 0.02:
            name = threading.current_thread().name
            self.passes.append((began, now - began, info["generation"], name))

    def install(self) -> None:
        gc.callbacks.append(self)

    def remove(self) -> None:
        gc.callbacks.remove(self)

    def report(self, origin: float) -> None:
        print(f"  garbage collector passes of 20 ms or more: {len(self.passes)}")
        for began, spent, generation, name in self.passes:
            print(
                f"   at {began - origin:6.2f} s: generation {generation}, "
                f"{1000 * spent:.0f} ms on {name}"
            )


def _edit(w: Any, rng: random.Random, covariates: list[str]) -> None:
    """One random edit: a node move, a tick, an arrow added or removed, a family switch."""
    from covariscope.model.commands import AddArrow, RemoveArrow, SetProposed, UpdateNode
    from covariscope.views.commands import SetSettings

    p = w.project
    d = p.diagram
    node = rng.choice(covariates)
    kind = rng.choice(["move", "move", "tick", "tick", "arrow", "arrow", "family"])
    if kind == "move":
        w.push(UpdateNode(p, node, x=rng.uniform(0, 900), y=rng.uniform(0, 500)))
    elif kind == "tick":
        w.push(SetProposed(p, sorted(set(p.proposed) ^ {node})))
    elif kind == "arrow":
        target = rng.choice(["x", "y", *covariates])
        if d.has_arrow(node, target):
            w.push(RemoveArrow(p, node, target))
        elif target != node and not d.has_arrow(target, node):
            w.push(AddArrow(p, node, target))  # a cycle is refused with a message
    else:
        family = "logistic" if p.analysis.family == "linear" else "linear"
        w.push(SetSettings(p, f"Use the {family} family", family=family))


def _settled(w: Any) -> bool:
    return bool(
        w.result is not None
        and not w.runner.running
        and not w.runner.pending
        and not w.data.loading
        and w.state_label.text() == "Analysis up to date"
    )


def _run_until(app: Any, done: Callable[[], bool], timeout: float) -> None:
    """Serve the event loop until ``done()`` (checked every 5 ms)."""
    from PySide6.QtCore import QEventLoop, QTimer

    loop = QEventLoop()
    poll = QTimer()
    poll.setInterval(5)
    poll.timeout.connect(lambda: loop.quit() if done() else None)
    give_up = QTimer()
    give_up.setSingleShot(True)
    give_up.timeout.connect(loop.quit)
    poll.start()
    give_up.start(int(1000 * timeout))
    loop.exec()
    poll.stop()
    give_up.stop()
    if not done():
        raise SystemExit(f"the window did not settle within {timeout:.0f} s")


def _fire(app: Any, w: Any, edits: int, seed: int, covariates: list[str]) -> list[float]:
    """Push ``edits`` random edits, one per turn of the event loop; each one's seconds."""
    from PySide6.QtCore import QTimer

    rng = random.Random(seed)
    spent: list[float] = []
    timer = QTimer()
    timer.setInterval(0)

    def one() -> None:
        t0 = time.perf_counter()
        _edit(w, rng, covariates)
        spent.append(time.perf_counter() - t0)
        if len(spent) == edits:
            timer.stop()

    timer.timeout.connect(one)
    timer.start()
    _run_until(app, lambda: len(spent) >= edits, timeout=600)
    return spent


def same_json(a: Any, b: Any) -> bool:
    """Equal JSON, numbers to 1e-7 relative (a cached answer may come another way)."""
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(same_json(a[k], b[k]) for k in a)
    if isinstance(a, list) and isinstance(b, list):
        return len(a) == len(b) and all(same_json(x, y) for x, y in zip(a, b, strict=True))
    if isinstance(a, float) and isinstance(b, float):
        if math.isnan(a) or math.isnan(b):
            return math.isnan(a) and math.isnan(b)
        return math.isclose(a, b, rel_tol=1e-7, abs_tol=1e-10)
    return json.dumps(a) == json.dumps(b)


def _checked(path: Path) -> Any:
    """``covariscope check --json`` on the saved project, in a fresh process."""
    code = "import sys; from covariscope.cli import main; sys.exit(main())"
    out = subprocess.run(
        [sys.executable, "-c", code, "check", "--json", str(path)],
        check=True,
        capture_output=True,
        text=True,
    ).stdout
    return json.loads(out)


def storm(
    project_path: Path,
    covariates: list[str],
    *,
    edits: int = 200,
    seed: int = 7,
    hunt: bool = False,
    watch: bool = False,
) -> dict[str, Any]:
    """Open ``project_path`` in the window, fire the storm, let it settle; the figures."""
    from PySide6.QtCore import QStandardPaths

    from covariscope.qt.app import application, start_warmup
    from covariscope.qt.main_window import MainWindow
    from covariscope.qt.stall_meter import StallMeter
    from covariscope.views.check_json import study_to_json

    app = application()
    QStandardPaths.setTestModeEnabled(True)  # no recent-files list or layout of the user's
    clock = SlotClock() if hunt else None
    restore = clock.wrap(MainWindow, TIMED_SLOTS) if clock is not None else None
    w = MainWindow(prompts=QuietPrompts())  # type: ignore[arg-type]
    w.resize(1366, 768)
    w.show()
    gc_clock = GcClock()
    gc_clock.install()
    opening = StallMeter()  # the stalls while the file loads and the first analysis runs
    sched = SchedClock() if SchedClock.available() else None  # cheap: on in every run
    if sched is not None:
        sched.start()
    opening.start()
    lock_watch = LockWatch() if hunt else None  # from the opening on
    if lock_watch is not None:
        lock_watch.start()
    start_warmup()  # as the program's own start does (qt.app.start_window)
    t0 = time.perf_counter()
    assert w.io.open(str(project_path))
    _run_until(app, lambda: _settled(w), timeout=1800)
    opened = time.perf_counter() - t0
    opening.stop()
    meter = StallMeter(watch=watch)  # the watch's hook slows the GUI thread: off when timing
    hunter = StallHunter(meter.log, threading.get_ident()) if hunt else None
    meter.start()
    if hunter is not None:
        hunter.start()
    t_fire = time.perf_counter()
    spent = _fire(app, w, edits, seed, covariates)
    t_fired = time.perf_counter()
    _run_until(app, lambda: _settled(w), timeout=1800)
    t_settled = time.perf_counter()
    meter.stop()
    if hunter is not None:
        hunter.halt.set()
        hunter.join()
    if lock_watch is not None:
        lock_watch.stop()
    if sched is not None:
        sched.stop()
    assert w.io.save()
    shown = json.loads(json.dumps(study_to_json(w.result, w.project), allow_nan=False))
    equal = same_json(shown, _checked(project_path))
    figures = {
        "storm_open": opened,
        "storm_fire": t_fired - t_fire,
        "storm_edit_handling": sum(spent),
        "storm_settle": t_settled - t_fired,
        "max_stall": meter.log.longest,
        "stalls_over_100ms": meter.log.over(0.1),
        "stalls_over_50ms": meter.log.over(0.05),
        "open_max_stall": opening.log.longest,
        "gui_data_work_calls": meter.watch.total if meter.watch is not None else -1,
        "storm_equals_check_json": equal,
        "storm_family": w.project.analysis.family,
    }
    over = [(start - t_fire, gap) for start, gap in meter.log.stalls if gap >= 0.1]
    if over:
        print(
            "  stalls of 100 ms or more (seconds after the first edit: length):",
            ", ".join(f"{at:.2f}: {1000 * gap:.0f} ms" for at, gap in over),
            f"(edits fired until {t_fired - t_fire:.2f})",
        )
    if meter.watch is not None and meter.watch.entries:
        print("  data work on the GUI thread:", dict(meter.watch.entries.most_common(8)))
    if hunter is not None and clock is not None and lock_watch is not None:
        hunter.report()
        clock.report()
        lock_watch.report()
    gc_clock.remove()
    gc_clock.report(t_fire)
    if sched is not None:
        long_open = [(a, g) for a, g in opening.log.stalls if g >= 0.1]
        long_storm = [(a, g) for a, g in meter.log.stalls if g >= 0.1]
        figures["open_stalls_over_100ms_by_cause"] = sched.causes(long_open)
        figures["storm_stalls_over_100ms_by_cause"] = sched.causes(long_storm)
        print("  stalls of 100 ms or more by main cause, opening:", sched.causes(long_open))
        print("  stalls of 100 ms or more by main cause, storm:", sched.causes(long_storm))
        print("  while opening:", end="")
        sched.report([(a, g) for a, g in opening.log.stalls if g >= 0.1], t_fire)
        print("  during the storm:", end="")
        sched.report([(a, g) for a, g in meter.log.stalls if g >= 0.1], t_fire)
    w.io.extra_modified = False
    w.undo_stack.setClean()
    w.close()
    if restore is not None:
        restore()
    return figures
