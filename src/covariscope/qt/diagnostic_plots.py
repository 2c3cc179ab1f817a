"""Draws the diagnostics dialogs' plots: the estimates across the models, the
covariate against the exposure, an endpoint's distribution.  What each plot
shows comes ready from :mod:`covariscope.views.plots`; this module only
chooses the marks (a colour-blind-safe palette, marker and hatch as well as
colour, never colour alone)."""

from __future__ import annotations

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from covariscope.views.plots import (
    BoxPicture,
    CountPicture,
    DataPicture,
    Distribution,
    EstimatesPicture,
    HistogramPicture,
    PlotMessage,
    ScatterPicture,
    SharesPicture,
)

__all__ = ["draw_data", "draw_distribution", "draw_estimates"]

#: A multi-level exposure's contrasts in the estimates plot: marker and colour
_CONTRAST_STYLES = (("s", "#0072B2"), ("o", "#D55E00"), ("^", "#009E73"), ("D", "#CC79A7"))
#: the exposure's levels in the stacked shares: colour and hatch
_SHARE_COLOURS = ("#56B4E9", "#E69F00", "#009E73", "#CC79A7")
_SHARE_HATCHES = ("", "//", "..", "xx")
_FILL, _EDGE = "#56B4E9", "#0072B2"


def _axes(fig: Figure) -> Axes:
    fig.clear()
    return fig.add_subplot()


def _message(ax: Axes, picture: PlotMessage) -> None:
    ax.text(0.5, 0.5, picture.text, ha="center", va="center", transform=ax.transAxes)
    ax.set_axis_off()


def draw_estimates(fig: Figure, picture: EstimatesPicture | PlotMessage) -> None:
    """Estimates with their CIs, one line per model; contrasts offset, each
    with its own marker, named in a legend."""
    ax = _axes(fig)
    if isinstance(picture, PlotMessage):
        _message(ax, picture)
        return
    for k, series in enumerate(picture.series):
        est = np.array(series.estimates)
        marker, colour = _CONTRAST_STYLES[k % len(_CONTRAST_STYLES)]
        ax.errorbar(
            est,
            list(series.ys),
            xerr=[est - np.array(series.lows), np.array(series.highs) - est],
            fmt=marker,
            color=colour,
            capsize=3,
            label=series.contrast or None,
        )
    ax.set_yticks([y for y, _ in picture.ticks], [m for _, m in picture.ticks])
    if picture.legend:
        ax.legend(fontsize=7, loc="best")
    ax.axvline(picture.null, color="#5A5A5A", lw=0.8, ls="--")
    if picture.log_scale:
        ax.set_xscale("log")
    ax.set_xlabel(picture.x_label)
    ax.set_title(picture.title, fontsize=10)


def _boxes(ax: Axes, picture: BoxPicture) -> None:
    ax.boxplot(
        list(picture.groups),
        tick_labels=list(picture.tick_labels),
        patch_artist=True,
        boxprops={"facecolor": _FILL, "edgecolor": _EDGE},
        medianprops={"color": "#000000", "linewidth": 1.6},
        whiskerprops={"color": _EDGE},
        capprops={"color": _EDGE},
        flierprops={"marker": ".", "markersize": 3, "markeredgecolor": _EDGE},
    )
    ax.tick_params(axis="x", labelsize=8)


def _shares(ax: Axes, picture: SharesPicture) -> None:
    bottom = np.zeros(len(picture.categories))
    for i, (label, shares) in enumerate(picture.stacks):
        ax.bar(
            list(picture.categories),
            shares,
            bottom=bottom,
            label=label,
            color=_SHARE_COLOURS[i % len(_SHARE_COLOURS)],
            hatch=_SHARE_HATCHES[i % len(_SHARE_HATCHES)],
            edgecolor="white",
        )
        bottom += np.array(shares)
    # The legend (the exposure's levels, under its name) sits in a band above
    # the bars, which end at a share of 1, so that it never covers them.
    columns = max(min(len(picture.stacks), 4), 1)
    lines = 1 + -(-len(picture.stacks) // columns)
    ax.set_ylim(0.0, 1.0 + 0.1 * lines)
    ax.set_yticks([0.0, 0.25, 0.5, 0.75, 1.0])
    ax.legend(
        fontsize=8,
        title=picture.legend_title,
        title_fontsize=8,
        loc="upper center",
        ncol=columns,
        frameon=False,
    )


def draw_data(fig: Figure, picture: DataPicture) -> None:
    """The covariate against the exposure: boxes, stacked shares or a scatter."""
    ax = _axes(fig)
    if isinstance(picture, PlotMessage):
        _message(ax, picture)
        return
    if isinstance(picture, BoxPicture):
        _boxes(ax, picture)
    elif isinstance(picture, SharesPicture):
        _shares(ax, picture)
    else:
        _scatter(ax, picture)
    ax.set_xlabel(picture.x_label)
    ax.set_ylabel(picture.y_label)
    ax.set_title(picture.title, fontsize=10)


def _scatter(ax: Axes, picture: ScatterPicture) -> None:
    ax.scatter(picture.x, picture.y, s=6, alpha=0.35, color=_EDGE, edgecolors="none")


def draw_distribution(fig: Figure, picture: Distribution) -> None:
    """An endpoint's distribution: bars of counts or a histogram."""
    ax = _axes(fig)
    if isinstance(picture, PlotMessage):
        _message(ax, picture)
        return
    if isinstance(picture, CountPicture):
        ax.bar(list(picture.values), list(picture.counts), color=_FILL, edgecolor=_EDGE)
    else:
        draw_histogram(ax, picture)
    ax.set_ylabel(picture.y_label)
    ax.set_xlabel(picture.x_label)
    ax.set_title(picture.title, fontsize=10)


def draw_histogram(ax: Axes, picture: HistogramPicture) -> None:
    """A histogram in the dialog's colours."""
    ax.hist(picture.values, bins=picture.bins, color=_FILL, edgecolor=_EDGE)
