"""Before the window opens: can Qt's X11 platform plugin load here?

On a minimal Linux desktop the ``xcb`` plugin can lack system libraries; Qt
then aborts the whole process (a core dump) with a message that may name the
wrong package.  This probe asks the system's dynamic loader (``ldd``) which
libraries the plugin cannot find, before any Qt GUI class is created, so the
command line can say which packages to install and fall back to the
no-display commands.  It imports no Qt module.
"""

from __future__ import annotations

import importlib.util
import os
import re
import shutil
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

__all__ = ["DEBIAN_PACKAGES", "missing_libraries", "window_blocker"]

#: shared library → the Debian/Ubuntu package that holds it (from memory,
#: checked against the package names listed in the README)
DEBIAN_PACKAGES: dict[str, str] = {
    "libxcb-icccm.so.4": "libxcb-icccm4",
    "libxcb-keysyms.so.1": "libxcb-keysyms1",
    "libxcb-image.so.0": "libxcb-image0",
    "libxcb-render-util.so.0": "libxcb-render-util0",
    "libxcb-cursor.so.0": "libxcb-cursor0",
    "libxcb-xinerama.so.0": "libxcb-xinerama0",
    "libxcb-randr.so.0": "libxcb-randr0",
    "libxcb-shape.so.0": "libxcb-shape0",
    "libxcb-xkb.so.1": "libxcb-xkb1",
    "libxcb-xfixes.so.0": "libxcb-xfixes0",
    "libxcb-sync.so.1": "libxcb-sync1",
    "libxcb-shm.so.0": "libxcb-shm0",
    "libxcb-render.so.0": "libxcb-render0",
    "libxkbcommon-x11.so.0": "libxkbcommon-x11-0",
    "libxkbcommon.so.0": "libxkbcommon0",
    "libEGL.so.1": "libegl1",
    "libGL.so.1": "libgl1",
    "libOpenGL.so.0": "libopengl0",
    "libfontconfig.so.1": "libfontconfig1",
    "libdbus-1.so.3": "libdbus-1-3",
    "libX11-xcb.so.1": "libx11-xcb1",
}

_NOT_FOUND = re.compile(r"^\s*(\S+)\s*=>\s*not found", re.MULTILINE)


def missing_libraries(ldd_output: str) -> list[str]:
    """The libraries ``ldd`` reports as "not found", each once, in order.

    Examples
    --------
    >>> missing_libraries("libxcb-icccm.so.4 => not found\\nlibc.so.6 => /lib/libc.so.6")
    ['libxcb-icccm.so.4']
    """
    return list(dict.fromkeys(_NOT_FOUND.findall(ldd_output)))


def _ldd(path: Path) -> str:
    ldd = shutil.which("ldd")
    if ldd is None or not path.exists():
        return ""
    try:
        done = subprocess.run(
            [ldd, str(path)], capture_output=True, text=True, timeout=20, check=False
        )
    except (OSError, subprocess.SubprocessError):
        return ""
    return done.stdout


def _plugin_files() -> list[Path]:
    spec = importlib.util.find_spec("PySide6")
    if spec is None or not spec.submodule_search_locations:
        return []
    qt = Path(next(iter(spec.submodule_search_locations))) / "Qt"
    return [
        qt / "plugins" / "platforms" / "libqxcb.so",
        *sorted((qt / "lib").glob("libQt6XcbQpa.so*")),
    ]


def window_blocker(ldd: Callable[[Path], str] | None = None) -> str | None:
    """A plain message when the X11 plugin would fail to load (None: it can).

    Only on Linux with the X11 platform in use (no Wayland, no other
    ``QT_QPA_PLATFORM``); ``ldd`` is the loader query, replaceable in tests.
    """
    platform = os.environ.get("QT_QPA_PLATFORM", "")
    if not sys.platform.startswith("linux") or platform not in ("", "xcb"):
        return None
    if not platform and os.environ.get("WAYLAND_DISPLAY"):
        return None
    query = ldd or _ldd
    missing: list[str] = []
    for path in _plugin_files():
        missing += missing_libraries(query(path))
    missing = list(dict.fromkeys(missing))
    if not missing:
        return None
    packages = [DEBIAN_PACKAGES[m] for m in missing if m in DEBIAN_PACKAGES]
    install = f" On Debian or Ubuntu: sudo apt install {' '.join(packages)}." if packages else ""
    return (
        f"The window cannot open: Qt's X11 display plugin needs system libraries that are "
        f"missing ({', '.join(missing)}).{install} Meanwhile 'covariscope check' and "
        "'covariscope report' work without a window."
    )
