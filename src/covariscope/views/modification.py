"""Effect modification in words and plot points, for the dialog, the page and
``check`` text.  The numbers come from :mod:`covariscope.analysis.modification`;
this module names and formats them.  Modification is not confounding and no
reason to adjust or not: every sentence here says so."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from covariscope.analysis.modification import Modification
from covariscope.views.format import is_number, number

__all__ = [
    "NOT_CONFOUNDING",
    "NOT_EXAMINED",
    "ModificationView",
    "flagged_lines",
    "modification_line",
    "modification_view",
]

#: The caution every modification text carries.
NOT_CONFOUNDING = (
    "Modification is not confounding: it changes no verdict, and it is no reason to "
    "adjust for the covariate or not to."
)

#: What the plot says for a covariate whose modification was not examined.
NOT_EXAMINED = (
    "Effect modification is examined for the candidate covariates\n"
    "once the recommended model is fitted."
)


@dataclass(frozen=True)
class ModificationView:
    """The forest plot's points (label, estimate, low, high, n) on the display
    scale, and the sentences beside it."""

    title: str
    points: tuple[tuple[str, float, float, float, int], ...]
    ratio: bool
    axis_label: str
    summary: str

    @property
    def tick_labels(self) -> tuple[str, ...]:
        """Each stratum named with its rows, top line first as the points are."""
        return tuple(f"{p[0]}\nn = {p[4]:,}" for p in self.points)

    @property
    def null(self) -> float:
        """The no-effect line: 1 for a ratio, 0 for a difference."""
        return 1.0 if self.ratio else 0.0


def _p(p: float) -> str:
    return "p < 0.001" if is_number(p) and p < 0.001 else f"p = {number(p, 3)}"


def _test(m: Modification) -> str:
    stat = "F" if m.interaction_stat_kind == "F" else "χ²"
    return (
        f"interaction test {stat} = {number(m.interaction_stat)} on {m.interaction_df} df, "
        f"{_p(m.interaction_p)}"
    )


def _reri(m: Modification) -> str:
    if m.reri is None or m.reri_ci is None:
        return ""
    return (
        f" On the additive scale, RERI = {number(m.reri)} (95% CI {number(m.reri_ci[0])} to "
        f"{number(m.reri_ci[1])}; Hosmer & Lemeshow 1992)."
    )


def modification_view(
    m: Modification | None,
    name: str,
    effect_measure: str,
    guides: Mapping[str, float] | None = None,
) -> ModificationView | None:
    """What the dialog's modification tab shows for the covariate named ``name``."""
    if m is None or not m.strata:
        return None
    ratio = m.strata[0].ratio is not None
    points = []
    for s in m.strata:
        if ratio and s.ratio is not None and s.ratio_ci is not None:
            points.append((s.level, s.ratio, s.ratio_ci[0], s.ratio_ci[1], s.n))
        else:
            points.append((s.level, s.coef, s.ci[0], s.ci[1], s.n))
    where = "at its quartiles" if m.kind == "quartiles" else "in each of its levels"
    g = guides or {}
    rule = (
        f" (guides: p below {number(g.get('modification_p'), 3)} and stratum estimates "
        f"differing by a ratio of {number(g.get('modification_ratio'))} or more; here "
        f"{number(m.spread)})"
        if g
        else ""
    )
    verdict = (
        f"past the guides{rule}: the effect differs across its levels."
        if m.flagged
        else f"within the guides{rule}."
    )
    summary = (
        f"The exposure's effect {where} of {name}, from the recommended model with the "
        f"exposure × {name} product terms; {_test(m)}: {verdict}{_reri(m)} {NOT_CONFOUNDING}"
    )
    return ModificationView(
        title=f"Exposure effect by {name}",
        points=tuple(points),
        ratio=ratio,
        axis_label=f"{effect_measure or 'estimate'} with 95% CI",
        summary=summary,
    )


def modification_line(m: Modification, name: str) -> str:
    """One line for the page or ``check`` text, for a flagged modifier.

    The strata's estimates are listed with their intervals."""
    parts = []
    for s in m.strata:
        est, lo, hi = (
            (s.ratio, *s.ratio_ci)
            if s.ratio is not None and s.ratio_ci is not None
            else (s.coef, *s.ci)
        )
        parts.append(f"{s.level}: {number(est)} ({number(lo)} to {number(hi)})")
    return (
        f"{name} modifies the exposure's effect ({_test(m)}): {'; '.join(parts)}."
        f"{_reri(m)} Not confounding; no reason to adjust or not."
    )


def flagged_lines(modification: Mapping[str, Modification], names: Mapping[str, str]) -> list[str]:
    """:func:`modification_line` for every flagged modifier, in the given order."""
    return [
        modification_line(m, names.get(c, c) or c) for c, m in modification.items() if m.flagged
    ]
