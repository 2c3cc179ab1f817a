"""Recovery files: the autosaved form of unsaved work, found again after a crash.

A running window writes ``recovery-<pid>.json`` in the application's data
folder every minute while there are unsaved changes, and deletes it on a
clean close.  At start a file whose writer is no longer running is offered
for recovery.
"""

from __future__ import annotations

import contextlib
import json
import os
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from covariscope.model.project import (
    Project,
    project_from_dict,
    project_to_dict,
    write_atomically,
)

__all__ = [
    "Recovery",
    "discard",
    "find_orphans",
    "read_recovery",
    "recovery_path",
    "write_recovery",
]

_FORMAT = "covariscope-recovery"


@dataclass(frozen=True)
class Recovery:
    path: Path
    project_path: str | None
    saved_at: float
    pid: int


def recovery_path(folder: Path, pid: int | None = None) -> Path:
    return Path(folder) / f"recovery-{os.getpid() if pid is None else pid}.json"


def write_recovery(folder: Path, project: Project, pid: int | None = None) -> Path:
    """Write the project's current form as this process's recovery file."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    target = recovery_path(folder, pid)
    body: dict[str, Any] = {
        "format": _FORMAT,
        "pid": os.getpid() if pid is None else pid,
        "saved_at": time.time(),
        "project_path": str(project.path) if project.path else None,
        "project": project_to_dict(project),
    }
    if project.data is not None:
        # stored absolute: the recovery file lives elsewhere than the project
        resolved = project.data.resolve(project.path)
        body["project"]["data"]["path"] = str(resolved)
    write_atomically(target, json.dumps(body, ensure_ascii=False))
    return target


def _alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    if os.name != "posix":
        return False  # cannot tell cheaply; offering a live one is harmless
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def find_orphans(folder: Path) -> list[Recovery]:
    """Recovery files whose writer is gone, newest first."""
    found = []
    for path in Path(folder).glob("recovery-*.json"):
        try:
            body = json.loads(path.read_text(encoding="utf-8"))
            pid = int(body["pid"])
            saved = float(body["saved_at"])
        except (OSError, ValueError, KeyError, TypeError):
            continue
        if body.get("format") != _FORMAT or _alive(pid):
            continue
        found.append(Recovery(path, body.get("project_path"), saved, pid))
    return sorted(found, key=lambda r: r.saved_at, reverse=True)


def read_recovery(recovery: Recovery) -> Project:
    """The project held in a recovery file (its file name restored, if any)."""
    body = json.loads(recovery.path.read_text(encoding="utf-8"))
    path = Path(body["project_path"]) if body.get("project_path") else None
    data = body["project"].get("data")
    if path is not None and data and Path(data["path"]).is_absolute():
        # back to the form the project file stores: relative to the project
        with contextlib.suppress(ValueError):
            data["path"] = Path(os.path.relpath(data["path"], path.parent)).as_posix()
    return project_from_dict(body["project"], path)


def discard(path: Path) -> None:
    with contextlib.suppress(OSError):
        Path(path).unlink()
