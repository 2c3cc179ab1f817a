"""The invented demo study that ships inside the package (a seeded, made-up
cohort; no real data), and where it is written for the user."""

from __future__ import annotations

import os
import shutil
from importlib import resources
from pathlib import Path

__all__ = ["DEMO_DATA", "DEMO_LEVELS_PROJECT", "DEMO_PROJECT", "demo_folder", "write_demo"]

DEMO_PROJECT = "demo_project.json"
#: the same study with the exposure in thirds: a multi-level exposure
DEMO_LEVELS_PROJECT = "demo_levels_project.json"
DEMO_DATA = "demo_cohort.csv"


def demo_folder() -> Path:
    """The default folder for the demo: the user's documents, else home."""
    home = Path.home()
    documents = os.environ.get("XDG_DOCUMENTS_DIR")
    base = Path(documents) if documents else home / "Documents"
    if not base.is_dir():
        base = home
    return base / "Covariscope demo"


def write_demo(folder: Path) -> Path:
    """Copy the demo project and data into ``folder``; an existing demo
    project there is kept, so the user's edits to it are never overwritten.
    Returns the project file's path."""
    folder.mkdir(parents=True, exist_ok=True)
    package = resources.files("covariscope") / "demo"
    target = folder / DEMO_PROJECT
    for name in (DEMO_DATA, DEMO_PROJECT, DEMO_LEVELS_PROJECT):
        destination = folder / name
        if destination.exists():
            continue
        with resources.as_file(package / name) as source:
            shutil.copyfile(source, destination)
    return target
