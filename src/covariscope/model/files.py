"""Safe file handling for the files a project reads and the files we write.

Three rules live here, in one place, so the command line and the window
apply them alike:

* an output never replaces a file the project reads (the project file, its
  data file), and never silently replaces a file that is not of the kind
  being written;
* a project file is read only when it is a regular file, and only up to a
  size limit (a device such as ``/dev/zero`` never ends);
* temporary files left by an interrupted save are removed on the next save
  or open, matching only our own naming pattern.
"""

from __future__ import annotations

import contextlib
import os
import re
import stat
import time
from collections.abc import Iterable
from pathlib import Path

from covariscope.errors import CovariscopeError, ProjectFileError

__all__ = [
    "MAX_PROJECT_BYTES",
    "STALE_AFTER_SECONDS",
    "check_output_path",
    "read_project_bytes",
    "remove_stale_temporaries",
    "temporary_prefix",
]

MAX_PROJECT_BYTES = 64 * 1024 * 1024
"""A project of 10,000 nodes with notes takes a few megabytes; anything past
this bound is not a project (common practice: bound what an untrusted file
may make us read)."""

STALE_AFTER_SECONDS = 600.0
"""A temporary save file older than this is left over from an interrupted
save (a save writes and replaces it within a second)."""

_TEMP_TAIL = re.compile(r"^[A-Za-z0-9_]{8}\.tmp$")


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def _resolved(path: Path) -> Path:
    try:
        return path.expanduser().resolve()
    except (OSError, RuntimeError):
        return path.absolute()


def check_output_path(
    target: Path,
    reads: Iterable[tuple[str, Path | None]],
    *,
    kind: str = "PDF",
    magic: bytes = b"%PDF",
    force: bool = False,
) -> Path:
    """Refuse an output path that would destroy something; return it resolved.

    Parameters
    ----------
    target : Path
        Where the output is to be written.
    reads : iterable of (description, path)
        The files the project reads, e.g. ``("the project file", path)``;
        ``None`` paths are skipped.
    kind, magic : str, bytes
        What is written, and how a file of that kind begins; an existing file
        that begins so may be replaced (it is an earlier output).
    force : bool
        Replace an existing file of another kind.

    Raises
    ------
    CovariscopeError
        The target is a file the project reads, a folder or device, or an
        existing file of another kind (without ``force``).

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     data = Path(d) / "study.csv"
    ...     _ = data.write_text("a\\n1\\n")
    ...     try:
    ...         check_output_path(data, [("the study's data file", data)])
    ...     except CovariscopeError as exc:
    ...         print(str(exc).split(":")[-1].split(";")[0].strip())
    it is the study's data file, which Covariscope never overwrites
    """
    full = _resolved(Path(target))
    for description, path in reads:
        if path is None:
            continue
        if _same_file(full, Path(path)) or full == _resolved(Path(path)):
            raise CovariscopeError(
                f"Will not write the {kind} to {target}: it is {description}, which "
                "Covariscope never overwrites; choose another output name, such as "
                "rationale.pdf."
            )
    if not full.exists():
        if not full.parent.is_dir():
            raise CovariscopeError(
                f"Cannot write {target}: the folder {full.parent} does not exist; create it "
                "or choose another folder."
            )
        return full
    mode = full.stat().st_mode
    if not stat.S_ISREG(mode):
        what = "a folder" if stat.S_ISDIR(mode) else "not a regular file"
        raise CovariscopeError(
            f"Cannot write the {kind} to {target}: it is {what}; give a file name instead."
        )
    if not force and not _begins_with(full, magic):
        raise CovariscopeError(
            f"Will not replace {target}: it exists and is not a {kind}. Choose another "
            "output name, or add --force to replace it."
        )
    return full


def _begins_with(path: Path, magic: bytes) -> bool:
    try:
        with open(path, "rb") as handle:
            return handle.read(len(magic)) == magic
    except OSError:
        return False


def read_project_bytes(path: Path, limit: int | None = None) -> bytes:
    """Read a project file: a regular file of at most ``limit`` bytes.

    The file is opened without blocking (a named pipe would otherwise wait
    for a writer forever) and checked to be a regular file before any byte
    is read; reading stops one byte past the limit.

    Raises
    ------
    ProjectFileError
        Missing, not a regular file, unreadable, or larger than ``limit``.
    """
    limit = MAX_PROJECT_BYTES if limit is None else limit
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0)
    try:
        fd = os.open(path, flags)
    except FileNotFoundError:
        raise ProjectFileError(f"{path}: no such file.") from None
    except IsADirectoryError:
        raise ProjectFileError(
            f"{path} is a folder, not a project file; choose the .json file inside it."
        ) from None
    except OSError as exc:
        raise ProjectFileError(f"{path}: cannot be read ({exc.strerror or exc}).") from None
    mode = os.fstat(fd).st_mode
    if not stat.S_ISREG(mode):
        os.close(fd)
        if stat.S_ISDIR(mode):
            raise ProjectFileError(
                f"{path} is a folder, not a project file; choose the .json file inside it."
            )
        raise ProjectFileError(
            f"{path} is not a regular file (a pipe, device or socket); a project is "
            "read only from a saved .json file."
        )
    with os.fdopen(fd, "rb") as handle:
        try:
            raw = handle.read(limit + 1)
        except OSError as exc:
            raise ProjectFileError(f"{path}: cannot be read ({exc.strerror or exc}).") from None
    if len(raw) > limit:
        raise ProjectFileError(
            f"{path} is larger than {limit // (1024 * 1024)} MB, far more than any project "
            "needs; it is not a Covariscope project, or it was damaged."
        )
    return raw


def temporary_prefix(target: Path) -> str:
    """The name prefix of a save's temporary file beside ``target``."""
    return f".{target.name}."


def remove_stale_temporaries(target: Path, older_than: float = STALE_AFTER_SECONDS) -> int:
    """Remove temporary files an interrupted save of ``target`` left behind.

    Only files named ``.<target name>.<8 characters>.tmp`` (our own pattern)
    that are regular files older than ``older_than`` seconds are removed, so
    a save in progress elsewhere is never touched.  Returns how many were
    removed; failures to remove are ignored (the next save tries again).
    """
    prefix = temporary_prefix(target)
    now = time.time()
    removed = 0
    try:
        entries = list(os.scandir(target.parent))
    except OSError:
        return 0
    for entry in entries:
        if not entry.name.startswith(prefix):
            continue
        if not _TEMP_TAIL.match(entry.name[len(prefix) :]):
            continue
        with contextlib.suppress(OSError):
            info = entry.stat(follow_symlinks=False)
            if stat.S_ISREG(info.st_mode) and now - info.st_mtime > older_than:
                os.unlink(entry.path)
                removed += 1
    return removed
