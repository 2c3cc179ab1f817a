"""Command line: ``gui`` (the default), ``check``, ``report`` and ``demo``.

Exit status, by class of problem (no traceback is ever shown):

- **0, a result** (possibly with warnings).  The effect of the exposure on
  the outcome was estimated, or no data were asked for (no data file, or the
  exposure or outcome not bound yet: the diagram alone is analysed).  A part
  left out is said in the messages (the notes of the text output, the
  ``messages`` list in ``--json``): a covariate whose column cannot be used
  (stray text, values out of range, bound to the exposure's or outcome's
  column), a setting that does not apply (an offset outside the rate-ratio
  family), data columns no node uses that cannot be read (nested Parquet),
  aliased covariates (the ``review`` verdict).  A closed output pipe is
  also 0 (quiet, as command-line tools do).
- **2, the question cannot be answered**: one line on standard error naming
  the problem and its fix, nothing on standard output.  The project file is
  unreadable, too large, or contradicts itself; the data file is missing,
  not a regular file, or damaged (NUL bytes, a tail of zero bytes, growing
  while read); the bound data cannot estimate the effect (exposure and
  outcome in one column, an outcome the exposure determines, stray text or
  out-of-range values in the exposure or outcome, an outcome with a single
  value, an outcome not coded for the family); an output that cannot be
  written or would overwrite something the project reads.
- **1**: an internal error, written to the per-user log and summarised in
  one line.
- **130**: interrupted.
"""

from __future__ import annotations

import argparse
import contextlib
import errno
import json
import math
import os
import sys
import time
import traceback
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from covariscope import __version__
from covariscope.errors import CovariscopeError
from covariscope.model.demo import demo_folder, write_demo
from covariscope.vocabulary import Family

__all__ = ["TerminalProgress", "error_log_path", "has_display", "main", "one_line"]

COMMANDS = ("gui", "check", "report", "export", "demo")
FAMILY_CHOICES = [f.value for f in Family]


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="covariscope",
        description="Decide, covariate by covariate, what to adjust for and why.",
        epilog="Run 'covariscope PROJECT' to open a project in the window. Exit status: 0 a "
        "result (parts left out are said in the messages), 2 the question cannot be answered "
        "(one line says why and the fix), 1 an internal error.",
    )
    parser.add_argument("--version", action="version", version=f"covariscope {__version__}")
    sub = parser.add_subparsers(dest="command")

    gui = sub.add_parser("gui", help="open the window (the default command)")
    gui.add_argument("project", nargs="?", help="project file to open")

    check = sub.add_parser("check", help="analyse a project and print the review")
    check.add_argument("project", help="project file (.json)")
    check.add_argument("--json", action="store_true", help="print the machine-readable result")
    check.add_argument("--data", help="data file to use instead of the one the project names")
    check.add_argument("--family", choices=FAMILY_CHOICES, help="model family")
    _engine_arguments(check)

    report = sub.add_parser("report", help="write the one-page adjustment rationale as PDF")
    report.add_argument("project", help="project file (.json)")
    report.add_argument("-o", "--output", required=True, help="PDF file to write")
    report.add_argument(
        "--force", action="store_true", help="replace an existing file that is not a PDF"
    )
    report.add_argument("--page", choices=("a4", "letter"), default="a4", help="paper size")
    report.add_argument("--data", help="data file to use instead of the one the project names")
    report.add_argument("--family", choices=FAMILY_CHOICES, help="model family")
    _engine_arguments(report)

    export = sub.add_parser("export", help="write the diagram as GraphML (no display needed)")
    export.add_argument("project", help="project file (.json)")
    export.add_argument("-o", "--output", required=True, help="GraphML file to write")

    demo = sub.add_parser("demo", help="write the invented demo study to a folder and open it")
    demo.add_argument("folder", nargs="?", help="where to write it (default: your documents)")
    demo.add_argument(
        "--no-window", action="store_true", help="do not open the window; print the review"
    )
    return parser


def _engine_arguments(command: argparse.ArgumentParser) -> None:
    command.add_argument(
        "--engine",
        choices=("auto", "memory", "duckdb", "dask"),
        help="how the data are read: in memory, where they lie (duckdb), or on a Dask cluster "
        "(default: the project's setting; auto = in memory unless the file is too large)",
    )
    command.add_argument(
        "--scheduler",
        help="address of a Dask scheduler for --engine dask (e.g. tcp://host:8786; "
        "default: a local cluster)",
    )


# -- helpers -------------------------------------------------------------------------


def one_line(message: str) -> str:
    """A multi-line message (a list of problems) folded into one line."""
    lines = [line.strip().lstrip("-").strip() for line in message.splitlines()]
    lines = [line for line in lines if line]
    if not lines:
        return ""
    head, rest = lines[0], lines[1:]
    return head + (" " + "; ".join(rest) if rest else "")


def has_display() -> bool:
    """Whether a window can be shown here."""
    platform = os.environ.get("QT_QPA_PLATFORM", "")
    if platform.startswith(("offscreen", "minimal")):
        return False
    if sys.platform.startswith("linux"):
        return bool(os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY"))
    return True


#: a run shorter than this many seconds prints no progress; lines at most this often
PROGRESS_DELAY, PROGRESS_EVERY = 1.0, 0.1


class TerminalProgress:
    """Progress of a long run on standard error: only on a terminal, and only
    once the run has taken more than a second (short runs print nothing).

    >>> import io
    >>> show = TerminalProgress(io.StringIO())  # not a terminal: silent
    >>> show(0.5, "Fitting model 3 of 42, pass 2 over the rows"); show.close()
    """

    def __init__(
        self, stream: Any, *, delay: float = PROGRESS_DELAY, every: float = PROGRESS_EVERY
    ) -> None:
        self.stream = stream
        self.active = bool(getattr(stream, "isatty", lambda: False)())
        self.delay, self.every = delay, every
        self.start = time.monotonic()
        self.last = -math.inf
        self.width = 0

    def __call__(self, fraction: float, text: str = "") -> None:
        now = time.monotonic()
        if not self.active or now - self.start < self.delay or now - self.last < self.every:
            return
        self.last = now
        line = f"{100 * fraction:3.0f}%  {text}"[:78]
        self.stream.write("\r" + line.ljust(self.width))
        self.stream.flush()
        self.width = len(line)

    def close(self) -> None:
        """Clear the progress line (if one was shown)."""
        if self.width:
            self.stream.write("\r" + " " * self.width + "\r")
            self.stream.flush()
            self.width = 0


def _run(args: argparse.Namespace) -> tuple[Any, Any]:
    from covariscope.data.heap import prefer_small_pages
    from covariscope.data.sources.choose import open_source
    from covariscope.model.project import load_project
    from covariscope.study import run_study

    prefer_small_pages()  # one analysis, then the process ends (see data.heap)
    project = load_project(args.project)
    project.diagram.require_question()
    engine = args.engine or project.analysis.engine
    scheduler = args.scheduler or project.analysis.scheduler
    source = None
    if args.data:
        source = open_source(args.data, engine, scheduler=scheduler)
    elif project.data is not None:
        source = open_source(project.data.resolve(project.path), engine, scheduler=scheduler)
    progress = TerminalProgress(sys.stderr, delay=PROGRESS_DELAY, every=PROGRESS_EVERY)
    try:
        result = run_study(project, source=source, family=args.family, progress=progress)
    finally:
        progress.close()
        close = getattr(source, "close", None)
        if close is not None:
            close()
    if result.data_problem:
        # The data named cannot estimate the effect asked about: a question
        # that cannot be answered, not a result with a warning (see EXIT STATUS).
        raise CovariscopeError(result.data_problem)
    return project, result


# -- commands ------------------------------------------------------------------------


def _cmd_check(args: argparse.Namespace) -> int:
    project, result = _run(args)
    from covariscope.views.check_json import study_to_json
    from covariscope.views.check_text import format_study_text

    if args.json:
        out = study_to_json(result, project, data_path=args.data)
        json.dump(out, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
    else:
        text = format_study_text(result)
        sys.stdout.write(text if text.endswith("\n") else text + "\n")
    sys.stdout.flush()  # a full disk or a closed pipe is reported here, not at exit
    return 0


def _headless_qt() -> None:
    """The PDF needs fonts and a paint device, never a screen."""
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")


def _cmd_report(args: argparse.Namespace) -> int:
    _headless_qt()
    from covariscope.model.files import check_output_path
    from covariscope.model.project import load_project
    from covariscope.report.painter import write_pdf

    project = load_project(args.project)
    reads = [
        ("the project file itself", Path(args.project)),
        ("the study's data file", Path(args.data) if args.data else project.data_path()),
    ]
    output = check_output_path(Path(args.output), reads, force=args.force)
    project, result = _run(args)
    path = write_pdf(result, project, output, page=args.page)
    print(f"Wrote the adjustment rationale to {path}")
    return 0


def _cmd_export(args: argparse.Namespace) -> int:
    from covariscope.model.files import check_output_path
    from covariscope.model.project import load_project
    from covariscope.views.diagram import export_graphml

    project = load_project(args.project)
    reads = [
        ("the project file itself", Path(args.project)),
        ("the study's data file", project.data_path()),
    ]
    output = check_output_path(Path(args.output), reads, kind="GraphML", magic=b"<?xml")
    path = export_graphml(project.diagram, output)
    print(f"Wrote the diagram as GraphML to {path}")
    return 0


def _cmd_gui(project: str | None, *, demo: bool = False) -> int:
    if not has_display():
        raise CovariscopeError(
            "No display was found, so the window cannot open here. Use 'covariscope check' "
            "or 'covariscope report' on this machine, or 'covariscope demo' for the demo's review."
        )
    from covariscope.qt.platform_probe import window_blocker

    blocked = window_blocker()
    if blocked:
        raise CovariscopeError(blocked)
    from covariscope.qt.app import run_gui

    return run_gui(project, demo=demo)


def _cmd_demo(args: argparse.Namespace) -> int:
    folder = Path(args.folder).expanduser() if args.folder else demo_folder()
    project_path = write_demo(folder)
    print(f"Demo study written to {folder}")
    from covariscope.qt.platform_probe import window_blocker

    blocked = window_blocker() if not args.no_window and has_display() else None
    if not args.no_window and has_display() and not blocked:
        return _cmd_gui(str(project_path), demo=True)
    if blocked:
        print(f"{blocked} Writing the review instead.")
    elif not args.no_window:
        print("No display was found, so the window cannot open here; writing the review instead.")
    from covariscope.views.check_text import format_study_text

    project, result = _run(
        argparse.Namespace(
            project=str(project_path), data=None, family=None, engine=None, scheduler=None
        )
    )
    print(format_study_text(result))
    try:
        _headless_qt()
        from covariscope.report.painter import write_pdf

        pdf = write_pdf(result, project, folder / "demo_rationale.pdf")
        print(f"Wrote the adjustment rationale to {pdf}")
    except CovariscopeError as exc:
        print(f"The rationale could not be written: {exc}", file=sys.stderr)
    return 0


def main(argv: Sequence[str] | None = None) -> int:
    args_list = list(sys.argv[1:] if argv is None else argv)
    if args_list and args_list[0] not in COMMANDS and not args_list[0].startswith("-"):
        args_list = ["gui", *args_list]
    parser = _parser()
    args = parser.parse_args(args_list)
    try:
        if args.command == "check":
            return _cmd_check(args)
        if args.command == "report":
            return _cmd_report(args)
        if args.command == "export":
            return _cmd_export(args)
        if args.command == "demo":
            return _cmd_demo(args)
        return _cmd_gui(getattr(args, "project", None))
    except CovariscopeError as exc:
        print(f"covariscope: {one_line(str(exc))}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("covariscope: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return _quiet_broken_pipe()
    except OSError as exc:
        print(f"covariscope: {_output_failure(exc)}", file=sys.stderr)
        return 2
    except Exception as exc:  # the user never sees a traceback
        return _internal_error(exc)


def _quiet_broken_pipe() -> int:
    """The reader went away (``| head``): stop quietly, as command-line tools do."""
    with contextlib.suppress(OSError):
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    return 0


def _output_failure(exc: OSError) -> str:
    if exc.errno == errno.ENOSPC:
        return (
            "the output could not be written: no space left on the device. "
            "Free some space or write elsewhere."
        )
    where = f" ({exc.filename})" if exc.filename else ""
    return (
        f"a file could not be read or written{where}: {exc.strerror or exc}. "
        "Check the path and its permissions."
    )


def error_log_path() -> Path:
    """The internal-error log in the user's own log folder (never a file
    shared by every user of the machine)."""
    from platformdirs import user_log_dir

    return Path(user_log_dir("covariscope", appauthor=False)) / "internal-errors.log"


def _internal_error(exc: Exception) -> int:
    log = error_log_path()
    try:
        log.parent.mkdir(parents=True, exist_ok=True)
        log.write_text(traceback.format_exc(), encoding="utf-8")
        where = f"; details are in {log}"
    except OSError:
        where = ""
    print(
        f"covariscope: an internal error stopped the command ({type(exc).__name__}: {exc}){where}. "
        "Please report it with the project file.",
        file=sys.stderr,
    )
    return 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
