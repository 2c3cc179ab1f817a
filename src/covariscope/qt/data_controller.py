"""The data side of the window: loading in the background, the SHA-256
check, relocating a missing file, bindings, column types and reference
levels, columns dropped onto the canvas, and the engine that reads the file.

A file that fits is loaded into memory and profiled whole, in the
background.  A file read where it lies (DuckDB, Dask: chosen in the
project's settings, or automatically for a file too large for memory) is
only opened in the background; its columns appear at once and their
profiles arrive one by one (:class:`~covariscope.qt.profiling.ProfileRunner`),
with progress and cancel.  Either way a column whose type or reference
level changes is profiled again by that runner, off the GUI thread, and a
settings change that touches no column's profile (the family, the
thresholds) profiles nothing.
"""

from __future__ import annotations

import contextlib
import os
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from PySide6.QtCore import QObject

from covariscope.data.profile import ColumnProfile
from covariscope.data.sample import AnalyticSample
from covariscope.data.sources.batched import BatchSource
from covariscope.errors import CovariscopeError
from covariscope.model.commands import Macro
from covariscope.model.project import DataRef
from covariscope.qt.profiling import ProfileRunner
from covariscope.qt.project_io import DATA_FILTER
from covariscope.qt.worker import LoadRunner
from covariscope.study.result import StudyResult
from covariscope.views.commands import SetData, SetSettings, bind_column
from covariscope.views.data_panel import matching_bindings
from covariscope.vocabulary import ENGINE_TERMS, Engine

if TYPE_CHECKING:
    from covariscope.qt.main_window import MainWindow

__all__ = ["DataController"]


@dataclass(frozen=True)
class _Profiled:
    """A table loaded into memory with the profiles made in the background,
    and the (types, reference levels) they were made with."""

    table: Any
    profiles: dict[str, Any]
    settings: tuple[dict[str, str], dict[str, Any]]


class _TableProfiles:
    """The profiles of a table in memory through the window's study cache, in
    the form :class:`ProfileRunner` reads (it calls them off the GUI thread)."""

    def __init__(self, cache: Any, table: Any) -> None:
        self.cache, self.table = cache, table

    def profiles(
        self, columns: tuple[str, ...], types: Mapping[str, str], references: Mapping[str, Any]
    ) -> dict[str, Any]:
        from covariscope.study.prepare import table_profiles
        from covariscope.study.source import TableSource

        found = table_profiles(self.cache, TableSource(self.table), types, references)
        return {c: found[c] for c in columns}


class DataController(QObject):
    def __init__(self, window: MainWindow) -> None:
        super().__init__(window)
        self.w = window
        self.table: Any = None
        self.profiles: dict[str, ColumnProfile] = {}
        self.loader = LoadRunner(load=self._load_and_profile, parent=self)
        # The column settings a background load profiles with (read on the GUI thread).
        self._settings: tuple[dict[str, str], dict[str, Any]] = ({}, {})
        self.loader.progress.connect(lambda f: window.show_progress("Loading data", f))
        self.loader.loaded.connect(self._loaded)
        self.loader.failed.connect(self._failed)
        self.profiler = ProfileRunner(self)
        self.profiler.profiled.connect(self._profiled)
        self.profiler.progress.connect(
            lambda f, column: window.show_progress(f"Profiling {column}", f)
        )
        self.profiler.finished.connect(self._profiles_done)
        self.profiler.failed.connect(self._profile_failed)
        #: the columns the profiler has in hand
        self._in_hand: tuple[str, ...] = ()
        #: column → (type setting, reference setting) its profile was made with
        self._profiled_with: dict[str, tuple[Any, Any]] = {}
        #: the engine and scheduler the data in hand were opened with
        self._engine: tuple[str, str] = ("auto", "")

    @property
    def loading(self) -> bool:
        return self.loader.running or self.profiler.running

    @property
    def source(self) -> BatchSource | None:
        """The source when the rows are read where they lie, else None (in memory)."""
        return self.table if isinstance(self.table, BatchSource) else None

    def cancel(self) -> str:
        """Stop loading or profiling; what was stopped, in words ("" when nothing ran)."""
        if self.loader.running:
            self.loader.cancel()
            return "Loading cancelled."
        if self.profiler.running:
            self.profiler.cancel()
            self._forget_in_hand()
            done = len(self.profiles)
            return (
                f"Profiling cancelled: {done} of {len(self.columns())} columns profiled. "
                "The analysis still counts every row of the columns it uses."
            )
        return ""

    # -- loading ---------------------------------------------------------------------
    def _data_folder(self) -> str:
        """The folder of the data now loaded, else the project's folder."""
        if self.table is not None:
            return str(Path(self.table.path).parent)
        return self.w.io.start_folder()

    def choose_and_load(self) -> bool:
        path = self.w.prompts.open_path("Load the study data", DATA_FILTER, self._data_folder())
        return path is not None and bool(path) and self.load_file(path)

    def load_file(self, path: str) -> bool:
        """Point the project at ``path`` (undoable) and load it."""
        ref = DataRef(os.path.abspath(path), None)  # a symlink keeps its name
        if not self.w.push(SetData(self.w.project, ref, f"Use data {Path(path).name}")):
            return False
        return self.start_load()

    def forget(self) -> None:
        self.loader.cancel()
        self.profiler.cancel()
        self.table = None
        self.profiles = {}
        self.w.runner.table = None

    def start_load(self) -> bool:
        """Load the project's data file; offer to relocate it when missing."""
        project = self.w.project
        path = project.data_path()
        if path is None:
            return False
        if not path.exists():
            ask = (
                f"The data file {path} cannot be found. It may have been moved or renamed. "
                "Locate it now?"
            )
            if not self.w.prompts.yes_no("Data file missing", ask):
                self.w.set_last_error(f"Data file not found: {path}")
                return False
            found = self.w.prompts.open_path("Locate the data file", DATA_FILTER, str(path.parent))
            if not found:
                return False
            ref = DataRef(os.path.abspath(found), project.data.sha256 if project.data else None)
            self.w.push(SetData(project, ref, "Relocate the data file"))
            path = Path(found)
        self.profiler.cancel()
        self.table = None
        a = project.analysis
        self._settings = (dict(a.column_types), dict(a.reference_levels))
        self._engine = (a.engine, a.scheduler)
        self.w.show_progress("Loading data", 0.0)
        self.loader.load(str(path))
        return True

    def _load_and_profile(self, path: str, progress: Any, cancel: Any) -> Any:
        """Load the file and profile its columns, in the background: the GUI
        thread then finds every profile in the study cache.  A file to be read
        where it lies is only opened here (its profiles come column by column)."""
        from covariscope.data.loading import load_table
        from covariscope.data.sources.choose import choose_engine, open_source
        from covariscope.study.prepare import table_profiles
        from covariscope.study.source import TableSource

        engine, scheduler = self._engine
        if choose_engine(Path(path), engine) != "memory":
            progress(0.5, "Opening the file where it lies")
            return open_source(path, engine, scheduler=scheduler)
        table = load_table(path, progress=lambda f: progress(0.9 * f, ""), cancel=cancel)
        progress(0.9, "Profiling the columns")
        types, references = self._settings
        profiles: dict[str, Any] = {}
        # A setting that does not fit is reported when the window profiles with the settings in force.
        with contextlib.suppress(CovariscopeError):
            profiles = table_profiles(
                self.w.runner.cache, TableSource(table), types, references, cancel
            )
        return _Profiled(table, profiles, (types, references))

    def _failed(self, message: str) -> None:
        self.w.hide_progress()
        self.w.set_last_error(message)
        self.w.show_message(message)

    def _loaded(self, loaded: Any) -> None:
        self.w.hide_progress()
        table = loaded.table if isinstance(loaded, _Profiled) else loaded
        project = self.w.project
        recorded = project.data.sha256 if project.data else None
        if recorded and recorded != table.sha256:
            self.w.prompts.warn(
                "The data file has changed",
                f"{table.path.name} is not the file this project was last saved with (its "
                "SHA-256 fingerprint differs). The results may not match earlier ones. If the "
                "change is intended, save the project to record the new fingerprint.",
            )
            self.w.set_last_error(
                f"{table.path.name}: SHA-256 differs from the one saved in the project"
            )
        if project.data is not None and project.data.sha256 != table.sha256:
            # the fingerprint is recorded on save; changing it is a change to the project
            project.data = DataRef(project.data.path, table.sha256)
            self.w.io.extra_modified = bool(recorded)
            self.w.io.update_title()
        self.table = table
        self.w.runner.table = table
        self.profiles = {}
        self._profiled_with = {}
        if isinstance(loaded, _Profiled):
            types, references = loaded.settings
            self.profiles = dict(loaded.profiles)
            self._profiled_with = {c: (types.get(c), references.get(c)) for c in loaded.profiles}
        self.reprofile()
        self.bind_matching()
        self.w.refresh_panels()
        if self.source is not None:
            engine = ENGINE_TERMS[Engine(self.source.engine)].short
            self.w.show_message(
                f"Opened {table.path.name}: {table.rows:,} rows, read where they lie by "
                f"{engine}; profiling the columns"
            )
        else:
            self.w.show_message(f"Loaded {table.path.name}: {table.rows:,} rows")
        self.w.request_analysis()
        self.w.show_engine()

    def _profiled(self, found: dict[str, ColumnProfile]) -> None:
        self.profiles = {**self.profiles, **found}
        self.w.data_panel.refresh(self.w.project, self.table, self.profiles)

    def _profiles_done(self, done: int) -> None:
        self.w.hide_progress()
        self.w.show_engine()
        self.w.refresh_panels()
        self.w.request_analysis()

    def _forget_in_hand(self) -> None:
        """The columns in hand keep their old profiles and are tried again next time."""
        self._profiled_with = {
            c: v for c, v in self._profiled_with.items() if c not in self._in_hand
        }

    def _profile_failed(self, message: str) -> None:
        self._forget_in_hand()
        self._failed(message)

    def reprofile(self) -> None:
        """Profile again, off the GUI thread, the columns whose type or reference
        level changed (a table in memory reads the others from the study cache);
        nothing when none did.  A change of engine loads the data again with the
        engine now chosen."""
        if self.table is None:
            self.profiles = {}
            return
        a = self.w.project.analysis
        if (a.engine, a.scheduler) != self._engine:
            self.start_load()
            return
        columns = self.columns()
        wanted = {c: (a.column_types.get(c), a.reference_levels.get(c)) for c in columns}
        stale = tuple(c for c in columns if self._profiled_with.get(c, ()) != wanted[c])
        if not stale:
            return
        if self.profiler.running:  # the run in hand is cancelled: its columns go along
            stale = tuple(dict.fromkeys((*self._in_hand, *stale)))
        self._profiled_with.update({c: wanted[c] for c in stale})
        self._in_hand = stale
        source = self.source or _TableProfiles(self.w.runner.cache, self.table)
        self.w.show_progress("Profiling the columns", 0.0)
        self.profiler.profile(source, stale, dict(a.column_types), dict(a.reference_levels))

    def columns(self) -> list[str]:
        if self.source is not None:
            return list(self.source.columns)
        return [str(c) for c in self.table.frame.columns] if self.table is not None else []

    def plot_frame(self, result: StudyResult | None) -> Any:
        """The rows the diagnostics plots draw: every loaded row, or, for a file
        read where it lies, the analytic sample's random sample of rows."""
        if self.source is None:
            return self.table.frame if self.table is not None else None
        sample = result.sample if result is not None else None
        return sample.frame if isinstance(sample, AnalyticSample) else None

    def edit_engine(self) -> None:
        """Ask which engine reads the data (saved in the project, one undo step)."""
        from covariscope.qt.settings_dialogs import EngineDialog

        a = self.w.project.analysis
        dialog = EngineDialog(a.engine, a.scheduler, self.w)
        if dialog.exec():
            self.set_engine(*dialog.values())

    def set_engine(self, engine: str, scheduler: str) -> bool:
        """Read the data with ``engine`` from now on; the data are loaded again."""
        a = self.w.project.analysis
        if (engine, scheduler) == (a.engine, a.scheduler):
            return False
        return self.w.push(
            SetSettings(
                self.w.project,
                f"Read the data with the {engine} engine",
                engine=engine,
                scheduler=scheduler,
            )
        )

    # -- binding ---------------------------------------------------------------------
    def bind_matching(self) -> int:
        """Bind every unbound node whose name matches a column; one undo step."""
        project = self.w.project
        pairs = matching_bindings(project, self.columns())
        commands = [
            c for n, col in pairs.items() if (c := bind_column(project, n, col)) is not None
        ]
        if commands:
            self.w.push(Macro(f"Bind {len(commands)} matching columns", commands))
        return len(commands)

    def bind(self, node_id: str, column: str) -> bool:
        command = bind_column(self.w.project, node_id, column)
        return command is not None and self.w.push(command)

    def unbind_column(self, column: str) -> bool:
        commands = [
            c
            for n in self.w.project.diagram.nodes
            if n.column == column and (c := bind_column(self.w.project, n.id, None)) is not None
        ]
        return bool(commands) and self.w.push(Macro(f"Unbind {column}", commands))

    def set_type(self, column: str, kind: str) -> bool:
        types = dict(self.w.project.analysis.column_types)
        if kind:
            if self.source is None and self.table is not None and column in self.table.frame:
                from covariscope.data.profile import validate_type

                try:
                    validate_type(self.table.frame[column], kind)
                except CovariscopeError as exc:
                    self.w.show_message(str(exc))
                    self.w.set_last_error(str(exc))
                    return False
            types[column] = kind
        else:
            types.pop(column, None)
        text = f"Make {column} {kind}" if kind else f"Infer the type of {column}"
        return self.w.push(SetSettings(self.w.project, text, column_types=types))

    def set_reference(self, column: str, level: Any) -> bool:
        refs = dict(self.w.project.analysis.reference_levels)
        refs[column] = level.item() if hasattr(level, "item") else level
        return self.w.push(
            SetSettings(self.w.project, f"Reference level of {column}", reference_levels=refs)
        )
