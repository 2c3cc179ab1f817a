"""Draws the collinearity picture: the joint confidence ellipse of two
coefficients with the line of constant sum, beside the interval of their sum
against each one's own interval.  The numbers come ready from
:mod:`covariscope.views.joint_picture`; this module only draws."""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from covariscope.views.joint_picture import INTERVALS_TITLE, NO_GROUP, PictureView

__all__ = ["draw_picture"]

_ELLIPSE = "#0072B2"
_SUM = "#D55E00"
_OWN = "#5A5A5A"


def draw_picture(fig: Figure, view: PictureView | None) -> None:
    """Draw ``view`` into ``fig`` (a note when there is nothing to draw)."""
    fig.clear()
    if view is None:
        ax = fig.add_subplot()
        ax.text(
            0.5,
            0.5,
            NO_GROUP,
            ha="center",
            va="center",
            transform=ax.transAxes,
        )
        ax.set_axis_off()
        return
    ellipse, intervals = fig.subplots(1, 2, width_ratios=(1.1, 1.0))
    outline = np.asarray(view.outline)
    ellipse.fill(outline[:, 0], outline[:, 1], color=_ELLIPSE, alpha=0.18, lw=0)
    ellipse.plot(outline[:, 0], outline[:, 1], color=_ELLIPSE, lw=1.5, label="joint 95% region")
    ellipse.plot(*view.center, marker="+", color=_ELLIPSE, ms=9)
    x_lo, x_hi = outline[:, 0].min(), outline[:, 0].max()
    pad = 0.15 * (x_hi - x_lo)
    xs = np.array([x_lo - pad, x_hi + pad])
    ellipse.plot(xs, view.pair_sum - xs, color=_SUM, ls="--", lw=1.2, label="constant sum")
    y_lo, y_hi = outline[:, 1].min(), outline[:, 1].max()
    ypad = 0.15 * (y_hi - y_lo)
    ellipse.set_xlim(xs[0], xs[1])
    ellipse.set_ylim(y_lo - ypad, y_hi + ypad)
    ellipse.axhline(0.0, color="#BBBBBB", lw=0.6)
    ellipse.axvline(0.0, color="#BBBBBB", lw=0.6)
    ellipse.set_xlabel(view.x_label, fontsize=8)
    ellipse.set_ylabel(view.y_label, fontsize=8)
    ellipse.legend(fontsize=7, loc="best")
    ellipse.set_title(view.title, fontsize=9)
    ellipse.tick_params(labelsize=7)

    ys = np.arange(len(view.intervals))[::-1]
    est = np.array([i[1] for i in view.intervals])
    lo = np.array([i[2] for i in view.intervals])
    hi = np.array([i[3] for i in view.intervals])
    colors = [_OWN] * (len(view.intervals) - 1) + [_SUM]
    for y, e, a, b, c in zip(ys, est, lo, hi, colors, strict=True):
        intervals.errorbar(e, y, xerr=[[e - a], [b - e]], fmt="o", color=c, capsize=4)
    intervals.set_yticks(ys, [i[0] for i in view.intervals], fontsize=8)
    intervals.axvline(0.0, color="#BBBBBB", lw=0.6)
    intervals.set_xlabel(view.interval_label, fontsize=8)
    intervals.set_title(INTERVALS_TITLE, fontsize=9)
    intervals.tick_params(labelsize=7)
