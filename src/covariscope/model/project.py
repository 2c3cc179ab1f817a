"""The project file: diagram, data file reference and analysis settings.

Schema (``"format": "covariscope-project"``, ``"version": 1``)::

    {"format": "covariscope-project", "version": 1,
     "diagram": {"nodes": [{"id", "label", "kind", "measured", "column", "x", "y", "note"}],
                 "arrows": [{"from", "to"}], "proxies": [{"a", "b"}]},
     "data": {"path": "<relative to the project file>", "sha256": "<hex>"},
     "analysis": {"family": "linear", "proposed": [ids],
                  "thresholds": {"change_pct", "se_inflation_pct", "vif", "r2", "condition_index"},
                  "column_types": {column: type}, "reference_levels": {column: level},
                  "family_columns": {family: {"outcome"|"time"|"event"|"offset": column}},
                  "keep_choices": {"a|b": member},
                  "diagram_checks": {"correction": "holm"|"bh", "limit": int},
                  "engine": "auto"|"memory"|"duckdb"|"dask", "scheduler": "tcp://host:8786",
                  "spline_knots": {column: 3..7 (natural cubic spline knots at quantiles)}}}

``data`` and ``analysis`` are optional.  Loading validates everything and
reports every problem with where it is; saving is atomic.
"""

from __future__ import annotations

import contextlib
import json
import math
import os
import stat
import tempfile
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from covariscope.errors import CovariscopeError, DiagramError, ProjectFileError
from covariscope.model.diagram import KINDS, Diagram, Node
from covariscope.model.files import read_project_bytes, remove_stale_temporaries
from covariscope.model.project_json import finite_number, parse_project_json
from covariscope.vocabulary import (
    DEFAULT_CLAIM_LIMIT,
    DEFAULT_THRESHOLDS,
    Correction,
    Engine,
    Family,
)

__all__ = [
    "ENGINE_CHOICES",
    "FORMAT",
    "FORMAT_VERSION",
    "AnalysisSettings",
    "DataRef",
    "Project",
    "ProjectEvent",
    "load_project",
    "project_from_dict",
    "project_to_dict",
    "save_project",
]

FORMAT = "covariscope-project"
FORMAT_VERSION = 1
MAX_COORDINATE = 1e7
"""Canvas positions beyond this are a damaged file (a diagram spans a few
thousand units)."""
MAX_NODES = 20_000
"""Common practice, not a published bound: diagrams for one exposure and one
outcome hold tens of nodes, rarely hundreds."""
MAX_LINKS = 100_000
MAX_THRESHOLD = 1e6
"""No guide threshold (percent, VIF, condition index) means anything past this."""
FAMILY_NAMES: tuple[str, ...] = tuple(Family)
COLUMN_ROLES = ("outcome", "time", "event", "offset")


@dataclass(frozen=True)
class DataRef:
    """The study data file: path as stored (relative to the project file
    where possible) and the SHA-256 recorded when it was bound."""

    path: str
    sha256: str | None = None

    def resolve(self, project_path: Path | None) -> Path:
        p = Path(self.path)
        if p.is_absolute() or project_path is None:
            return p
        # normalised, not resolved: a symlinked data file keeps the name the
        # user gave it
        return Path(os.path.normpath(project_path.parent / p))


@dataclass
class AnalysisSettings:
    """What the analysis is asked to do: model family, proposed set, thresholds, column types and
    reference levels, and the user's other choices saved with the project.
    """

    family: str = "linear"
    proposed: list[str] = field(default_factory=list)
    thresholds: dict[str, float] = field(default_factory=lambda: dict(DEFAULT_THRESHOLDS))
    column_types: dict[str, str] = field(default_factory=dict)
    reference_levels: dict[str, Any] = field(default_factory=dict)
    family_columns: dict[str, dict[str, str]] = field(default_factory=dict)
    keep_choices: dict[str, str] = field(default_factory=dict)
    #: continuous columns entered as a natural cubic spline: column → number of knots
    spline_knots: dict[str, int] = field(default_factory=dict)
    #: multiplicity correction of the diagram's independence claims
    claim_correction: str = "holm"
    #: most independence claims tested (the analyst may raise it)
    claim_limit: int = DEFAULT_CLAIM_LIMIT
    #: how the data are read: "auto" (in memory unless the file is too large), "memory",
    #: "duckdb" or "dask"; ``scheduler`` is the Dask cluster's address ("" = a local one)
    engine: str = "auto"
    scheduler: str = ""


#: The values of ``analysis.engine``.
ENGINE_CHOICES = tuple(e.value for e in Engine)


@dataclass(frozen=True)
class ProjectEvent:
    """A change to the project outside the diagram: ``proposed``, ``settings``
    or ``data``."""

    kind: str


class Project:
    """A diagram with its data reference and analysis settings."""

    def __init__(
        self,
        diagram: Diagram | None = None,
        data: DataRef | None = None,
        analysis: AnalysisSettings | None = None,
        path: Path | None = None,
    ) -> None:
        self.diagram = diagram if diagram is not None else Diagram()
        self.data = data
        self.analysis = analysis if analysis is not None else AnalysisSettings()
        self.path = path
        self._listeners: list[Callable[[ProjectEvent], None]] = []

    def subscribe(self, listener: Callable[[ProjectEvent], None]) -> None:
        self._listeners.append(listener)

    def unsubscribe(self, listener: Callable[[ProjectEvent], None]) -> None:
        if listener in self._listeners:
            self._listeners.remove(listener)

    def _emit(self, kind: str) -> None:
        for listener in list(self._listeners):
            listener(ProjectEvent(kind))

    @property
    def proposed(self) -> list[str]:
        return list(self.analysis.proposed)

    def set_proposed(self, ids: list[str]) -> None:
        for node_id in ids:
            node = self.diagram.node(node_id)
            if node.kind != "covariate":
                raise DiagramError(
                    f'"{node_id}" is the {node.kind}; only covariates go in the adjustment set.'
                )
        ordered = list(dict.fromkeys(ids))
        if ordered != self.analysis.proposed:
            self.analysis.proposed = ordered
            self._emit("proposed")

    def update_settings(self, **changes: Any) -> None:
        for key, value in changes.items():
            if not hasattr(self.analysis, key) or key == "proposed":
                raise CovariscopeError(f"Unknown analysis setting {key!r}.")
            if key == "family" and value not in FAMILY_NAMES:
                raise CovariscopeError(
                    f'"{value}" is not a model family; use one of {", ".join(FAMILY_NAMES)}.'
                )
            setattr(self.analysis, key, value)
        if changes:
            self._emit("settings")

    def set_data(self, data: DataRef | None) -> None:
        self.data = data
        self._emit("data")

    def data_path(self) -> Path | None:
        return self.data.resolve(self.path) if self.data else None


# -- reading -----------------------------------------------------------------------


class _Problems:
    def __init__(self) -> None:
        self.items: list[str] = []
        #: ids of nodes whose own entry was refused: links to them are not
        #: reported again as links to an unknown node
        self.refused_ids: set[str] = set()

    def add(self, where: str, what: str) -> None:
        self.items.append(f"{where}: {what}")


def _type_name(value: Any) -> str:
    return {
        bool: "true/false",
        int: "a number",
        float: "a number",
        str: "text",
        list: "a list",
        dict: "an object",
        type(None): "null",
    }.get(type(value), type(value).__name__)


def _expect(
    problems: _Problems, where: str, value: Any, kinds: tuple[type, ...], wanted: str
) -> bool:
    if isinstance(value, bool) and bool not in kinds:
        problems.add(where, f"expected {wanted}, found {_type_name(value)}")
        return False
    if not isinstance(value, kinds):
        problems.add(where, f"expected {wanted}, found {_type_name(value)}")
        return False
    return True


def project_from_dict(data: Any, path: Path | None = None) -> Project:
    """Build a project from its JSON form, or raise ProjectFileError listing
    every problem with where it is."""
    problems = _Problems()
    if not isinstance(data, dict):
        raise ProjectFileError(
            "This is not a Covariscope project: the file must hold a JSON object.",
        )
    if data.get("format") != FORMAT:
        raise ProjectFileError(
            f'This is not a Covariscope project: "format" must be "{FORMAT}".',
        )
    version = data.get("version")
    if not isinstance(version, int) or isinstance(version, bool):
        raise ProjectFileError("version: expected a whole number such as 1.")
    if version > FORMAT_VERSION:
        raise ProjectFileError(
            f"This project was saved by a newer Covariscope (file format version {version}; "
            f"this program reads up to version {FORMAT_VERSION}). Update Covariscope to open it."
        )
    if version < 1:
        raise ProjectFileError(f"version: {version} is not a valid file format version.")

    diagram = Diagram()
    raw_diagram = data.get("diagram")
    if not isinstance(raw_diagram, dict):
        problems.add("diagram", "missing or not an object")
        raw_diagram = {}
    _check_size(raw_diagram)
    _read_nodes(raw_diagram.get("nodes", []), diagram, problems)
    _read_links(raw_diagram.get("arrows", []), "arrows", ("from", "to"), diagram, problems)
    _read_links(raw_diagram.get("proxies", []), "proxies", ("a", "b"), diagram, problems)

    data_ref = None
    if data.get("data") is not None:
        data_ref = _read_data_ref(data["data"], problems)
    analysis = _read_analysis(data.get("analysis", {}), diagram, problems)

    if problems.items:
        raise ProjectFileError(
            "The project file has problems:\n" + "\n".join(f"  - {p}" for p in problems.items),
            problems.items,
        )
    return Project(diagram, data_ref, analysis, path)


def _read_nodes(raw: Any, diagram: Diagram, problems: _Problems) -> None:
    if not _expect(problems, "diagram.nodes", raw, (list,), "a list of nodes"):
        return
    for i, item in enumerate(raw):
        where = f"diagram.nodes[{i}]"
        if not _expect(problems, where, item, (dict,), "an object"):
            continue
        node_id = item.get("id")
        if not _expect(problems, f"{where}.id", node_id, (str,), "text"):
            continue
        ok = True
        kwargs: dict[str, Any] = {"id": node_id}
        specs: list[tuple[str, tuple[type, ...], str]] = [
            ("label", (str,), "text"),
            ("kind", (str,), "text"),
            ("measured", (bool,), "true or false"),
            ("x", (int, float), "a number"),
            ("y", (int, float), "a number"),
            ("note", (str,), "text"),
        ]
        for key, kinds, wanted in specs:
            if key in item:
                ok &= _expect(problems, f"{where}.{key}", item[key], kinds, wanted)
                kwargs[key] = item[key]
        if item.get("column") is not None:
            ok &= _expect(problems, f"{where}.column", item["column"], (str,), "text or null")
            kwargs["column"] = item["column"]
        if ok and kwargs.get("kind", "covariate") not in KINDS:
            problems.add(f"{where}.kind", f'"{kwargs["kind"]}" is not one of {", ".join(KINDS)}')
            ok = False
        if not ok:
            problems.refused_ids.add(node_id)
            continue
        for key in ("x", "y"):
            wrong = finite_number(kwargs.get(key, 0.0), -MAX_COORDINATE, MAX_COORDINATE)
            if wrong:
                problems.add(f"{where}.{key}", f"{wrong} (a position on the canvas)")
                ok = False
            elif key in kwargs:
                kwargs[key] = float(kwargs[key])
        if not ok:
            problems.refused_ids.add(node_id)
            continue
        try:
            diagram.add_node(Node(**kwargs))
        except DiagramError as exc:
            problems.refused_ids.add(node_id)
            problems.add(where, str(exc))


def _read_links(
    raw: Any, name: str, keys: tuple[str, str], diagram: Diagram, problems: _Problems
) -> None:
    if not _expect(problems, f"diagram.{name}", raw, (list,), "a list"):
        return
    pairs: list[tuple[int, str, str]] = []
    for i, item in enumerate(raw):
        where = f"diagram.{name}[{i}]"
        if not _expect(problems, where, item, (dict,), "an object"):
            continue
        ends = []
        for key in keys:
            value = item.get(key)
            if not _expect(problems, f"{where}.{key}", value, (str,), "a node id"):
                break
            if value not in diagram:
                if value not in problems.refused_ids:
                    problems.add(f"{where}.{key}", f'unknown node "{value}"')
                break
            ends.append(value)
        if len(ends) == 2:
            pairs.append((i, ends[0], ends[1]))
    links = [(a, b) for _, a, b in pairs]
    try:  # the whole list at once: one check for cycles (linear time)
        if name == "arrows":
            diagram.extend(arrows=links)
        else:
            diagram.extend(proxies=links)
    except DiagramError:
        _add_one_by_one(pairs, name, diagram, problems)


def _add_one_by_one(
    pairs: list[tuple[int, str, str]], name: str, diagram: Diagram, problems: _Problems
) -> None:
    """Add links one at a time, so that each refused one is named by its place."""
    for i, a, b in pairs:
        where = f"diagram.{name}[{i}]"
        ends = (a, b)
        try:
            if name == "arrows":
                diagram.add_arrow(ends[0], ends[1])
            else:
                diagram.add_proxy(ends[0], ends[1])
        except DiagramError as exc:
            problems.add(where, str(exc))


def _check_size(raw_diagram: dict[str, Any]) -> None:
    """Refuse a diagram far larger than any study's before reading it."""
    sizes = {
        key: len(value) if isinstance(value, list) else 0
        for key, value in raw_diagram.items()
        if key in ("nodes", "arrows", "proxies")
    }
    limits = {"nodes": MAX_NODES, "arrows": MAX_LINKS, "proxies": MAX_LINKS}
    for key, size in sizes.items():
        if size > limits[key]:
            raise ProjectFileError(
                f"The diagram has {size:,} {key[:-1] if key != 'proxies' else 'proxy link'}s; "
                f"Covariscope works with up to {limits[key]:,}. A causal diagram for one "
                "exposure and one outcome is far smaller: the file is damaged or was not "
                "made for this program."
            )


def _read_data_ref(raw: Any, problems: _Problems) -> DataRef | None:
    if not _expect(problems, "data", raw, (dict,), "an object"):
        return None
    path = raw.get("path")
    if not _expect(problems, "data.path", path, (str,), "text"):
        return None
    sha = raw.get("sha256")
    if sha is not None and not _expect(problems, "data.sha256", sha, (str,), "text"):
        sha = None
    return DataRef(path, sha)


def _read_analysis(raw: Any, diagram: Diagram, problems: _Problems) -> AnalysisSettings:
    settings = AnalysisSettings()
    if raw is None:
        return settings
    if not _expect(problems, "analysis", raw, (dict,), "an object"):
        return settings
    family = raw.get("family", "linear")
    if _expect(problems, "analysis.family", family, (str,), "text"):
        if family in FAMILY_NAMES:
            settings.family = family
        else:
            problems.add("analysis.family", f'"{family}" is not one of {", ".join(FAMILY_NAMES)}')
    proposed = raw.get("proposed", [])
    if _expect(problems, "analysis.proposed", proposed, (list,), "a list of node ids"):
        for i, node_id in enumerate(proposed):
            where = f"analysis.proposed[{i}]"
            if not _expect(problems, where, node_id, (str,), "a node id"):
                continue
            if node_id not in diagram:
                problems.add(where, f'unknown node "{node_id}"')
            elif diagram.node(node_id).kind != "covariate":
                problems.add(
                    where, f'"{node_id}" is the {diagram.node(node_id).kind}, not a covariate'
                )
            else:
                settings.proposed.append(node_id)
    thresholds = raw.get("thresholds", {})
    if _expect(problems, "analysis.thresholds", thresholds, (dict,), "an object"):
        for key, value in thresholds.items():
            where = f"analysis.thresholds.{key}"
            if key not in DEFAULT_THRESHOLDS:
                problems.add(where, f"unknown threshold; known: {', '.join(DEFAULT_THRESHOLDS)}")
            elif _expect(problems, where, value, (int, float), "a number"):
                high = 1.0 if key == "r2" else MAX_THRESHOLD
                wrong = finite_number(value, 0.0, high)
                if wrong:
                    problems.add(where, wrong)
                elif value <= 0 or (key == "r2" and value >= 1):
                    problems.add(
                        where, "must be positive" + (" and below 1" if key == "r2" else "")
                    )
                else:
                    settings.thresholds[key] = float(value)
    for key in ("column_types", "reference_levels", "keep_choices"):
        value = raw.get(key, {})
        if _expect(problems, f"analysis.{key}", value, (dict,), "an object"):
            for k, v in value.items():
                wanted: tuple[type, ...] = (
                    (str, int, float) if key == "reference_levels" else (str,)
                )
                if not _expect(problems, f"analysis.{key}.{k}", v, wanted, "text"):
                    continue
                wrong = finite_number(v, -math.inf, math.inf)
                if wrong:
                    problems.add(f"analysis.{key}.{k}", wrong)
                elif key == "keep_choices" and not _keep_choice_ok(k, v, diagram, problems):
                    continue
                else:
                    getattr(settings, key)[k] = v
    knots = raw.get("spline_knots", {})
    if _expect(problems, "analysis.spline_knots", knots, (dict,), "an object"):
        for column, k in knots.items():
            where = f"analysis.spline_knots.{column}"
            if isinstance(k, bool) or not isinstance(k, int) or not 3 <= k <= 7:
                problems.add(where, "must be a whole number of knots from 3 to 7")
            else:
                settings.spline_knots[column] = k
    family_columns = raw.get("family_columns", {})
    if _expect(problems, "analysis.family_columns", family_columns, (dict,), "an object"):
        for fam, cols in family_columns.items():
            where = f"analysis.family_columns.{fam}"
            if fam not in FAMILY_NAMES:
                problems.add(where, f"unknown family; use one of {', '.join(FAMILY_NAMES)}")
                continue
            if not _expect(problems, where, cols, (dict,), "an object"):
                continue
            clean: dict[str, str] = {}
            for role, col in cols.items():
                if role not in COLUMN_ROLES:
                    problems.add(
                        f"{where}.{role}", f"unknown; use one of {', '.join(COLUMN_ROLES)}"
                    )
                elif _expect(problems, f"{where}.{role}", col, (str,), "a column name"):
                    clean[role] = col
            settings.family_columns[fam] = clean
    engine = raw.get("engine", "auto")
    if _expect(problems, "analysis.engine", engine, (str,), "text"):
        if engine in ENGINE_CHOICES:
            settings.engine = engine
        else:
            problems.add("analysis.engine", f'"{engine}" is not one of {", ".join(ENGINE_CHOICES)}')
    scheduler = raw.get("scheduler", "")
    if _expect(
        problems, "analysis.scheduler", scheduler, (str,), "an address such as tcp://host:8786"
    ):
        settings.scheduler = scheduler
    _read_claim_settings(raw.get("diagram_checks", {}), settings, problems)
    return settings


def _read_claim_settings(raw: Any, settings: AnalysisSettings, problems: _Problems) -> None:
    if not _expect(problems, "analysis.diagram_checks", raw, (dict,), "an object"):
        return
    correction = raw.get("correction", "holm")
    where = "analysis.diagram_checks.correction"
    if _expect(problems, where, correction, (str,), "text"):
        codes = [c.value for c in Correction]
        if correction in codes:
            settings.claim_correction = correction
        else:
            problems.add(where, f'"{correction}" is not one of {", ".join(codes)}')
    limit = raw.get("limit", DEFAULT_CLAIM_LIMIT)
    where = "analysis.diagram_checks.limit"
    if _expect(problems, where, limit, (int,), "a whole number"):
        if isinstance(limit, bool) or limit < 1:
            problems.add(where, "must be a whole number of at least 1")
        else:
            settings.claim_limit = int(limit)


def _keep_choice_ok(key: str, member: str, diagram: Diagram, problems: _Problems) -> bool:
    """A saved keep-choice names covariates of the diagram, and its member is
    one of its group."""
    where = f"analysis.keep_choices.{key}"
    group = key.split("|")
    unknown = [m for m in group if m not in diagram or diagram.node(m).kind != "covariate"]
    if unknown:
        problems.add(where, f'the group names "{unknown[0]}", which is not a covariate here')
        return False
    if member not in group:
        problems.add(
            where,
            f'the kept member "{member}" is not in its group ({", ".join(group)}); '
            "choose one of them or remove the entry",
        )
        return False
    return True


def load_project(path: str | os.PathLike[str]) -> Project:
    """Read and validate a project file.

    Only a regular file is read, and only up to
    :data:`~covariscope.model.files.MAX_PROJECT_BYTES`; duplicate keys,
    non-finite or out-of-range numbers and over-deep nesting are reported
    with where they are.  Temporary files an interrupted save left beside
    the project are removed.
    """
    path = Path(path)
    raw = read_project_bytes(path)
    parsed = parse_project_json(raw, path.name)
    try:
        project = project_from_dict(parsed.value, path.resolve())
    except ProjectFileError as exc:
        if not parsed.duplicates:
            raise ProjectFileError(f"{path.name}: {exc}", exc.problems) from None
        found = [*parsed.duplicates, *exc.problems]
    else:
        found = list(parsed.duplicates)
        data_path = project.data_path()
        if data_path is not None and _same_file(data_path, path):
            found.append(
                "data.path: names the project file itself; choose the study's data file "
                "(a CSV, Excel, Parquet, Stata, SPSS or SAS file)"
            )
    if found:  # a repeated key first: it may explain the problems after it
        raise ProjectFileError(
            f"{path.name}: The project file has problems:\n" + "\n".join(f"  - {p}" for p in found),
            found,
        )
    remove_stale_temporaries(path.resolve())
    return project


def _same_file(a: Path, b: Path) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:  # a missing data file is said when the data are read
        return False


# -- writing -----------------------------------------------------------------------


def project_to_dict(project: Project) -> dict[str, Any]:
    """The project in its saved form (our versioned JSON schema), as plain data."""
    out: dict[str, Any] = {
        "format": FORMAT,
        "version": FORMAT_VERSION,
        "diagram": project.diagram.to_dict(),
    }
    if project.data is not None:
        out["data"] = {"path": project.data.path, "sha256": project.data.sha256}
    a = project.analysis
    out["analysis"] = {
        "family": a.family,
        "proposed": list(a.proposed),
        "thresholds": dict(a.thresholds),
        "column_types": dict(a.column_types),
        "reference_levels": dict(a.reference_levels),
        "family_columns": {k: dict(v) for k, v in a.family_columns.items()},
        "keep_choices": dict(a.keep_choices),
        "diagram_checks": {"correction": a.claim_correction, "limit": a.claim_limit},
    }
    if a.engine != "auto":
        out["analysis"]["engine"] = a.engine
    if a.scheduler:
        out["analysis"]["scheduler"] = a.scheduler
    if a.spline_knots:
        out["analysis"]["spline_knots"] = dict(a.spline_knots)
    return out


def _current_umask() -> int:
    """The process's umask (read by setting it and putting it back at once)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def file_mode_for(path: Path) -> int:
    """The permission bits a saved file should have: those of the file it
    replaces, else those of a newly created file (0666 less the umask), so
    co-authors on a shared folder keep their access.  (``mkstemp`` alone
    would leave the file readable by its owner only.)"""
    try:
        return stat.S_IMODE(os.stat(path).st_mode)
    except OSError:
        return 0o666 & ~_current_umask()


def write_atomically(path: Path, text: str) -> None:
    """Write a temporary file beside ``path`` and replace it in one step, so
    a crash never leaves a half-written file; the file keeps its mode."""
    path = Path(path)
    mode = file_mode_for(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with contextlib.suppress(OSError):  # a file system without modes
            os.chmod(tmp, mode)
        with os.fdopen(fd, "w", encoding="utf-8") as handle:
            handle.write(text)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise


def save_project(project: Project, path: str | os.PathLike[str] | None = None) -> Path:
    """Save atomically; the data path is stored relative to the project file
    where possible.  Returns the path written."""
    target = Path(path) if path is not None else project.path
    if target is None:
        raise ProjectFileError("The project has no file name yet; choose where to save it.")
    target = target.resolve()
    if project.data is not None:
        old_abs = project.data.resolve(project.path)  # symlinks kept as given
        try:
            rel = os.path.relpath(old_abs, target.parent)
        except ValueError:  # another drive on Windows
            rel = str(old_abs)
        project.data = DataRef(Path(rel).as_posix(), project.data.sha256)
    text = json.dumps(project_to_dict(project), indent=2, ensure_ascii=False) + "\n"
    remove_stale_temporaries(target)
    try:
        write_atomically(target, text)
    except OSError as exc:
        raise ProjectFileError(f"Could not save {target}: {exc.strerror or exc}.") from None
    project.path = target
    return target
