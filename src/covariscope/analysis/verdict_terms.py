"""Verdict vocabulary and the plain-number records the rules read.

The codes are stable (``check --json`` carries them); :data:`LABELS` gives
each its short human form.  :class:`Facts` holds what the diagram says about
one covariate, :class:`Numbers` (with its :class:`Shift` comparisons) what
the data say, and :class:`Verdict` the answer.

Vocabulary: ``adjust``, ``keep_one_of``, ``exclude_measures_exposure``,
``exclude_pathway``, ``exclude_descendant``, ``exclude_collider``,
``optional_precision``, ``not_needed`` (a covariate the diagram links to
neither the exposure nor the outcome), ``avoid_instrument``, ``consider_proxy``,
``review``, ``unmeasured``.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

from covariscope.vocabulary import VERDICT_TERMS, VerdictCode, change_read

__all__ = [
    "LABELS",
    "NONCOLLAPSIBLE_R2",
    "VERDICTS",
    "Facts",
    "Numbers",
    "Shift",
    "Verdict",
]

VERDICTS: tuple[str, ...] = tuple(VerdictCode)

LABELS: Mapping[str, str] = MappingProxyType(
    {code.value: term.label for code, term in VERDICT_TERMS.items()}
)


#: Below this R² of the exposure on a covariate's terms, a shift in an odds or
#: hazard ratio is read as non-collapsibility rather than confounding: a
#: covariate that barely predicts the exposure cannot confound much, yet it
#: moves a non-collapsible estimate whenever it predicts the outcome (common
#: practice; no published cut-off).
NONCOLLAPSIBLE_R2 = 0.01


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
        return change_read(self.change_pct, self.change_pct_ratio, ratio=ratio_family)


@dataclass(frozen=True)
class Numbers:
    """What the data say about one covariate (None when not computed)."""

    added: Shift | None = None
    dropped: Shift | None = None
    vif_exposure: float | None = None
    vif: float | None = None
    aux_r2: float | None = None
    r2_exposure: float | None = None
    #: a multi-level exposure: the contrast the shifts are of (the one that moved
    #: most, as "current vs never"); empty for a single contrast
    contrast: str = ""


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
    group_needed : bool
        The diagram needs this member beside the others of its group: no
        member alone gives a sufficient set with the rest of the adjustment
        set, and leaving this one out (keeping the others) is not sufficient.
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
    aliased_with : tuple of str
        Other variables of which, in the data, it is an exact linear
        combination (or which are one of it): the diagram treats them as
        separate variables, the data cannot tell them apart.
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
    group_needed: bool = False
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
    aliased_with: tuple[str, ...] = ()
