"""Verdicts: what the diagram says and what the data say, put together.

One verdict per covariate, from its role in the diagram, its numeric
evidence, its proxy links and the thresholds.  The rules are pure functions
over plain numbers (:class:`Facts` and :class:`Numbers`), so each can be
checked on a case of its own.  Every verdict carries one plain sentence that
names the numbers and the thresholds it used; thresholds are guides (common
practice), never rules.

Vocabulary (stable; used in ``check --json``): ``adjust``, ``keep_one_of``,
``exclude_measures_exposure``, ``exclude_pathway``, ``exclude_descendant``,
``exclude_collider``, ``optional_precision``, ``avoid_instrument``,
``consider_proxy``, ``review``, ``unmeasured``.

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

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field, replace

__all__ = [
    "LABELS",
    "NONCOLLAPSIBLE_FAMILIES",
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

VERDICTS: tuple[str, ...] = (
    "adjust",
    "keep_one_of",
    "exclude_measures_exposure",
    "exclude_pathway",
    "exclude_descendant",
    "exclude_collider",
    "optional_precision",
    "avoid_instrument",
    "consider_proxy",
    "review",
    "unmeasured",
)

LABELS: dict[str, str] = {
    "adjust": "Adjust",
    "keep_one_of": "Keep one of",
    "exclude_measures_exposure": "Exclude — measures the exposure",
    "exclude_pathway": "Exclude — on the pathway",
    "exclude_descendant": "Exclude — descendant",
    "exclude_collider": "Exclude — collider",
    "optional_precision": "Optional — precision",
    "avoid_instrument": "Avoid — instrument-like",
    "consider_proxy": "Consider — proxy of a confounder",
    "review": "Review — diagram and data disagree",
    "unmeasured": "Not measured",
}

#: Families whose effect measure is non-collapsible (odds and hazard ratios).
NONCOLLAPSIBLE_FAMILIES = frozenset({"logistic", "cox"})

#: Below this R² of the exposure on a covariate's terms, a shift in an odds or
#: hazard ratio is read as non-collapsibility rather than confounding: a
#: covariate that barely predicts the exposure cannot confound much, yet it
#: moves a non-collapsible estimate whenever it predicts the outcome (common
#: practice; no published cut-off).
NONCOLLAPSIBLE_R2 = 0.01

DEFAULT_THRESHOLDS: dict[str, float] = {
    "change_pct": 10.0,
    "se_inflation_pct": 20.0,
    "vif": 10.0,
    "r2": 0.9,
    "condition_index": 30.0,
}


@dataclass(frozen=True)
class Verdict:
    """The answer for one covariate.

    ``code`` is one of :data:`VERDICTS`; ``label`` its short human form;
    ``reason`` one sentence naming the numbers and thresholds used.  For
    ``keep_one_of``, ``group`` holds the members and ``suggested`` the member
    suggested.
    """

    node: str
    code: str
    label: str
    reason: str
    group: tuple[str, ...] = ()
    suggested: str | None = None


@dataclass(frozen=True)
class Shift:
    """One "with C against without C" comparison, as plain numbers.

    ``change_pct`` is on the coefficient scale (None when undefined);
    ``change_pct_ratio`` on the ratio scale (ratio families only).
    """

    change_pct: float | None
    se_inflation_pct: float | None
    change_pct_ratio: float | None = None

    def change_read(self, ratio_family: bool) -> float | None:
        """The change the threshold reads: the ratio scale for ratio families."""
        value = self.change_pct_ratio if ratio_family else self.change_pct
        return value if value is not None and math.isfinite(value) else None


@dataclass(frozen=True)
class Numbers:
    """What the data say about one covariate (None when not computed)."""

    added: Shift | None = None
    dropped: Shift | None = None
    vif_exposure: float | None = None
    vif: float | None = None
    aux_r2: float | None = None
    r2_exposure: float | None = None


@dataclass(frozen=True)
class Facts:
    """What the diagram (and the set-up) says about one covariate.

    Attributes
    ----------
    node, role : str
        The covariate and its role (see :mod:`covariscope.analysis.roles`).
    measured : bool
        False for a variable marked as not measured.
    has_data : bool
        Whether the numbers come from data (bound to a column of a loaded table).
    measures_exposure, measures_outcome : bool
        A proxy link to the exposure (outcome).
    in_proposed : bool
        Whether the analyst proposes to adjust for it.
    group : tuple of str
        Its collinear confounder group (itself included), if any.
    group_alone : tuple of str
        Members of the group that alone still give a sufficient set.
    group_why : str
        Why the members form a group (a clause: "a proxy link joins them", ...).
    suggested, suggested_why : str
        For a group: the member suggested and why (a clause).
    opened_paths : tuple of paths
        Backdoor paths that the proposed set opens through this node.
    would_open : tuple of paths
        For a collider: blocked backdoor paths that adjusting for it alone opens.
    stands_for : tuple of str
        For a confounder proxy: the confounders it descends from.
    stands_for_adjusted : tuple of str
        Those of ``stands_for`` that are measured and in the adjustment set used.
    would_close : tuple of paths
        For an unmeasured node: open backdoor paths it lies on as a non-collider.
    sufficient_without : bool or None
        For an unmeasured node: whether the set in use suffices without it.
    set_name, set_members : str, tuple
        The adjustment set the last two facts refer to ("recommended", ...).
    """

    node: str
    role: str
    measured: bool = True
    has_data: bool = True
    measures_exposure: bool = False
    measures_outcome: bool = False
    in_proposed: bool = False
    group: tuple[str, ...] = ()
    group_alone: tuple[str, ...] = ()
    group_why: str = ""
    suggested: str | None = None
    suggested_why: str = ""
    opened_paths: tuple[tuple[str, ...], ...] = ()
    would_open: tuple[tuple[str, ...], ...] = ()
    stands_for: tuple[str, ...] = ()
    stands_for_adjusted: tuple[str, ...] = ()
    would_close: tuple[tuple[str, ...], ...] = ()
    sufficient_without: bool | None = None
    set_name: str = "recommended"
    set_members: tuple[str, ...] = field(default=())


# -- wording -----------------------------------------------------------------------


def _pct(value: float | None) -> str:
    if value is None:
        return "not defined"
    return f"{value if round(value, 1) else 0.0:+.1f}%"  # never "-0.0%"


def _num(value: float | None, digits: int = 3) -> str:
    return "not available" if value is None or not math.isfinite(value) else f"{value:.{digits}g}"


def format_set(members: Iterable[str]) -> str:
    """``["age", "sex"]`` → ``"{age, sex}"``."""
    items = list(members)
    return "{" + ", ".join(items) + "}" if items else "the empty set"


def _path(nodes: Sequence[str]) -> str:
    return " – ".join(nodes)


def _label(node: str, names: Mapping[str, str]) -> str:
    """A node's label; a measure group ("a|b") by its members' labels."""
    return " | ".join(names.get(m, m) or m for m in node.split("|"))


def _labelled(f: Facts, names: Mapping[str, str]) -> Facts:
    """The facts with every node named by its label, for the sentence only."""

    def one(node: str) -> str:
        return _label(node, names)

    def many(nodes: Iterable[str]) -> tuple[str, ...]:
        return tuple(one(n) for n in nodes)

    def paths(ps: Iterable[Sequence[str]]) -> tuple[tuple[str, ...], ...]:
        return tuple(many(p) for p in ps)

    return replace(
        f,
        node=one(f.node),
        group=many(f.group),
        group_alone=many(f.group_alone),
        suggested=one(f.suggested) if f.suggested is not None else None,
        opened_paths=paths(f.opened_paths),
        would_open=paths(f.would_open),
        stands_for=many(f.stands_for),
        stands_for_adjusted=many(f.stands_for_adjusted),
        would_close=paths(f.would_close),
        set_members=many(f.set_members),
    )


def _guide(t: Mapping[str, float], key: str) -> str:
    value = t[key]
    if key in ("change_pct", "se_inflation_pct"):
        return f"{value:g}%"
    return f"{value:g}"


def _scale(ratio_family: bool) -> str:
    return " on the ratio scale" if ratio_family else ""


def _shift_clause(n: Numbers, ratio: bool) -> str:
    """ "adding it moves the estimate by +12.0% and its SE by +3.0%"."""
    if n.added is None:
        return "no comparison could be made"
    return (
        f"adding it to the crude model moves the estimate by {_pct(n.added.change_read(ratio))}"
        f"{_scale(ratio)} and its standard error by {_pct(n.added.se_inflation_pct)}"
    )


def _largest_shift(n: Numbers, ratio: bool) -> tuple[str, float] | None:
    """The comparison that shifts the estimate most: ("added"|"dropped", change)."""
    best: tuple[str, float] | None = None
    for name, shift in (("added", n.added), ("dropped", n.dropped)):
        if shift is None:
            continue
        value = shift.change_read(ratio)
        if value is not None and (best is None or abs(value) > abs(best[1])):
            best = (name, value)
    return best


_COMPARISON_WORDS = {
    "added": "adding it to the crude model",
    "dropped": "adding it last (the full model against the full model without it)",
}


# -- the rules ---------------------------------------------------------------------


def _verdict(f: Facts, code: str, reason: str, **extra: object) -> Verdict:
    return Verdict(f.node, code, LABELS[code], reason, **extra)  # type: ignore[arg-type]


def _unmeasured(f: Facts) -> Verdict:
    role_words = {
        "confounder": "it is a confounder, so adjusting for it would have closed "
        + (
            ", ".join(_path(p) for p in f.would_close[:3])
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
        tail = f"the {f.set_name} set {format_set(f.set_members)} is sufficient without it"
    else:
        tail = (
            f"the {f.set_name} set {format_set(f.set_members)} is not sufficient without it, "
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
        f"; R² of the exposure on it is {_num(n.r2_exposure)} (guide {_guide(t, 'r2')}) and adding "
        f"it inflates the exposure's standard error by {_pct(se)} (guide {_guide(t, 'se_inflation_pct')})"
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
    ratio = family in ("logistic", "risk_ratio", "cox")
    shift = _largest_shift(n, ratio)
    if shift is None or abs(shift[1]) < t["change_pct"]:
        return None
    if (
        family in NONCOLLAPSIBLE_FAMILIES
        and n.r2_exposure is not None
        and n.r2_exposure < NONCOLLAPSIBLE_R2
    ):
        return None  # non-collapsibility, worded by the role's own rule
    name, value = shift
    role, lacks = _REVIEW_WORDS[f.role]
    return _verdict(
        f,
        "review",
        f"Review: the diagram calls it {role}, yet {_COMPARISON_WORDS[name]} moves the estimate by "
        f"{_pct(value)}{_scale(ratio)}, past the {_guide(t, 'change_pct')} guide, so the diagram may "
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


_MEASURE_WORD = {"logistic": "odds", "cox": "hazard"}


def _noncollapsible_note(n: Numbers, t: Mapping[str, float], family: str) -> str:
    ratio = True
    shift = _largest_shift(n, ratio)
    if (
        family in NONCOLLAPSIBLE_FAMILIES
        and shift is not None
        and abs(shift[1]) >= t["change_pct"]
        and n.r2_exposure is not None
        and n.r2_exposure < NONCOLLAPSIBLE_R2
    ):
        measure = _MEASURE_WORD[family]
        return (
            f"; the {_pct(shift[1])} shift in the {measure} ratio when {_COMPARISON_WORDS[shift[0]]} "
            f"comes with an R² of the exposure on it of only {_num(n.r2_exposure, 2)} (under "
            f"{NONCOLLAPSIBLE_R2:g}), which is non-collapsibility of the {measure} ratio, not confounding"
        )
    return ""


def _confounder(f: Facts, n: Numbers, t: Mapping[str, float], family: str) -> Verdict:
    ratio = family in ("logistic", "risk_ratio", "cox")
    if len(f.group) >= 2:
        others = [m for m in f.group if m != f.node]
        rest = [m for m in f.set_members if m not in f.group]
        beside = f" with {format_set(rest)}" if rest else ""
        lacking = [m for m in f.group if m not in f.group_alone]
        if not f.group_alone:
            alone = (
                f"no single member alone gives a sufficient set{beside}, so the diagram needs "
                "them all despite the collinearity"
            )
        elif not lacking:
            alone = f"each member alone gives a sufficient set{beside}"
        else:
            alone = (
                f"only {', '.join(f.group_alone)} alone gives a sufficient set{beside} "
                f"({', '.join(lacking)} alone does not)"
            )
        suggestion = (
            f"; {f.suggested} is suggested{(' because ' + f.suggested_why) if f.suggested_why else ''}"
            if f.suggested
            else ""
        )
        if f.group_why:
            vif = f"; its VIF in the full model is {_num(n.vif)} against {_guide(t, 'vif')}"
            why = f" ({f.group_why}{vif if n.vif is not None else ''})"
        elif n.aux_r2 is not None:
            why = (
                f" (its auxiliary R² in the full model is {_num(n.aux_r2)} against the guide "
                f"{_guide(t, 'r2')}, its VIF {_num(n.vif)} against {_guide(t, 'vif')})"
            )
        else:
            why = ""
        return _verdict(
            f,
            "keep_one_of",
            f"Keep one of {format_set(f.group)}: it and {', '.join(others)} carry the same "
            f"confounding and close the same paths{why}; {alone}{suggestion}; another member "
            "may be chosen, and the choice is saved with the project.",
            group=tuple(f.group),
            suggested=f.suggested,
        )
    if not f.has_data or n.added is None:
        return _verdict(
            f,
            "adjust",
            "Adjust: the diagram makes it a confounder on an open backdoor path; no data are "
            "bound to measure how much it confounds.",
        )
    change = n.added.change_read(ratio)
    if change is not None and abs(change) >= t["change_pct"]:
        data = f"and the data agree: {_shift_clause(n, ratio)}, past the {_guide(t, 'change_pct')} guide"
    else:
        data = (
            f"and the data show little confounding here: {_shift_clause(n, ratio)}, under the "
            f"{_guide(t, 'change_pct')} guide"
        )
    caution = ""
    if family in NONCOLLAPSIBLE_FAMILIES:
        measure = _MEASURE_WORD[family]
        caution = (
            f" (part of a change in a {measure} ratio can be non-collapsibility rather than "
            "confounding)"
        )
    return _verdict(
        f,
        "adjust",
        f"Adjust: the diagram requires it as a confounder on an open backdoor path, {data}{caution}.",
    )


def decide_verdict(
    facts: Facts,
    numbers: Numbers | None = None,
    *,
    family: str = "linear",
    thresholds: Mapping[str, float] | None = None,
    names: Mapping[str, str] | None = None,
) -> Verdict:
    """The verdict for one covariate.

    The rules, first match wins: not measured → ``unmeasured``; a proxy link
    to the exposure, or R² of the exposure on it ≥ ``r2`` with SE inflation
    over ``se_inflation_pct`` → ``exclude_measures_exposure``; a proxy link to
    the outcome, or a descendant → ``exclude_descendant``; mediator →
    ``exclude_pathway``; collider → ``exclude_collider``; confounder →
    ``keep_one_of`` when in a collinear group, else ``adjust``; precision,
    instrument or unrelated whose addition (or removal from the full model)
    shifts the estimate past ``change_pct`` → ``review`` (not for an odds or
    hazard ratio shifted by a covariate that does not predict the exposure:
    that is non-collapsibility); otherwise ``optional_precision``,
    ``avoid_instrument`` or ``consider_proxy``.

    ``names`` maps node ids to the labels the sentence uses (ids where a node
    has none); the verdict's ``node``, ``group`` and ``suggested`` stay ids.

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
    verdict = _decide(_labelled(facts, names or {}), n, t, family)
    keeps = verdict.code == "keep_one_of"
    return replace(
        verdict,
        node=facts.node,
        group=tuple(facts.group) if keeps else (),
        suggested=facts.suggested if keeps else None,
    )


def _decide(f: Facts, n: Numbers, t: Mapping[str, float], family: str) -> Verdict:
    ratio = family in ("logistic", "risk_ratio", "cox")

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
        data = f"; {_shift_clause(n, ratio)}" if n.added is not None else ""
        return _verdict(
            f,
            "exclude_pathway",
            "Exclude: it lies on the causal pathway from the exposure to the outcome, so adjusting "
            f"for it would remove part of the total effect{data}.",
        )
    if f.role in ("descendant_of_outcome", "descendant_of_exposure"):
        whose = "the outcome" if f.role == "descendant_of_outcome" else "the exposure"
        data = f"; {_shift_clause(n, ratio)}" if n.added is not None else ""
        return _verdict(
            f,
            "exclude_descendant",
            f"Exclude: it is a descendant of {whose}, and adjusting for it can bias the estimate{data}.",
        )
    if f.role == "collider":
        if f.in_proposed and f.opened_paths:
            opened = "; in the proposed set it opens " + ", ".join(
                _path(p) for p in f.opened_paths[:3]
            )
        elif f.in_proposed:
            opened = "; the other members of the proposed set keep those paths blocked, so it is at best unneeded"
        elif f.would_open:
            opened = "; adjusting for it would open " + ", ".join(
                _path(p) for p in f.would_open[:3]
            )
        else:
            opened = ""
        return _verdict(
            f,
            "exclude_collider",
            "Exclude: it is a collider (or descends from one) on a backdoor path that is blocked "
            f"until it is adjusted for{opened}.",
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
                f"; adding it inflates the exposure's standard error by {_pct(n.added.se_inflation_pct)} "
                f"(guide {_guide(t, 'se_inflation_pct')}) with a VIF of the exposure of "
                f"{_num(n.vif_exposure)} (guide {_guide(t, 'vif')})"
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
                f"unnecessary here, since {', '.join(f.stands_for_adjusted)}, the confounder it "
                f"stands for, is in the {f.set_name} set"
            )
        elif f.stands_for:
            advice = (
                f"worth adjusting for, since {', '.join(f.stands_for)}, the confounder it stands "
                "for, is not measured or not adjusted for"
            )
        else:
            advice = "worth adjusting for only when the confounder it stands for cannot be"
        data = f"; {_shift_clause(n, ratio)}" if n.added is not None else ""
        return _verdict(
            f,
            "consider_proxy",
            f"Consider: it descends from a confounder and closes no path itself; it is {advice}{data}.",
        )
    # precision or unrelated
    if f.role == "precision":
        what = "it predicts the outcome but not the exposure, so adjusting for it is optional and can sharpen the estimate"
    else:
        what = "the diagram links it to neither the exposure nor the outcome, so it is not needed"
    if n.added is not None:
        change = n.added.change_read(ratio)
        data = (
            f"; {_shift_clause(n, ratio)} (change guide {_guide(t, 'change_pct')})"
            if change is None or abs(change) < t["change_pct"] or not note
            else ""
        )
    else:
        data = "; no data are bound to check it" if not f.has_data else ""
    return _verdict(f, "optional_precision", f"Optional: {what}{data}{note}.")


# -- collinear confounder groups -----------------------------------------------------


def collinear_groups(
    confounders: Iterable[str],
    *,
    proxy_groups: Iterable[Iterable[str]] = (),
    pair_r2: Mapping[tuple[str, str], float] | None = None,
    flagged: Iterable[Iterable[str]] = (),
    r2_threshold: float = 0.9,
) -> tuple[tuple[str, ...], ...]:
    """Groups of confounders that close the same paths and collide in the data.

    Two confounders are joined when a proxy link joins them (through their
    measure group), when the R² between them is at least ``r2_threshold``,
    or when they share a flagged condition-index dimension.  Groups are the
    connected components with two or more members, each sorted.

    Examples
    --------
    >>> collinear_groups(["a", "b", "c"], pair_r2={("a", "b"): 0.95, ("a", "c"): 0.2})
    (('a', 'b'),)
    """
    members = list(dict.fromkeys(confounders))
    known = set(members)
    parent = {m: m for m in members}

    def find(a: str) -> str:
        while parent[a] != a:
            parent[a] = parent[parent[a]]
            a = parent[a]
        return a

    def join(nodes: Iterable[str]) -> None:
        inside = [m for m in nodes if m in known]
        for other in inside[1:]:
            parent[find(other)] = find(inside[0])

    for group in proxy_groups:
        join(group)
    for (a, b), r2 in (pair_r2 or {}).items():
        if r2 >= r2_threshold:
            join((a, b))
    for dimension in flagged:
        join(dimension)
    out: dict[str, list[str]] = {}
    for m in members:
        out.setdefault(find(m), []).append(m)
    return tuple(sorted(tuple(sorted(g)) for g in out.values() if len(g) >= 2))
