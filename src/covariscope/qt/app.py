"""Starting the window: the QApplication, the style sheet, the first-start
offer of the demo, and the recovery offer after a crash."""

from __future__ import annotations

import gc
import importlib
import sys
import threading
from importlib import resources
from typing import TYPE_CHECKING

from PySide6.QtCore import QSettings
from PySide6.QtWidgets import QApplication

from covariscope.errors import CovariscopeError

if TYPE_CHECKING:
    from covariscope.qt.main_window import MainWindow

__all__ = [
    "WARM_MODULES",
    "application",
    "run_gui",
    "start_warmup",
    "style_sheet",
    "warm_imports",
    "warm_up",
]

ORGANISATION = "Covariscope"
APPLICATION = "Covariscope"

#: What the analysis imports on first use (a second or more each): imported
#: once in the background when the window starts, so that the first logistic
#: fit, spline or diagram check does not import them in the middle of the
#: user's edits (an import holds the interpreter lock for long stretches,
#: which the GUI thread waits out: measured stalls of 150 ms and more).
WARM_MODULES = (
    "scipy.optimize",
    "scipy.stats",
    "statsmodels.discrete.discrete_model",
    "statsmodels.stats.multitest",
    "patsy",
)


def warm_imports(modules: tuple[str, ...] = WARM_MODULES) -> list[str]:
    """Import ``modules`` (those that fail to import are left to fail where used)."""
    done = []
    for name in modules:
        try:
            importlib.import_module(name)
        except ImportError:
            continue
        done.append(name)
    return done


def warm_up(modules: tuple[str, ...] = WARM_MODULES) -> list[str]:
    """:func:`warm_imports` with the cyclic garbage collector paused, then
    every object made so far leaves its care (``gc.freeze``).

    A full collection walks every tracked object while it holds the
    interpreter lock: after start-up (the libraries, the window's widgets:
    some 200,000 objects) one took 115–270 ms, on whichever thread
    allocated at that moment, and the GUI thread stood still meanwhile
    (measured with ``gc.callbacks`` in the GUI storm).  Those objects live
    as long as the program; frozen, they are no longer walked, and a full
    collection reads only what the analyses made since.
    """
    gc.disable()  # an import makes many objects: no full collection in the middle of it
    try:
        return warm_imports(modules)
    finally:
        gc.freeze()
        gc.enable()


def start_warmup() -> threading.Thread:
    """:func:`warm_up` on a background thread (at the GUI thread's priority:
    see :mod:`covariscope.qt.worker`), started."""
    thread = threading.Thread(target=warm_up, name="covariscope-warm-imports", daemon=True)
    thread.start()
    return thread


def style_sheet() -> str:
    """The packaged style sheet ('' when missing)."""
    try:
        return (resources.files("covariscope") / "resources" / "covariscope.qss").read_text(
            encoding="utf-8"
        )
    except (FileNotFoundError, OSError):
        return ""


def application() -> QApplication:
    """The one QApplication, created and styled on first use."""
    existing = QApplication.instance()
    app = existing if isinstance(existing, QApplication) else QApplication(sys.argv[:1])
    app.setOrganizationName(ORGANISATION)
    app.setApplicationName(APPLICATION)
    app.setApplicationDisplayName(APPLICATION)
    if not app.styleSheet():
        app.setStyleSheet(style_sheet())
    return app


def start_window(project_path: str | None = None, *, demo: bool = False) -> MainWindow:
    """Build and show the main window, with the start-up offers; returns it."""
    from covariscope.qt.main_window import MainWindow

    application()
    window = MainWindow()
    window.show()
    start_warmup()
    recovered = window.io.offer_recovery()
    if project_path and not recovered:
        window.io.open(project_path)
    elif not recovered and not demo:
        settings = QSettings()
        if not settings.value("started_before", False, type=bool):
            settings.setValue("started_before", True)
            ask = (
                "Welcome to Covariscope. Open the demo study — an invented cohort with its "
                "diagram already drawn — to see how the workbench reads it?"
            )
            if window.prompts.yes_no("Open the demo?", ask):
                window.open_demo()
    return window


def run_gui(project_path: str | None, *, demo: bool = False) -> int:
    """Open the window (``covariscope`` or ``covariscope PROJECT``) and run
    until it is closed; returns the exit code."""
    app = application()
    try:
        start_window(project_path, demo=demo)
    except CovariscopeError as exc:
        print(f"covariscope: {exc}", file=sys.stderr)
        return 1
    return app.exec()
