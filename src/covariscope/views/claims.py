"""Rows of the "Independence claims" panel: the diagram's claims as the data judge them.

Pure function from a study result to rows (paired with
``qt/claims_panel.py``): failed claims first, each part ranked by strength,
then the pairs that could not be tested.  Every sentence comes from
:mod:`covariscope.analysis.claim_wording`, so the panel, ``check`` and the
page say the same thing.
"""

from __future__ import annotations

from dataclasses import dataclass

from covariscope.analysis.claim_wording import (
    CAUTION,
    CORRECTION_NAMES,
    disagree_sentence,
    p_words,
    suggestion_words,
    untestable_words,
)
from covariscope.study.result import StudyResult
from covariscope.vocabulary import STRENGTH_TERMS, StrengthKind

__all__ = ["ClaimRow", "ClaimsView", "claims_view"]

#: Status words of a row, by how the data judged its claim.
FAILED, HOLDS, UNTESTED = "data disagree", "not contradicted", "not tested"


@dataclass(frozen=True)
class ClaimRow:
    """One claim (or untested pair) as the panel shows it.

    ``arrows`` are the arrows the diagram could take between ``a`` and ``b``
    (drawn as a suggestion when the claim failed); empty for other rows.
    """

    a: str
    b: str
    status: str
    pair: str
    given: str
    strength: str
    p_adjusted: str
    test: str
    sentence: str
    suggestion: str
    failed: bool
    arrows: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class ClaimsView:
    """The panel's header line, its rows and its caution."""

    summary: str
    rows: tuple[ClaimRow, ...]
    caution: str


def _number(value: float) -> str:
    return f"{value:.2f}"


def claims_view(result: StudyResult | None) -> ClaimsView:
    """The panel's content for a result (an empty panel without data).

    Examples
    --------
    >>> claims_view(None).summary
    'No analysis yet.'
    """
    if result is None:
        return ClaimsView("No analysis yet.", (), CAUTION)
    checks = result.diagram_checks
    if checks is None:
        return ClaimsView(
            "The diagram's independence claims are tested once data are bound to its nodes.",
            (),
            CAUTION,
        )
    names = result.names
    rows: list[ClaimRow] = []
    for r in checks.ranked():
        s = r.strength
        short = STRENGTH_TERMS[StrengthKind(s.kind)].short
        level = f" ({s.level})" if s.level else ""
        rows.append(
            ClaimRow(
                a=r.claim.a,
                b=r.claim.b,
                status=FAILED if r.failed else HOLDS,
                pair=f"{result.name(r.claim.a)} – {result.name(r.claim.b)}",
                given=", ".join(result.name(g) for g in r.claim.given) or "nothing",
                strength=f"{short} {_number(s.value)}{level} [{_number(s.low)}, {_number(s.high)}]",
                p_adjusted=p_words(r.p_adjusted),
                test=r.test,
                sentence=disagree_sentence(r, names),
                suggestion=suggestion_words(r, names) if r.failed else "",
                failed=r.failed,
                arrows=r.claim.arrows if r.failed else (),
            )
        )
    for u in checks.untestable:
        why = untestable_words(u, names)
        rows.append(
            ClaimRow(
                u.a,
                u.b,
                UNTESTED,
                f"{result.name(u.a)} – {result.name(u.b)}",
                "",
                "",
                "",
                "",
                f"{result.name(u.a)} and {result.name(u.b)}: {why}.",
                "",
                False,
            )
        )
    correction = CORRECTION_NAMES.get(checks.method, checks.method)
    head = (
        f"{checks.tested} claim(s) the diagram makes were tested on the analytic sample; "
        f"{checks.failed} failed after {correction}"
    )
    if checks.untestable:
        head += f"; {len(checks.untestable)} pair(s) could not be tested"
    if checks.omitted:
        head += f"; {checks.omitted} more not tested (limit {checks.limit})"
    return ClaimsView(head + ".", tuple(rows), CAUTION)
