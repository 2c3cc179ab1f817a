"""Draws the forest plot of the exposure's effect across levels of a covariate
(effect modification).  The points come ready from
:mod:`covariscope.views.modification`; this module only draws."""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from covariscope.views.modification import NOT_EXAMINED, ModificationView

__all__ = ["draw_modification"]


def draw_modification(fig: Figure, view: ModificationView | None) -> None:
    """Draw ``view`` into ``fig`` (a note when there is nothing to draw)."""
    fig.clear()
    ax = fig.add_subplot()
    if view is None:
        ax.text(
            0.5,
            0.5,
            NOT_EXAMINED,
            ha="center",
            va="center",
            transform=ax.transAxes,
        )
        ax.set_axis_off()
        return
    ys = np.arange(len(view.points))[::-1]
    est = np.array([p[1] for p in view.points])
    lo = np.array([p[2] for p in view.points])
    hi = np.array([p[3] for p in view.points])
    ax.errorbar(est, ys, xerr=[est - lo, hi - est], fmt="D", color="#009E73", capsize=4)
    ax.set_yticks(ys, list(view.tick_labels), fontsize=8)
    ax.axvline(view.null, color="#5A5A5A", lw=0.8, ls="--")
    if view.ratio:
        ax.set_xscale("log")
    ax.set_xlabel(view.axis_label, fontsize=8)
    ax.set_title(view.title, fontsize=9)
    ax.tick_params(axis="x", labelsize=7)
