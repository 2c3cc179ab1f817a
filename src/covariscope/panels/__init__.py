"""Qt-free state behind the workbench panels.

Each panel of the window (data panel, review table, estimates strip,
diagnostics dialog) has its logic here as plain functions and frozen rows
that turn a project and a study result into text.  The widgets in
:mod:`covariscope.qt` only show these rows, so the logic is tested without a
window.  Nothing here imports Qt.
"""

__all__: list[str] = []
