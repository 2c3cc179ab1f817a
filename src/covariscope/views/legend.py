"""The canvas legend: every shape, frame and line style the diagram draws,
with its meaning (pure data; ``qt/legend.py`` paints each sample with the
canvas's own drawing code, so the legend cannot drift from the canvas).

Kinds and roles read their words from the vocabulary; the marks that are the
canvas's own (frames, badges, line styles) are described here, once.
"""

from __future__ import annotations

from dataclasses import dataclass

from covariscope.vocabulary import KIND_TERMS, ROLE_TERMS, Kind

__all__ = ["LegendEntry", "LegendSection", "legend_sections"]


@dataclass(frozen=True)
class LegendEntry:
    """One sample and its meaning.

    ``sample`` says what to draw: ``"node"`` (a node drawn with the fields
    below), ``"arrow"``, ``"path_arrow"`` (an arrow on a highlighted path),
    ``"proxy"`` or ``"suggestion"``.
    """

    sample: str
    title: str
    words: str
    kind: str = Kind.COVARIATE.value
    role: str | None = None
    measured: bool = True
    bound: bool = True
    proposed: bool = False
    verdict: str | None = None
    highlighted: bool = False
    selected: bool = False


@dataclass(frozen=True)
class LegendSection:
    """A heading and its entries."""

    title: str
    entries: tuple[LegendEntry, ...]


def _kinds() -> LegendSection:
    shapes = {
        Kind.EXPOSURE: "pointed at its effects",
        Kind.OUTCOME: "notched to receive the exposure",
        Kind.COVARIATE: "a rounded capsule",
    }
    return LegendSection(
        "Node shapes",
        tuple(
            LegendEntry(
                "node",
                KIND_TERMS[k].label.capitalize(),
                f"{KIND_TERMS[k].explanation} Shape: {shapes[k]}.",
                kind=k.value,
            )
            for k in Kind
        ),
    )


def _roles() -> LegendSection:
    return LegendSection(
        "Role marks (after an analysis; the role also reads above the label)",
        tuple(
            LegendEntry("node", t.label.capitalize(), t.explanation, role=r.value)
            for r, t in ROLE_TERMS.items()
        ),
    )


def _frames() -> LegendSection:
    return LegendSection(
        "Frames and marks",
        (
            LegendEntry(
                "node",
                "Boxed",
                "In the proposed set: the covariate is adjusted for (a textbook convention).",
                proposed=True,
            ),
            LegendEntry(
                "node",
                "Dashed outline, grey fill",
                "Not measured: no data, so it cannot be adjusted for.",
                measured=False,
            ),
            LegendEntry(
                "node",
                "Slashed ring",
                "Measured, but not yet bound to a data column.",
                bound=False,
            ),
            LegendEntry(
                "node",
                "Verdict chip",
                "The verdict under the node, in short; the review table gives it in full.",
                verdict="Adjust",
            ),
            LegendEntry(
                "node",
                "Thick outline in the path colour",
                "On the backdoor path chosen in the list of open paths.",
                highlighted=True,
            ),
            LegendEntry("node", "Halo", "Selected: edits and commands act on it.", selected=True),
        ),
    )


def _lines() -> LegendSection:
    return LegendSection(
        "Lines",
        (
            LegendEntry("arrow", "Solid arrow", "Cause → effect, as drawn by the analyst."),
            LegendEntry(
                "path_arrow",
                "Thick arrow in the path colour",
                "An arrow of the backdoor path chosen in the list of open paths.",
            ),
            LegendEntry(
                "proxy",
                "Double dashed line with ≈",
                "Proxy link: the two are measures of the same thing; not a cause.",
            ),
            LegendEntry(
                "suggestion",
                "Dotted bow with ?",
                "A link the data suggest the diagram may lack (a failed independence claim); "
                "a hint to check, never proof.",
            ),
        ),
    )


def legend_sections() -> tuple[LegendSection, ...]:
    """Every section of the legend, in reading order.

    >>> [s.title for s in legend_sections()][0]
    'Node shapes'
    >>> sum(len(s.entries) for s in legend_sections())
    22
    """
    return (_kinds(), _roles(), _frames(), _lines())
