"""Words for the diagram's independence claims, in one place.

The panel, ``covariscope check``, the rationale page and the ``review``
verdict all phrase a claim, its strength and its suggestion with these
functions, so the wording stays the same everywhere.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

from covariscope.analysis.claim_tests import ClaimResult, DiagramChecks, Strength
from covariscope.analysis.claims import Claim, Untestable
from covariscope.vocabulary import (
    CLAIM_CAUTION,
    CLAIM_CAUTION_SHORT,
    CLAIM_TEST_TERMS,
    CORRECTION_TERMS,
    STRENGTH_TERMS,
)

__all__ = [
    "CAUTION",
    "CORRECTION_NAMES",
    "SHORT_CAUTION",
    "STRENGTH_NAMES",
    "TEST_NAMES",
    "claim_words",
    "disagree_sentence",
    "p_words",
    "strength_words",
    "suggestion_words",
    "summary_line",
    "untestable_words",
    "verdict_clause",
]

CORRECTION_NAMES: Mapping[str, str] = {t.code: t.label for t in CORRECTION_TERMS.values()}
STRENGTH_NAMES: Mapping[str, str] = {t.code: t.label for t in STRENGTH_TERMS.values()}
#: Plain names of the tests, by the code a result carries.
TEST_NAMES: Mapping[str, str] = {t.code: t.label for t in CLAIM_TEST_TERMS.values()}
CAUTION = CLAIM_CAUTION
#: The caution in a few words, for the page.
SHORT_CAUTION = CLAIM_CAUTION_SHORT
_SHORT_CORRECTION = {t.code: t.short for t in CORRECTION_TERMS.values()}


def _name(node: str, names: Mapping[str, str]) -> str:
    return names.get(node, node) or node


def _given(claim: Claim, names: Mapping[str, str]) -> str:
    if not claim.given:
        return ""
    return " given " + ", ".join(_name(g, names) for g in claim.given)


def claim_words(claim: Claim, names: Mapping[str, str]) -> str:
    """``"age and diet are independent given sex"``."""
    return (
        f"{_name(claim.a, names)} and {_name(claim.b, names)} are independent{_given(claim, names)}"
    )


def _value(value: float) -> str:
    return "–" if not math.isfinite(value) else f"{value:.2f}"


def strength_words(s: Strength) -> str:
    """``"partial correlation 0.21 (95% CI 0.15 to 0.27)"``."""
    level = f" for {s.level}" if s.level else ""
    return (
        f"{STRENGTH_NAMES.get(s.kind, s.kind)} {_value(s.value)}{level} "
        f"(95% CI {_value(s.low)} to {_value(s.high)})"
    )


def p_words(p: float) -> str:
    """``"p < 0.001"`` or ``"p = 0.012"``."""
    return "p < 0.001" if p < 0.001 else f"p = {p:.3f}"


def disagree_sentence(r: ClaimResult, names: Mapping[str, str]) -> str:
    """The issue's wording: the diagram says …; the data disagree (strength, p adjusted)."""
    verb = "disagree" if r.failed else "do not disagree"
    return (
        f"The diagram says {claim_words(r.claim, names)}; the data {verb} "
        f"({strength_words(r.strength)}, adjusted {p_words(r.p_adjusted)})."
    )


def verdict_clause(r: ClaimResult, names: Mapping[str, str], others: int = 0) -> str:
    """The clause a ``review`` verdict's sentence gains from a failed claim on its covariate."""
    more = f", and with {others} more claim(s) on it" if others else ""
    return (
        f"the data also disagree with the diagram's claim that {claim_words(r.claim, names)} "
        f"({strength_words(r.strength)}, adjusted {p_words(r.p_adjusted)}){more}"
    )


def suggestion_words(r: ClaimResult, names: Mapping[str, str]) -> str:
    """What the diagram may lack: an arrow either way it can take, or a common cause."""
    arrows = [f"{_name(u, names)} → {_name(v, names)}" for u, v in r.claim.arrows]
    shown = " or ".join(arrows)
    a, b = _name(r.claim.a, names), _name(r.claim.b, names)
    if not arrows:
        return f"Perhaps a common cause of {a} and {b} is missing from the diagram."
    return f"Perhaps a missing arrow {shown}, or a missing common cause of {a} and {b}."


def untestable_words(u: Untestable, names: Mapping[str, str]) -> str:
    """Why a pair's claim is not tested, in a sentence."""
    if u.reason == "unmeasured":
        needs = ", ".join(_name(n, names) for n in u.needs)
        return (
            "not testable with the measured variables: every separating set holds an "
            f"unmeasured variable (here {needs}), an unmeasured common cause or path"
        )
    if u.reason == "measures_endpoint":
        return "not tested: one of them measures the exposure or outcome (proxy link)"
    return f"not tested: {u.detail or 'no model could be fitted'}"


def summary_line(
    checks: DiagramChecks, names: Mapping[str, str], *, top: int = 3, short: bool = False
) -> str:
    """One line for the page: tested, failed after correction, the strongest failures."""
    words = _SHORT_CORRECTION if short else CORRECTION_NAMES
    correction = words.get(checks.method, checks.method)
    head = (
        f"Diagram checks: {checks.tested} independence claim(s) tested, "
        f"{checks.failed} failed after {correction}"
    )
    failures = [r for r in checks.ranked() if r.failed][:top]
    if failures:
        pairs = "; ".join(
            f"{_name(r.claim.a, names)} – {_name(r.claim.b, names)}" for r in failures
        )
        head += f" (strongest: {pairs})"
    if checks.omitted:
        head += f"; {checks.omitted} more not tested (limit {checks.limit})"
    return head + "."
