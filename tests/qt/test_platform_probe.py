"""A missing X11 library is found before the window is created, named with
its Debian/Ubuntu package, and the command line falls back plainly."""

from __future__ import annotations

from covariscope.qt import platform_probe

LDD = """\tlinux-vdso.so.1 (0x00007ffd)
\tlibQt6Gui.so.6 => /opt/Qt/lib/libQt6Gui.so.6 (0x00007f)
\tlibxcb-icccm.so.4 => not found
\tlibxcb-keysyms.so.1 => not found
\tlibc.so.6 => /lib/x86_64-linux-gnu/libc.so.6 (0x00007f)
"""


def test_missing_libraries_read_from_the_loader():
    assert platform_probe.missing_libraries(LDD) == ["libxcb-icccm.so.4", "libxcb-keysyms.so.1"]


def test_blocker_names_the_libraries_and_packages(monkeypatch):
    monkeypatch.setattr(platform_probe.sys, "platform", "linux")
    monkeypatch.delenv("QT_QPA_PLATFORM", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    message = platform_probe.window_blocker(ldd=lambda _path: LDD)
    assert message is not None
    assert "libxcb-icccm.so.4" in message
    assert "sudo apt install libxcb-icccm4 libxcb-keysyms1" in message
    assert "covariscope check" in message
    assert platform_probe.window_blocker(ldd=lambda _path: "") is None


def test_gui_command_falls_back_with_the_message(monkeypatch, capsys):
    from covariscope import cli

    monkeypatch.setenv("QT_QPA_PLATFORM", "xcb")
    monkeypatch.setenv("DISPLAY", ":0")
    monkeypatch.setattr(platform_probe.sys, "platform", "linux")
    monkeypatch.setattr(platform_probe, "_ldd", lambda _path: LDD)
    code = cli.main(["gui"])
    assert code != 0
    err = capsys.readouterr().err
    assert "libxcb-keysyms1" in err
