"""The data panel: the dataset's columns with inferred type, missing share
and the node each is bound to, and which measured nodes still lack a column."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass

from covariscope.data.loading import FORMAT_LABELS, SUPPORTED_SUFFIXES
from covariscope.data.profile import ColumnProfile
from covariscope.model.project import Project
from covariscope.views.format import DASH, is_number
from covariscope.vocabulary import ENGINE_TERMS, ColumnType, Engine

__all__ = [
    "COLUMN_MIME",
    "COLUMN_TYPES",
    "DATA_COLUMNS",
    "DATA_COLUMN_TIPS",
    "ColumnRow",
    "column_rows",
    "data_file_filter",
    "engine_status",
    "file_summary",
    "matching_bindings",
    "nodes_without_column",
    "unbound_summary",
]

#: Drag-and-drop type of a column dragged from the panel: UTF-8 column name.
COLUMN_MIME = "application/x-covariscope-column"

#: Types a column can be given (the models' term types).
COLUMN_TYPES: tuple[str, ...] = (
    ColumnType.CONTINUOUS,
    ColumnType.BINARY,
    ColumnType.COUNT,
    ColumnType.CATEGORICAL,
)

#: Header words, short so the five columns fit a narrow dock.
DATA_COLUMNS: tuple[str, ...] = ("Column", "Type", "Missing", "Node", "Ref.")

#: What each header word means in full (header tooltips).
DATA_COLUMN_TIPS: tuple[str, ...] = (
    "The column's name in the data file; drag it onto the diagram to add a node bound to it",
    "How the models treat it; * marks a type you set (Type ▸ As inferred undoes it)",
    "Share of rows with no value in this column",
    "The diagram node bound to this column",
    "Reference level of a binary or categorical column",
)


@dataclass(frozen=True)
class ColumnRow:
    name: str
    type: str
    type_overridden: bool
    missing: str
    bound_to: str
    reference: str
    levels: tuple[object, ...]
    #: as the user reads them: with the file's value labels where it has them
    reference_text: str = ""
    level_texts: tuple[str, ...] = ()

    def cells(self) -> tuple[str, ...]:
        type_text = f"{self.type}*" if self.type_overridden else self.type
        return (
            self.name,
            type_text,
            self.missing,
            self.bound_to,
            self.reference_text or self.reference,
        )


def file_summary(name: str, rows: int, columns: int, engine: str | None) -> str:
    """The data panel's first line: the file, its size, and where its rows are read.

    >>> file_summary("cohort.parquet", 50_000_000, 23, "duckdb")
    'cohort.parquet — 50,000,000 rows, 23 columns; read where it lies (DuckDB)'
    """
    text = f"{name} — {rows:,} rows, {columns} columns"
    if engine is None or engine == Engine.MEMORY:
        return text
    return f"{text}; read where it lies ({ENGINE_TERMS[Engine(engine)].short})"


def engine_status(engine: str, resident: int | None) -> str:
    """The status bar's words for the engine in use and the memory the program holds.

    >>> engine_status("duckdb", 420 * 2**20)
    'DuckDB · 420 MB'
    """
    name = ENGINE_TERMS[Engine(engine)].short
    return name if resident is None else f"{name} · {resident / 2**20:,.0f} MB"


def column_rows(
    project: Project, columns: Iterable[str], profiles: Mapping[str, ColumnProfile] | None
) -> list[ColumnRow]:
    """One row per data column, in file order; a column not profiled yet
    shows dashes (its profile arrives later)."""
    profiles = profiles or {}
    bound: dict[str, list[str]] = {}
    for node in project.diagram.nodes:
        if node.column:
            bound.setdefault(node.column, []).append(node.id)
    return [
        _column_row(project, name, profiles.get(name), ", ".join(bound.get(name, [])))
        for name in columns
    ]


def _column_row(
    project: Project, name: str, profile: ColumnProfile | None, bound_to: str
) -> ColumnRow:
    """One column's row: the project's type and reference where it sets them,
    else the profile's."""
    overrides = project.analysis.column_types
    inferred = profile.type if profile is not None else None
    ref = project.analysis.reference_levels.get(
        name, profile.reference if profile is not None else None
    )
    levels = tuple(profile.levels) if profile is not None else ()
    missing = profile.missing_pct if profile is not None else None
    return ColumnRow(
        name=name,
        type=str(overrides.get(name) or inferred or DASH),
        type_overridden=name in overrides,
        missing=f"{missing:.1f}%" if is_number(missing) else DASH,
        bound_to=bound_to,
        reference="" if ref is None else str(ref),
        levels=levels,
        reference_text="" if ref is None else _level_text(profile, ref),
        level_texts=tuple(_level_text(profile, v) for v in levels),
    )


def _level_text(profile: ColumnProfile | None, level: object) -> str:
    """A level with its value label where the file carries one (Stata, SPSS)."""
    return profile.level_text(level) if profile is not None else str(level)


def nodes_without_column(project: Project) -> list[str]:
    """Measured nodes that have no column yet (unmeasured ones need none)."""
    return [n.id for n in project.diagram.nodes if n.measured and not n.column]


def unbound_summary(project: Project, has_data: bool) -> str:
    """One line for the foot of the panel."""
    missing = nodes_without_column(project)
    if not project.diagram.nodes:
        return "No nodes yet: drag a column onto the diagram to add one."
    if not missing:
        return "Every measured node has a column."
    names = ", ".join(missing)
    if not has_data:
        return f"No data loaded; nodes without a column: {names}."
    return f"Nodes without a column: {names}."


def matching_bindings(project: Project, columns: Iterable[str]) -> dict[str, str]:
    """Node id → column for unbound nodes whose id (or label) names a column
    that no node is bound to yet: exact match first, then ignoring case."""
    columns = list(columns)
    taken = {n.column for n in project.diagram.nodes if n.column}
    free = [c for c in columns if c not in taken]
    by_lower: dict[str, list[str]] = {}
    for c in free:
        by_lower.setdefault(c.lower(), []).append(c)
    out: dict[str, str] = {}
    for node in project.diagram.nodes:
        if node.column or not node.measured:
            continue
        for key in (node.id, node.label):
            if key in free and key not in out.values():
                out[node.id] = key
                break
            candidates = [c for c in by_lower.get(key.lower(), []) if c not in out.values()]
            if len(candidates) == 1:
                out[node.id] = candidates[0]
                break
    return out


def data_file_filter() -> str:
    """The open-file filter: every extension the loader reads, then one entry
    per format, then all files.

    >>> "*.parquet" in data_file_filter()
    True
    """
    every = " ".join(f"*{suffix}" for suffix in SUPPORTED_SUFFIXES)
    per_format = [
        f"{label[:1].upper()}{label[1:]} ({' '.join(f'*{s}' for s, fmt in SUPPORTED_SUFFIXES.items() if fmt == key)})"
        for key, label in FORMAT_LABELS.items()
        if key in SUPPORTED_SUFFIXES.values()
    ]
    return ";;".join([f"Data files ({every})", *per_format, "All files (*)"])
