"""The collinearity picture of the diagnostics dialog, as plain data and words.

For each collinear group (or near-alias of the exposure) that holds the
node: the joint 95 % confidence ellipse of two members' coefficients, the
line of constant sum through its centre, the interval of the sum beside
each member's own interval, and one sentence saying what they show.  The
numbers come from :mod:`covariscope.analysis.joint_region`; this module
only names and formats them.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from covariscope.analysis.families import family_of
from covariscope.analysis.joint_region import CollinearityPicture
from covariscope.views.format import number

__all__ = ["INTERVALS_TITLE", "NO_GROUP", "PictureView", "picture_views"]

#: What the collinearity plot says for a covariate in no collinear group.
NO_GROUP = "This covariate is in no collinear group,\nso there is no joint region to draw."
#: The title over the intervals beside the joint region.
INTERVALS_TITLE = "Each one's interval and their sum's"


@dataclass(frozen=True)
class PictureView:
    """What the dialog draws for one picture.

    ``outline`` is the ellipse (x, y); the line of constant sum is
    ``x + y = pair_sum``; ``intervals`` are (label, estimate, low, high),
    each member's own first and the sum last.
    """

    title: str
    x_label: str
    y_label: str
    outline: tuple[tuple[float, float], ...]
    center: tuple[float, float]
    pair_sum: float
    intervals: tuple[tuple[str, float, float, float], ...]
    interval_label: str
    sentence: str


def _axis(name: str, scale: float, per_sd: bool) -> str:
    unit = " per SD" if per_sd else ""
    sign = "−" if scale < 0 else ""
    return f"{sign}{name}{unit}"


def _sentence(pic: CollinearityPicture, names: list[str]) -> str:
    total = pic.total
    together = " and ".join(names) if len(names) == 2 else ", ".join(names)
    moving = " (per SD of each, as they move together in the data)" if pic.per_sd else ""
    return (
        f"Together, {together} carry an effect of {number(total.estimate)}{moving}, "
        f"95% CI {number(total.ci[0])} to {number(total.ci[1])}: an interval "
        f"{number(total.width_ratio, 1)} times narrower than the narrowest of their own. "
        "The data fix what they carry together, not how it splits between them (the "
        "ellipse lies along the line of constant sum), which is why each one's standard "
        "error is large."
    )


def picture_views(
    pictures: tuple[CollinearityPicture, ...], node: str, labels: Mapping[str, str]
) -> tuple[PictureView, ...]:
    """One view per picture that holds ``node``, its pair with ``node`` drawn.

    >>> picture_views((), "a", {})
    ()
    """
    views = []
    for pic in pictures:
        if node not in pic.members:
            continue
        names = [labels.get(m, m) for m in pic.members]
        pair = next(p for p in pic.pairs if node in p.members)
        i, j = (pic.members.index(m) for m in pair.members)
        log_scale = family_of(pic.family).ratio
        own = [
            (("−" if pic.scale[k] < 0 else "") + names[k], b, lo, hi)
            for k, (b, _, lo, hi) in enumerate(pic.total.own)
        ]
        views.append(
            PictureView(
                title=("Log-scale coefficients" if log_scale else "Coefficients")
                + ": joint 95% region",
                x_label=_axis(names[i], pic.scale[i], pic.per_sd),
                y_label=_axis(names[j], pic.scale[j], pic.per_sd),
                outline=pair.outline,
                center=pair.center,
                pair_sum=pair.total,
                intervals=(*own, ("Sum", pic.total.estimate, *pic.total.ci)),
                interval_label=("log-scale " if log_scale else "")
                + "coefficient"
                + (" per SD" if pic.per_sd else "")
                + " with 95% CI",
                sentence=_sentence(pic, names),
            )
        )
    return tuple(views)
