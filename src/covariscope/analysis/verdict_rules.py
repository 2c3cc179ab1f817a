"""The verdict rules for each diagram role, as pure functions of plain numbers.

:func:`role_verdict` applies them in order (first match wins); each rule
writes one sentence naming the numbers and the guides it used.

References
----------
Greenland S, Pearl J, Robins JM (1999). Causal diagrams for epidemiologic
research. *Epidemiology* 10:37–48 (confounders, colliders, the M-structure).

Greenland S, Robins JM, Pearl J (1999). Confounding and collapsibility in
causal inference. *Statistical Science* 14:29–46 (non-collapsibility of odds
and hazard ratios).

Maldonado G, Greenland S (1993). Simulation study of confounder-selection
strategies. *Am J Epidemiol* 138:923–936 (the 10% change-in-estimate guide).
"""

from __future__ import annotations

from collections.abc import Mapping

from covariscope.analysis.families import family_of
from covariscope.analysis.verdict_groups import group_verdict
from covariscope.analysis.verdict_terms import (
    LABELS,
    NONCOLLAPSIBLE_R2,
    Facts,
    Numbers,
    Verdict,
)
from covariscope.analysis.verdict_wording import (
    COMPARISON_WORDS,
    PATHS_NAMED,
    estimate_words,
    guide,
    largest_shift,
    members_words,
    names_words,
    num,
    path_words,
    pct,
    scale_words,
    shift_clause,
)

__all__ = ["role_verdict"]


def _verdict(f: Facts, code: str, reason: str, **extra: object) -> Verdict:
    return Verdict(f.node, code, LABELS[code], reason, **extra)  # type: ignore[arg-type]


def _unmeasured(f: Facts) -> Verdict:
    role_words = {
        "confounder": "it is a confounder, so adjusting for it would have closed "
        + (
            ", ".join(path_words(p) for p in f.would_close[:PATHS_NAMED])
            if f.would_close
            else "the backdoor paths it lies on"
        ),
        "confounder_proxy": "it stands for a confounder, so adjusting for it could have reduced bias",
        "mediator": "it is on the causal pathway, so adjusting for it would have removed part of the effect",
        "collider": "it is a collider, so adjusting for it would have opened a backdoor path",
        "instrument": "it is instrument-like, so adjusting for it would only have added variance",
        "precision": "it predicts the outcome only, so adjusting for it could only have sharpened the estimate",
    }
    what = role_words.get(
        f.role, f"its role is {f.role.replace('_', ' ')}, so it would not have been needed"
    )
    if f.sufficient_without is None:
        tail = "no measured adjustment set is known"
    elif f.sufficient_without:
        tail = f"the {f.set_name} set {members_words(f.set_members)} is sufficient without it"
    else:
        tail = (
            f"the {f.set_name} set {members_words(f.set_members)} is not sufficient without it, "
            "so confounding may remain (see the E-value)"
        )
    return _verdict(f, "unmeasured", f"Not measured: {what}; {tail}.")


def _measures_exposure(f: Facts, n: Numbers, t: Mapping[str, float]) -> Verdict | None:
    se = n.added.se_inflation_pct if n.added is not None else None
    by_data = (
        n.r2_exposure is not None
        and n.r2_exposure >= t["r2"]
        and se is not None
        and se > t["se_inflation_pct"]
    )
    if not (f.measures_exposure or by_data):
        return None
    numbers = (
        f"; R² of the exposure on it is {num(n.r2_exposure)} (guide {guide(t, 'r2')}) and adding "
        f"it inflates the exposure's standard error by {pct(se)} (guide {guide(t, 'se_inflation_pct')})"
        if n.r2_exposure is not None
        else ""
    )
    why = (
        "the diagram links it to the exposure as another measure of it"
        if f.measures_exposure
        else "the data show it is nearly the exposure itself"
    )
    return _verdict(
        f,
        "exclude_measures_exposure",
        f"Exclude: {why}{numbers}, so adjusting for it would remove the exposure's own variation.",
    )


def _review(f: Facts, n: Numbers, t: Mapping[str, float], family: str) -> Verdict | None:
    """A covariate the diagram calls harmless whose data shift the estimate."""
    ratio = family_of(family).ratio
    shift = largest_shift(n, ratio)
    if shift is None or abs(shift[1]) < t["change_pct"]:
        return None
    if (
        family_of(family).noncollapsible
        and n.r2_exposure is not None
        and n.r2_exposure < NONCOLLAPSIBLE_R2
    ):
        return None  # non-collapsibility, worded by the role's own rule
    name, value = shift
    role, lacks = _REVIEW_WORDS[f.role]
    return _verdict(
        f,
        "review",
        f"Review: the diagram calls it {role}, yet {COMPARISON_WORDS[name]} moves {estimate_words(n)} by "
        f"{pct(value)}{scale_words(ratio)}, past the {guide(t, 'change_pct')} guide, so the diagram may "
        f"lack {lacks}.",
    )


#: Role words, and what the diagram may lack, when the data contradict a
#: harmless role: a precision variable that shifts the estimate is tied to the
#: exposure after all; an instrument-like one to the outcome.
_REVIEW_WORDS = {
    "precision": (
        "a precision variable (a cause of the outcome only)",
        "an arrow, or a common cause, linking it to the exposure",
    ),
    "instrument": (
        "instrument-like (linked to the outcome only through the exposure)",
        "an arrow, or a common cause, linking it to the outcome (conditioning on a strong "
        "predictor of the exposure can also amplify remaining confounding)",
    ),
    "unrelated": (
        "unrelated to the exposure and the outcome",
        "arrows linking it to the exposure and the outcome",
    ),
}


def _noncollapsible_note(n: Numbers, t: Mapping[str, float], family: str) -> str:
    ratio = True
    shift = largest_shift(n, ratio)
    if (
        family_of(family).noncollapsible
        and shift is not None
        and abs(shift[1]) >= t["change_pct"]
        and n.r2_exposure is not None
        and n.r2_exposure < NONCOLLAPSIBLE_R2
    ):
        measure = family_of(family).measure_word
        return (
            f"; the {pct(shift[1])} shift in the {measure} ratio when {COMPARISON_WORDS[shift[0]]} "
            f"comes with an R² of the exposure on it of only {num(n.r2_exposure, 2)} (under "
            f"{NONCOLLAPSIBLE_R2:g}), which is non-collapsibility of the {measure} ratio, not confounding"
        )
    return ""


def _confounder(f: Facts, n: Numbers, t: Mapping[str, float], family: str) -> Verdict:
    ratio = family_of(family).ratio
    if len(f.group) >= 2:
        return group_verdict(f, n, t, ratio=ratio)
    if not f.has_data or n.added is None:
        return _verdict(
            f,
            "adjust",
            "Adjust: the diagram makes it a confounder on an open backdoor path; no data are "
            "bound to measure how much it confounds.",
        )
    change = n.added.change_read(ratio)
    if change is not None and abs(change) >= t["change_pct"]:
        data = (
            f"and the data agree: {shift_clause(n, ratio)}, past the {guide(t, 'change_pct')} guide"
        )
    else:
        data = (
            f"and the data show little confounding here: {shift_clause(n, ratio)}, under the "
            f"{guide(t, 'change_pct')} guide"
        )
    caution = ""
    if family_of(family).noncollapsible:
        measure = family_of(family).measure_word
        article = "an" if measure[:1] in "aeiou" else "a"
        caution = (
            f" (part of a change in {article} {measure} ratio can be non-collapsibility rather than "
            "confounding)"
        )
    return _verdict(
        f,
        "adjust",
        f"Adjust: the diagram requires it as a confounder on an open backdoor path, {data}{caution}.",
    )


def role_verdict(f: Facts, n: Numbers, t: Mapping[str, float], family: str) -> Verdict:
    """The verdict for one covariate whose facts name nodes by their labels."""
    ratio = family_of(family).ratio

    if not f.measured:
        return _unmeasured(f)
    measured_exposure = _measures_exposure(f, n, t)
    if measured_exposure is not None:
        return measured_exposure
    if f.measures_outcome:
        return _verdict(
            f,
            "exclude_descendant",
            "Exclude: the diagram links it to the outcome as another measure of it, so adjusting "
            "for it would remove the effect being estimated.",
        )
    if f.role == "mediator":
        data = f"; {shift_clause(n, ratio)}" if n.added is not None else ""
        return _verdict(
            f,
            "exclude_pathway",
            "Exclude: it lies on the causal pathway from the exposure to the outcome, so adjusting "
            f"for it would remove part of the total effect{data}.",
        )
    if f.role in ("descendant_of_outcome", "descendant_of_exposure"):
        whose = "the outcome" if f.role == "descendant_of_outcome" else "the exposure"
        data = f"; {shift_clause(n, ratio)}" if n.added is not None else ""
        return _verdict(
            f,
            "exclude_descendant",
            f"Exclude: it is a descendant of {whose}, and adjusting for it can bias the estimate{data}.",
        )
    if f.role == "collider":
        if f.in_proposed and f.opened_paths:
            opened = "; in the proposed set it opens " + ", ".join(
                path_words(p) for p in f.opened_paths[:PATHS_NAMED]
            )
        elif f.in_proposed:
            opened = "; the other members of the proposed set keep those paths blocked, so it is at best unneeded"
        elif f.would_open:
            opened = "; adjusting for it would open " + ", ".join(
                path_words(p) for p in f.would_open[:PATHS_NAMED]
            )
        else:
            opened = ""
        return _verdict(
            f,
            "exclude_collider",
            "Exclude: it is a collider (or descends from one) on a backdoor path that is blocked "
            f"until it is adjusted for{opened}.",
        )
    if f.aliased_with and f.has_data:
        return _verdict(
            f,
            "review",
            "Review: the diagram treats it as a variable of its own, but in the data it is an "
            f"exact linear combination of (aliased with) {', '.join(f.aliased_with)}, so no model "
            "can hold them together. Decide which one measures the construct and keep only "
            "that one, or link them as proxies in the diagram.",
        )
    if f.role == "confounder":
        return _confounder(f, n, t, family)
    if f.role in ("precision", "instrument", "unrelated") and f.has_data:
        review = _review(f, n, t, family)
        if review is not None:
            return review
    note = _noncollapsible_note(n, t, family) if f.has_data else ""
    if f.role == "instrument":
        if n.added is not None:
            data = (
                f"; adding it inflates the exposure's standard error by {pct(n.added.se_inflation_pct)} "
                f"(guide {guide(t, 'se_inflation_pct')}) with a VIF of the exposure of "
                f"{num(n.vif_exposure)} (guide {guide(t, 'vif')})"
            )
        else:
            data = ""
        return _verdict(
            f,
            "avoid_instrument",
            "Avoid: it is linked to the outcome only through the exposure, so adjusting for it "
            f"removes no bias and adds variance{data}{note}.",
        )
    if f.role == "confounder_proxy":
        if f.stands_for_adjusted:
            advice = (
                f"unnecessary here, since {names_words(f.stands_for_adjusted)}, the confounder it "
                f"stands for, is in the {f.set_name} set"
            )
        elif f.stands_for:
            advice = (
                f"worth adjusting for, since {names_words(f.stands_for)}, the confounder it stands "
                "for, is not measured or not adjusted for"
            )
        else:
            advice = "worth adjusting for only when the confounder it stands for cannot be"
        data = f"; {shift_clause(n, ratio)}" if n.added is not None else ""
        return _verdict(
            f,
            "consider_proxy",
            f"Consider: it descends from a confounder and closes no path itself; it is {advice}{data}.",
        )
    # precision or unrelated
    if n.added is not None:
        change = n.added.change_read(ratio)
        data = (
            f"; {shift_clause(n, ratio)} (change guide {guide(t, 'change_pct')})"
            if change is None or abs(change) < t["change_pct"] or not note
            else ""
        )
    else:
        data = "; no data are bound to check it" if not f.has_data else ""
    if f.role == "precision":
        what = (
            "it predicts the outcome but not the exposure, so adjusting for it is optional and "
            "can sharpen the estimate"
        )
        return _verdict(f, "optional_precision", f"Optional: {what}{data}{note}.")
    # Unrelated: not a precision variable, so it is not offered as an option.
    what = "the diagram links it to neither the exposure nor the outcome, so adjusting for it gains nothing"
    return _verdict(f, "not_needed", f"Not needed: {what}{data}{note}.")
