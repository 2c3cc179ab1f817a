"""What the diagnostics dialogs' plots show, as plain numbers and words.

For a covariate: the exposure estimate across the comparison models (one
line per model, a multi-level exposure's contrasts side by side), and the
covariate against the exposure in the rows the models used — boxes by level
when one of the two is categorical, stacked shares when both are, else a
scatter — sampled to at most :data:`MAX_POINTS` rows with a fixed seed.  For
the exposure or the outcome: its distribution.  Each picture is a frozen
dataclass; :mod:`covariscope.qt.diagnostics` only draws it (colours, markers).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TypeGuard

import numpy as np
import numpy.typing as npt
import pandas as pd

from covariscope.data.profile import ColumnProfile
from covariscope.data.sample import AnalyticSample, CompleteCases
from covariscope.model.project import Project
from covariscope.views.diagnostics import EndpointDiagnostics, NodeDiagnostics
from covariscope.views.format import ratio_family

__all__ = [
    "MAX_POINTS",
    "BoxPicture",
    "CountPicture",
    "EstimatesPicture",
    "ForestSeries",
    "HistogramPicture",
    "PlotMessage",
    "ScatterPicture",
    "SharesPicture",
    "analysed_rows",
    "column_type",
    "covariate_heading",
    "data_picture",
    "distribution_picture",
    "endpoint_heading",
    "estimates_caption",
    "estimates_picture",
    "holds_a_random_sample",
    "plot_path",
    "reference_first",
    "sample_picture",
]

#: the most rows the covariate-against-exposure plot draws (a random sample past it)
MAX_POINTS = 3000
#: a column with at most this many distinct values is drawn as bars of counts
FEW_VALUES = 10
#: the room one model's line gives its contrasts, in line heights
_CONTRAST_ROOM = 0.6

Profiles = Mapping[str, ColumnProfile] | None
Numbers = npt.NDArray[np.float64]


@dataclass(frozen=True)
class PlotMessage:
    """Nothing to draw: a sentence in the middle of the plot instead."""

    text: str


@dataclass(frozen=True)
class ForestSeries:
    """One contrast's estimates across the models ("" for a one-column exposure)."""

    contrast: str
    #: vertical position of each point (its model's line, offset by contrast)
    ys: tuple[float, ...]
    estimates: tuple[float, ...]
    lows: tuple[float, ...]
    highs: tuple[float, ...]


@dataclass(frozen=True)
class EstimatesPicture:
    """The exposure estimate with its 95% CI across the comparison models."""

    series: tuple[ForestSeries, ...]
    #: (position, model name) of each line, top line first
    ticks: tuple[tuple[float, str], ...]
    #: the no-effect line: 1 for a ratio, 0 for a difference
    null: float
    log_scale: bool
    x_label: str
    title: str

    @property
    def legend(self) -> bool:
        """A legend names the contrasts when there are several."""
        return len(self.series) > 1


@dataclass(frozen=True)
class BoxPicture:
    """A continuous variable's distribution by level of a categorical one."""

    groups: tuple[npt.NDArray[np.generic], ...]
    #: each level, "(reference)" under the reference, and its complete rows
    tick_labels: tuple[str, ...]
    x_label: str
    y_label: str
    title: str


@dataclass(frozen=True)
class SharesPicture:
    """Stacked shares of the exposure's levels within each covariate level."""

    categories: tuple[str, ...]
    #: (exposure level, share in each category) per exposure level
    stacks: tuple[tuple[str, tuple[float, ...]], ...]
    x_label: str
    y_label: str
    title: str
    #: what the levels in the legend are levels of (the exposure)
    legend_title: str = ""


@dataclass(frozen=True)
class ScatterPicture:
    """The covariate (x) against the exposure (y), one point per row."""

    x: npt.NDArray[np.generic]
    y: npt.NDArray[np.generic]
    x_label: str
    y_label: str
    title: str


@dataclass(frozen=True)
class CountPicture:
    """Rows per value of a column with few values."""

    values: tuple[str, ...]
    counts: tuple[int, ...]
    x_label: str
    y_label: str
    title: str


@dataclass(frozen=True)
class HistogramPicture:
    """A continuous column's histogram."""

    values: Numbers
    bins: int
    x_label: str
    y_label: str
    title: str


DataPicture = BoxPicture | SharesPicture | ScatterPicture | PlotMessage
Distribution = CountPicture | HistogramPicture | PlotMessage


def estimates_picture(s: NodeDiagnostics, family: str) -> EstimatesPicture | PlotMessage:
    """The forest plot of ``s``'s comparison models under ``family``."""
    points = [(m.point, m.contrast) for m in s.models if m.point is not None]
    if not points:
        return PlotMessage("No fitted models yet")
    models = list(dict.fromkeys(p[0] for p, _ in points))
    contrasts = list(dict.fromkeys(c for _, c in points))
    lines = {m: float(len(models) - 1 - i) for i, m in enumerate(models)}
    step = _CONTRAST_ROOM / len(contrasts)
    series = []
    for k, contrast in enumerate(contrasts):
        mine = [p for p, c in points if c == contrast]
        offset = (k - (len(contrasts) - 1) / 2) * step if len(contrasts) > 1 else 0.0
        series.append(
            ForestSeries(
                contrast,
                tuple(lines[p[0]] + offset for p in mine),
                tuple(p[1] for p in mine),
                tuple(p[2] for p in mine),
                tuple(p[3] for p in mine),
            )
        )
    ratio = ratio_family(family)
    return EstimatesPicture(
        tuple(series),
        tuple((y, m) for m, y in lines.items()),
        1.0 if ratio else 0.0,
        ratio,
        f"{s.effect_measure or 'coefficient'} with 95% CI",
        "Exposure estimate across the models",
    )


def holds_a_random_sample(
    sample: CompleteCases | AnalyticSample | None, frame: object
) -> TypeGuard[AnalyticSample]:
    """True when ``frame`` is the analytic sample's random sample of rows (only
    a sample read from a source that keeps its rows where they lie holds one)."""
    return isinstance(sample, AnalyticSample) and sample.frame_is_sample and frame is sample.frame


def analysed_rows(
    sample: CompleteCases | AnalyticSample | None,
    frame: pd.DataFrame | None,
    s: NodeDiagnostics,
) -> pd.DataFrame | None:
    """The rows the models used (the analytic sample) when it holds both
    columns of the plot, so the picture shows what the numbers came from;
    else the loaded file."""
    wanted = {s.exposure_column, s.column}
    if sample is None or frame is None or None in wanted or not wanted <= set(sample.columns):
        return frame
    return sample.rows_of(frame)


def column_type(project: Project, profiles: Profiles, column: str) -> str:
    """The type the project sets for ``column``, else the profile's ("" unknown)."""
    profile = (profiles or {}).get(column)
    return project.analysis.column_types.get(column) or (profile.type if profile else "")


def _reference_of(project: Project, profiles: Profiles, column: str) -> object:
    saved = project.analysis.reference_levels.get(column)
    if saved is not None:
        return saved
    profile = (profiles or {}).get(column)
    return profile.reference if profile is not None else None


def reference_first(
    project: Project, profiles: Profiles, column: str, values: pd.Series
) -> list[object]:
    """The levels in the order the models compare them: the reference level
    first, then the others as sorted text."""
    levels: list[object] = sorted(values.unique(), key=str)
    ref = _reference_of(project, profiles, column)
    first = [lv for lv in levels if ref is not None and str(lv) == str(ref)]
    return first + [lv for lv in levels if lv not in first]


def _box_labels(levels: Sequence[object], ref: object, all_values: pd.Series) -> tuple[str, ...]:
    """Each level named with its row count (of every complete row, not just
    those plotted), the reference marked."""
    counts = all_values.astype(str).value_counts()
    labels = []
    for lv in levels:
        mark = "\n(reference)" if ref is not None and str(lv) == str(ref) else ""
        labels.append(f"{lv}{mark}\nn = {int(counts.get(str(lv), 0)):,}")
    return tuple(labels)


def _boxes(
    data: pd.DataFrame,
    complete: pd.DataFrame,
    by: str,
    of: str,
    names: tuple[str, str],
    context: tuple[Project, Profiles, str],
) -> BoxPicture:
    """``of`` by level of ``by``; ``names`` are the (x, y) axis labels."""
    project, profiles, title = context
    levels = reference_first(project, profiles, by, data[by])
    groups = tuple(data.loc[data[by] == lv, of].to_numpy() for lv in levels)
    labels = _box_labels(levels, _reference_of(project, profiles, by), complete[by])
    return BoxPicture(groups, labels, names[0], names[1], title)


def _shares(
    data: pd.DataFrame,
    xcol: str,
    ccol: str,
    s: NodeDiagnostics,
    x_name: str,
    context: tuple[Project, Profiles, str],
) -> SharesPicture:
    """The exposure's levels stacked within each covariate level, both in the
    order the models compare them (reference first), as the boxes are."""
    project, profiles, title = context
    table = data.groupby([ccol, xcol]).size().unstack(fill_value=0)
    table = table.reindex(
        index=reference_first(project, profiles, ccol, data[ccol]),
        columns=reference_first(project, profiles, xcol, data[xcol]),
        fill_value=0,
    )
    shares = table.div(table.sum(axis=1), axis=0)
    stacks = tuple((str(col), tuple(float(v) for v in shares[col])) for col in shares.columns)
    return SharesPicture(
        tuple(str(v) for v in shares.index),
        stacks,
        s.label,
        f"share by {x_name}",
        title,
        legend_title=x_name,
    )


def sample_picture(
    s: NodeDiagnostics,
    project: Project,
    profiles: Profiles,
    frame: pd.DataFrame | None,
    sample: CompleteCases | AnalyticSample | None,
) -> DataPicture:
    """The covariate against the exposure in the rows the models used: the
    analytic sample's rows of ``frame`` (counted against the whole analytic
    sample when ``frame`` holds only a random sample of it)."""
    rows = analysed_rows(sample, frame, s)
    of_rows = sample.used if holds_a_random_sample(sample, rows) else None
    return data_picture(s, project, profiles, rows, of_rows)


def data_picture(
    s: NodeDiagnostics,
    project: Project,
    profiles: Profiles,
    frame: pd.DataFrame | None,
    of_rows: int | None = None,
) -> DataPicture:
    """The covariate against the exposure in ``frame``'s complete rows.

    ``of_rows``: the analytic sample's size when ``frame`` holds only a random
    sample of it (the title then counts against it)."""
    xcol, ccol = s.exposure_column, s.column
    if frame is None or not xcol or not ccol or xcol not in frame or ccol not in frame:
        return PlotMessage("Bind the exposure and this covariate\nto data to see them together")
    complete = frame[[xcol, ccol]].dropna()
    data = complete
    if len(data) > MAX_POINTS:
        data = data.sample(MAX_POINTS, random_state=0)  # a fixed seed: the same picture each time
    title = f"{s.label} against the exposure"
    every = of_rows or len(complete)
    if len(data) < every:
        title += f"\nrandom sample of {len(data):,} of {every:,} rows"
    x_cat = column_type(project, profiles, xcol) in ("binary", "categorical")
    x_name = s.exposure_label or xcol
    context = (project, profiles, title)
    if s.categorical and not x_cat:
        return _boxes(data, complete, ccol, xcol, (s.label, x_name), context)
    if x_cat and not s.categorical:
        return _boxes(data, complete, xcol, ccol, (x_name, s.label), context)
    if x_cat and s.categorical:
        return _shares(data, xcol, ccol, s, x_name, context)
    return ScatterPicture(data[ccol].to_numpy(), data[xcol].to_numpy(), s.label, x_name, title)


def distribution_picture(
    s: EndpointDiagnostics,
    project: Project,
    profiles: Profiles,
    frame: pd.DataFrame | None,
    sample: CompleteCases | AnalyticSample | None = None,
) -> Distribution:
    """The exposure's or outcome's distribution: counts for a categorical
    column or one with few values, else a 40-bin histogram."""
    if frame is None or not s.column or s.column not in frame:
        return PlotMessage("No data bound")
    values = frame[s.column].dropna()
    title = f"Distribution of {s.label}"
    if holds_a_random_sample(sample, frame):
        title += f"\nrandom sample of {len(values):,} of {sample.used:,} rows"
    kind = column_type(project, profiles, s.column)
    if kind in ("binary", "categorical") or values.nunique() <= FEW_VALUES:
        counts = values.value_counts().sort_index()
        return CountPicture(
            tuple(str(v) for v in counts.index),
            tuple(int(c) for c in counts.to_numpy()),
            s.column,
            "rows",
            title,
        )
    return HistogramPicture(values.to_numpy(dtype=float), 40, s.column, "rows", title)


def covariate_heading(s: NodeDiagnostics) -> str:
    """The covariate dialog's heading: its label and the column it reads."""
    column = f" (column {s.column})" if s.column else " (no column)"
    return f"{s.label} — covariate{column}"


def endpoint_heading(s: EndpointDiagnostics) -> str:
    """The exposure's or outcome's dialog heading, with the column it reads."""
    return s.title + (f" (column {s.column})" if s.column else "")


def estimates_caption(s: NodeDiagnostics, sample: CompleteCases | AnalyticSample | None) -> str:
    """Under the comparison models: the effect measure and the rows every model used."""
    if not s.effect_measure:
        return ""
    caption = f"Estimates: {s.effect_measure}"
    if sample is not None:
        caption += f"; the same {sample.used:,} rows in every model."
    return caption


def plot_path(target: Path, plot: str) -> Path:
    """Where one plot of a dialog is saved when the user chose ``target``:
    beside it, ``<stem>-<plot><suffix>`` (PNG when ``target`` names no type)."""
    return target.with_name(f"{target.stem}-{plot}{target.suffix or '.png'}")
