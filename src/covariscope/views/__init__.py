"""Every rendering of a study result that needs no Qt.

Each screen of the window (data panel, review table, estimates strip,
diagnostics dialog), the one-page rationale and the ``check`` command have
their logic here as plain functions and frozen rows that turn a project and a
study result into text.  The widgets in :mod:`covariscope.qt` and the painter
in :mod:`covariscope.report` only show these rows, so the logic is tested
without a window.  Nothing here imports Qt.
"""

__all__: list[str] = []
