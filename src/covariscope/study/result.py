"""The result of a study: what :func:`covariscope.study.run_study` returns."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

from covariscope.analysis.claim_tests import DiagramChecks
from covariscope.analysis.evalue import EValue
from covariscope.analysis.evidence import EvidenceTable
from covariscope.analysis.fits import Fit
from covariscope.analysis.graph import DiagramAnalysis
from covariscope.analysis.joint_region import CollinearityPicture
from covariscope.analysis.model_terms import ModelTerm
from covariscope.analysis.modification import Modification
from covariscope.analysis.splines import ResidualCheck
from covariscope.analysis.verdicts import Verdict
from covariscope.data.sample import AnalyticSample, CompleteCases

__all__ = ["ESTIMATE_KEYS", "Progress", "StudyResult"]

ESTIMATE_KEYS = ("crude", "proposed", "recommended", "full")

Progress = Callable[[float, str], None]


@dataclass(frozen=True)
class StudyResult:
    """Everything Covariscope says about one project: what :func:`~covariscope.study.run_study` returns."""

    exposure: str
    outcome: str
    family: str
    effect_measure: str
    diagram: DiagramAnalysis
    proposed: tuple[str, ...]
    sample: CompleteCases | AnalyticSample | None
    evidence: EvidenceTable | None
    verdicts: dict[str, Verdict]
    recommended: tuple[str, ...]
    estimates: dict[str, Fit | None]
    collinear_groups: tuple[tuple[str, ...], ...]
    evalue: EValue | None
    thresholds: dict[str, float]
    disagreements: tuple[str, ...]
    messages: tuple[str, ...]
    data_name: str | None
    data_sha256: str | None
    recommended_reason: str = ""
    #: Node id → label, for prose (ids stay the keys of the JSON).
    names: dict[str, str] = field(default_factory=dict)
    #: The diagram's independence claims tested on the analytic sample (None without data).
    diagram_checks: DiagramChecks | None = None
    #: joint confidence regions of collinear groups (and of near-aliases of the exposure)
    pictures: tuple[CollinearityPicture, ...] = ()
    #: effect modification of the exposure's effect by each candidate, in the
    #: recommended model (not confounding; changes no verdict)
    modification: dict[str, Modification] = field(default_factory=dict)
    #: continuous confounders of the recommended model, linear against a spline
    residual_confounding: dict[str, ResidualCheck] = field(default_factory=dict)
    #: Why the bound data gave no estimate ("" when they did or none were
    #: asked for): the verdicts then come from the diagram alone.  ``check``
    #: and ``report`` treat it as a question that cannot be answered (exit 2).
    data_problem: str = ""
    #: how the exposure and each covariate entered the models (type, levels, spline
    #: knots), by node; empty without data
    model_terms: dict[str, ModelTerm] = field(default_factory=dict)
    #: a multi-level categorical exposure's levels as text, the reference first
    #: (empty for a binary or continuous exposure)
    exposure_levels: tuple[str, ...] = ()
    #: The stages this run computed (the rest came from the cache), in order.
    recomputed: tuple[str, ...] = ()
    #: Models this run fitted (the rest came from the cache).
    models_fitted: int = 0
    #: Wall-clock seconds this run took.
    seconds: float = 0.0

    def name(self, node: str) -> str:
        """The label prose uses for a node (a measure group by its members' labels)."""
        return " | ".join(self.names.get(m, m) or m for m in node.split("|"))

    @property
    def keep_one_groups(self) -> tuple[tuple[str, ...], ...]:
        """The groups of which only one member need be kept, sorted.

        Each is the ``group`` of the covariates whose verdict is
        ``keep_one_of``: a collinear group (:attr:`collinear_groups`) less the
        members the diagram needs whichever other is kept (those are
        ``adjust``), so a collinear group may appear whole, in part (two or
        more members left) or not at all.  A saved keep choice is filed
        under the members sorted and joined by ``|``.
        """
        return tuple(
            sorted(
                {tuple(sorted(v.group)) for v in self.verdicts.values() if v.code == "keep_one_of"}
            )
        )

    @property
    def has_data(self) -> bool:
        return self.evidence is not None
