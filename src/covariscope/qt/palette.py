"""Colours and shapes of the diagram, chosen for this program.

Colours come from the Okabe–Ito set, which stays distinguishable under the
common forms of colour-vision deficiency (M. Okabe and K. Ito, "Color
Universal Design", 2008).  Colour is never the only cue: every kind and role
also has its own shape and a text tag, so a grey-scale print reads the same.
"""

from __future__ import annotations

from PySide6.QtGui import QColor

__all__ = [
    "BODY_SHAPES",
    "INK",
    "ROLE_GLYPHS",
    "colour",
    "kind_fill",
    "kind_outline",
    "role_colour",
]

#: The Okabe–Ito colours by name.
OKABE_ITO: dict[str, str] = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish_purple": "#CC79A7",
}

#: What each colour is used for on the canvas.
INK: dict[str, str] = {
    "text": "#1F1F1F",
    "muted": "#5A5A5A",
    "arrow": "#3A3A3A",
    "frame": "#1F1F1F",  # the adjusted-for box
    "selection": OKABE_ITO["blue"],
    "path": OKABE_ITO["vermillion"],  # a highlighted backdoor path
    "proxy": OKABE_ITO["bluish_green"],
    "suggestion": "#A2457E",  # Okabe–Ito reddish purple, darkened: a link the data suggest
    "badge_fill": "#FFFFFF",
    "badge_edge": "#7A7A7A",
    "background": "#FBFBF8",
    "unmeasured_fill": "#F1F1EE",
}

_KIND_FILL = {"exposure": "#FBE7BF", "outcome": "#F3DCE9", "covariate": "#FFFFFF"}
_KIND_OUTLINE = {"exposure": "#9A6A00", "outcome": "#93527A", "covariate": "#4A4A4A"}

#: Body outline per kind: the exposure points forward (rightwards, towards
#: its effects), the outcome receives it in a notch, covariates are capsules.
BODY_SHAPES: dict[str, str] = {
    "exposure": "pointed",
    "outcome": "notched",
    "covariate": "capsule",
}

#: A glyph per role, drawn at the left of the node: the role reads by shape
#: as well as by its tag.
ROLE_GLYPHS: dict[str, str] = {
    "confounder": "triangle_up",
    "mediator": "diamond",
    "collider": "cross",
    "instrument": "ring",
    "precision": "plus",
    "confounder_proxy": "half_square",
    "descendant_of_exposure": "triangle_down",
    "descendant_of_outcome": "triangle_down",
    "unrelated": "dot",
}

_ROLE_COLOUR = {
    "confounder": OKABE_ITO["vermillion"],
    "mediator": OKABE_ITO["blue"],
    "collider": OKABE_ITO["reddish_purple"],
    "instrument": OKABE_ITO["orange"],
    "precision": OKABE_ITO["bluish_green"],
    "confounder_proxy": OKABE_ITO["sky_blue"],
    "descendant_of_exposure": "#5A5A5A",
    "descendant_of_outcome": "#5A5A5A",
    "unrelated": "#9A9A9A",
}


def colour(name: str) -> QColor:
    """A canvas colour by its use (see :data:`INK`) or an Okabe–Ito name."""
    return QColor(INK.get(name) or OKABE_ITO[name])


def kind_fill(kind: str, measured: bool = True) -> QColor:
    return QColor(_KIND_FILL.get(kind, "#FFFFFF") if measured else INK["unmeasured_fill"])


def kind_outline(kind: str) -> QColor:
    return QColor(_KIND_OUTLINE.get(kind, "#4A4A4A"))


def role_colour(role: str) -> QColor:
    return QColor(_ROLE_COLOUR.get(role, "#5A5A5A"))
