"""Verdicts: what the diagram says and what the data say, put together.

One verdict per covariate, from its role in the diagram, its numeric
evidence, its proxy links and the thresholds.  The rules are pure functions
over plain numbers (:class:`Facts` and :class:`Numbers`), so each can be
checked on a case of its own.  Every verdict carries one plain sentence that
names the numbers and the thresholds it used; thresholds are guides (common
practice), never rules.

This module is the entry point; the parts live by topic:
:mod:`~covariscope.analysis.verdict_terms` (vocabulary and records),
:mod:`~covariscope.analysis.verdict_rules` (the rules per role),
:mod:`~covariscope.analysis.verdict_groups` (collinear confounder groups) and
:mod:`~covariscope.analysis.verdict_wording` (sentence parts).

The verdict codes (stable; used in ``check --json``) are listed in
:mod:`~covariscope.analysis.verdict_terms`, the published sources of the
rules in :mod:`~covariscope.analysis.verdict_rules`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace

from covariscope.analysis.verdict_groups import collinear_groups
from covariscope.analysis.verdict_rules import role_verdict
from covariscope.analysis.verdict_terms import (
    LABELS,
    NONCOLLAPSIBLE_R2,
    VERDICTS,
    Facts,
    Numbers,
    Shift,
    Verdict,
)
from covariscope.analysis.verdict_wording import Labels, format_set, labelled
from covariscope.vocabulary import DEFAULT_THRESHOLDS

__all__ = [
    "LABELS",
    "NONCOLLAPSIBLE_R2",
    "VERDICTS",
    "Facts",
    "Numbers",
    "Shift",
    "Verdict",
    "collinear_groups",
    "decide_verdict",
    "format_set",
]


def decide_verdict(
    facts: Facts,
    numbers: Numbers | None = None,
    *,
    family: str = "linear",
    thresholds: Mapping[str, float] | None = None,
    names: Mapping[str, str] | Labels | None = None,
) -> Verdict:
    """The verdict for one covariate.

    The rules, first match wins: not measured → ``unmeasured``; a proxy link
    to the exposure, or R² of the exposure on it ≥ ``r2`` with SE inflation
    over ``se_inflation_pct`` → ``exclude_measures_exposure``; a proxy link to
    the outcome, or a descendant → ``exclude_descendant``; mediator →
    ``exclude_pathway``; collider → ``exclude_collider``; confounder →
    ``keep_one_of`` when in a collinear group of which some member alone
    suffices, else ``adjust`` (with a collinearity caution when the diagram
    needs every member of its group); precision,
    instrument or unrelated whose addition (or removal from the full model)
    shifts the estimate past ``change_pct`` → ``review`` (not for an odds or
    hazard ratio shifted by a covariate that does not predict the exposure:
    that is non-collapsibility); otherwise ``optional_precision`` (precision),
    ``not_needed`` (unrelated), ``avoid_instrument`` or ``consider_proxy``.

    ``names`` maps node ids to the labels the sentence uses (ids where a node
    has none), or is the result's :class:`~covariscope.analysis.verdict_wording.Labels`
    shared by every covariate; the verdict's ``node``, ``group`` and
    ``suggested`` stay ids.

    Examples
    --------
    >>> v = decide_verdict(Facts("bmi", "precision"),
    ...                    Numbers(added=Shift(change_pct=15.0, se_inflation_pct=-2.0)))
    >>> v.code
    'review'
    >>> decide_verdict(Facts("m", "mediator")).code
    'exclude_pathway'
    """
    t = dict(DEFAULT_THRESHOLDS)
    t.update(thresholds or {})
    n = numbers if numbers is not None else Numbers()
    verdict = role_verdict(labelled(facts, names or {}), n, t, family)
    keeps = verdict.code == "keep_one_of"
    return replace(
        verdict,
        node=facts.node,
        group=tuple(facts.group) if keeps else (),
        suggested=facts.suggested if keeps else None,
    )
