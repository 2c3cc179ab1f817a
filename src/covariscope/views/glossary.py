"""The glossary: roles, verdicts, every review-table column with the formula
behind its number, the guides and the concepts, all read from the vocabulary
(``qt/glossary.py`` shows it; F1 opens it)."""

from __future__ import annotations

import html
from dataclasses import dataclass

from covariscope.vocabulary import (
    CHANGE_SIGN,
    CHANGE_SIGN_RATIO,
    CONCEPT_TERMS,
    FAMILY_TERMS,
    REVIEW_COLUMN_TERMS,
    ROLE_TERMS,
    THRESHOLD_TERMS,
    VERDICT_TERMS,
    ReviewColumn,
)

__all__ = ["GlossaryEntry", "GlossarySection", "glossary_html", "glossary_sections"]


@dataclass(frozen=True)
class GlossaryEntry:
    """One term: its name, what it means, and (for a number) how it is computed."""

    name: str
    meaning: str
    formula: str = ""
    ratio_formula: str = ""
    note: str = ""


@dataclass(frozen=True)
class GlossarySection:
    """A heading (with an anchor for links) and its entries."""

    anchor: str
    title: str
    entries: tuple[GlossaryEntry, ...]


def _columns() -> GlossarySection:
    entries = []
    for column, term in REVIEW_COLUMN_TERMS.items():
        note = ""
        if column in (ReviewColumn.CHANGE_ADDED, ReviewColumn.CHANGE_DROPPED):
            note = f"{CHANGE_SIGN} {CHANGE_SIGN_RATIO}"
        ratio = term.ratio_formula if term.ratio_formula != term.formula else ""
        entries.append(GlossaryEntry(term.label, term.explanation, term.formula, ratio, note))
    return GlossarySection("columns", "Review table columns", tuple(entries))


def glossary_sections() -> tuple[GlossarySection, ...]:
    """Every section of the glossary, in reading order.

    >>> [s.title for s in glossary_sections()]  # doctest: +NORMALIZE_WHITESPACE
    ['Review table columns', 'Roles', 'Verdicts', 'Guides (editable thresholds)',
     'Model families', 'Concepts']
    """
    return (
        _columns(),
        GlossarySection(
            "roles",
            "Roles",
            tuple(GlossaryEntry(t.label, t.explanation) for t in ROLE_TERMS.values()),
        ),
        GlossarySection(
            "verdicts",
            "Verdicts",
            tuple(GlossaryEntry(t.label, t.explanation) for t in VERDICT_TERMS.values()),
        ),
        GlossarySection(
            "guides",
            "Guides (editable thresholds)",
            tuple(
                GlossaryEntry(
                    t.label, t.explanation, note=f"Default {t.default:g} (common practice)."
                )
                for t in THRESHOLD_TERMS.values()
            ),
        ),
        GlossarySection(
            "families",
            "Model families",
            tuple(
                GlossaryEntry(t.label, f"{t.explanation} Fitted by {t.model}.")
                for t in FAMILY_TERMS.values()
            ),
        ),
        GlossarySection(
            "concepts",
            "Concepts",
            tuple(GlossaryEntry(t.label, t.explanation) for t in CONCEPT_TERMS),
        ),
    )


def _entry_html(e: GlossaryEntry) -> str:
    out = [
        f'<dt><b>{html.escape(e.name)}</b></dt><dd style="margin-bottom: 6px">'
        f"{html.escape(e.meaning)}"
    ]
    if e.formula:
        out.append(f"<br><i>Formula:</i> <code>{html.escape(e.formula)}</code>")
    if e.ratio_formula:
        out.append(f"<br><i>Ratio measures:</i> <code>{html.escape(e.ratio_formula)}</code>")
    if e.note:
        out.append(f"<br>{html.escape(e.note)}")
    out.append("</dd>")
    return "".join(out)


def glossary_html(sections: tuple[GlossarySection, ...] | None = None) -> str:
    """The glossary as one HTML page (a contents line, then each section).

    >>> "<code>100 × (SE_with / SE_without − 1)" in glossary_html()
    True
    """
    sections = glossary_sections() if sections is None else sections
    contents = " · ".join(f'<a href="#{s.anchor}">{html.escape(s.title)}</a>' for s in sections)
    parts = [f"<p>{contents}</p>"]
    for s in sections:
        parts.append(f'<h3><a name="{s.anchor}"></a>{html.escape(s.title)}</h3><dl>')
        parts.extend(_entry_html(e) for e in s.entries)
        parts.append("</dl>")
    parts.append(
        "<p><i>The guides are rules of thumb, not rules; the diagram holds assumptions the "
        "data cannot fully test.</i></p>"
    )
    return "".join(parts)
