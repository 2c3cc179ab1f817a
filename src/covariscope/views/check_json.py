"""The ``covariscope check --json`` object of a study.

Ids are the keys; the schema ships in ``schemas/check.schema.json``.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from covariscope.analysis.claim_wording import untestable_words
from covariscope.analysis.collinearity import CollinearityReport
from covariscope.analysis.contrasts import ExposureJoint
from covariscope.analysis.evidence import Comparison
from covariscope.analysis.fits import Contrast, Fit
from covariscope.analysis.modification import Modification
from covariscope.model.project import Project
from covariscope.study.result import ESTIMATE_KEYS, StudyResult
from covariscope.views.model_code import model_code, model_code_json

__all__ = ["study_to_json"]


def _clean(value: object) -> Any:
    """JSON-safe: NaN and infinities become null, tuples lists."""
    if isinstance(value, float | np.floating):
        v = float(value)
        return v if math.isfinite(v) else None
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_clean(v) for v in value]
    return value


def _contrast_json(c: Contrast) -> dict[str, Any]:
    return {
        "level": c.level,
        "coef": c.coef,
        "se": c.se,
        "ci": list(c.ci),
        "ratio": c.ratio,
        "ratio_ci": list(c.ratio_ci) if c.ratio_ci is not None else None,
    }


def _fit_json(fit: Fit | None) -> dict[str, Any] | None:
    if fit is None:
        return None
    return {
        "coef": fit.coef,
        "se": fit.se,
        "ci": list(fit.ci),
        "ratio": fit.ratio,
        "ratio_ci": list(fit.ratio_ci) if fit.ratio_ci is not None else None,
        "n": fit.n,
        "ok": fit.ok,
        "message": fit.message or None,
        "contrast": fit.contrast or None,
        "contrasts": [_contrast_json(c) for c in fit.contrasts] if fit.contrasts else None,
    }


def _joint_json(j: ExposureJoint | None) -> dict[str, Any] | None:
    """A multi-level exposure's per-contrast comparisons and joint summary for one covariate."""
    if j is None:
        return None
    return {
        "moved_most": j.moved_most,
        "largest_change_pct": j.largest_change_pct,
        "gvif_root_added": j.gvif_root_added,
        "gvif_root_full": j.gvif_root_full,
        "wald": (
            {"stat": j.wald.stat, "df": j.wald.df, "p": j.wald.p, "kind": j.wald.kind}
            if j.wald is not None
            else None
        ),
        "contrasts": [
            {
                "level": s.level,
                "added": _cmp_json(s.added, with_vif=None, added=True),
                "dropped": _cmp_json(s.dropped, added=False),
            }
            for s in j.contrasts
        ],
    }


def _cmp_json(
    c: Comparison | None, *, with_vif: float | None = None, added: bool
) -> dict[str, Any] | None:
    if c is None:
        return None
    out: dict[str, Any] = {
        "change_pct": c.change_pct if c.change_defined else None,
        "change_pct_ratio": c.change_pct_ratio,
        "se_inflation_pct": c.se_inflation_pct,
    }
    if added:
        out["vif_exposure"] = with_vif
    return out


def _checks_json(result: StudyResult) -> dict[str, Any] | None:
    """The diagram's independence claims: ids sorted within each pair, pairs sorted."""
    checks = result.diagram_checks
    if checks is None:
        return None
    claims = [
        {
            "a": r.claim.a,
            "b": r.claim.b,
            "given": list(r.claim.given),
            "test": r.test,
            "statistic": r.statistic,
            "df": r.df,
            "p": r.p,
            "p_adjusted": r.p_adjusted,
            "strength": r.strength.value,
            "strength_kind": r.strength.kind,
            "failed": r.failed,
        }
        for r in sorted(checks.results, key=lambda r: (r.claim.a, r.claim.b))
    ]
    untestable = [
        [u.a, u.b, untestable_words(u, result.names)]
        for u in sorted(checks.untestable, key=lambda u: (u.a, u.b))
    ]
    return {
        "method": checks.method,
        "tested": checks.tested,
        "failed": checks.failed,
        "untestable": untestable,
        "unsearched": checks.unsearched,
        "claims": claims,
    }


def _modification_json(m: Modification) -> dict[str, Any]:
    """One covariate as a modifier of the exposure's effect (not confounding)."""
    return {
        "form": m.form,
        "strata": [
            {
                "level": s.level,
                "coef": s.coef,
                "se": s.se,
                "ci": list(s.ci),
                "ratio": s.ratio,
                "ratio_ci": list(s.ratio_ci) if s.ratio_ci is not None else None,
                "n": s.n,
            }
            for s in m.strata
        ],
        "interaction_stat": m.interaction_stat,
        "interaction_df": m.interaction_df,
        "interaction_p": m.interaction_p,
        "reri": m.reri,
        "reri_ci": list(m.reri_ci) if m.reri_ci is not None else None,
        "flagged": m.flagged,
    }


def collinearity_json(report: CollinearityReport) -> dict[str, Any] | None:
    """The full model's condition indices (ascending) and, per dimension, the
    variance-decomposition proportions by term, flagged as the analysis
    flagged them (Belsley, Kuh & Welsch 1980)."""
    if report.condition_indices.size == 0:
        return None
    flagged = {f.dimension: f for f in report.flagged}
    dimensions = []
    for k, index in enumerate(report.condition_indices.tolist()):
        props = report.proportions[k].tolist()
        dimensions.append(
            {
                "index": index,
                "proportions": dict(zip(report.columns, props, strict=True)),
                "flagged": k in flagged,
                "nodes": list(flagged[k].nodes) if k in flagged else [],
            }
        )
    return {
        "terms": list(report.columns),
        "condition_indices": report.condition_indices.tolist(),
        "index_threshold": report.index_threshold,
        "proportion_threshold": report.proportion_threshold,
        "dimensions": dimensions,
    }


def study_to_json(
    result: StudyResult, project: Project | None = None, *, data_path: str | None = None
) -> dict[str, Any]:
    """The ``covariscope check --json`` object (schema: schemas/check.schema.json).

    Fields that do not apply are null, never absent; ``model_code`` needs the
    ``project`` (its columns and data file; ``data_path`` names another data
    file) and is null without it.
    """
    out: dict[str, Any] = {}
    review = result.diagram.review
    for key, value in result.diagram.to_json().items():
        out[key] = value
        if key == "minimal_sets":
            # False when the listing stopped at its budget: more sets exist.
            out["minimal_sets_complete"] = result.diagram.minimal_sets_complete
        if key == "open_paths":
            # ``open_paths`` lists at most 500; the count says how many there are.
            out["open_paths_total"] = review.open_paths_total
            out["open_paths_total_exact"] = review.open_paths_total_exact
    out["proposed"] = list(result.proposed)
    ev = result.evidence
    sample = result.sample
    out["family"] = result.family
    out["effect_measure"] = result.effect_measure
    out["data"] = (
        {"name": result.data_name, "sha256": result.data_sha256} if result.data_name else None
    )
    out["sample"] = (
        {
            "rows": sample.rows,
            "used": sample.used,
            "missing_by_column": dict(sample.missing_by_column),
        }
        if sample is not None and ev is not None
        else None
    )
    out["exposure_levels"] = (
        {"reference": result.exposure_levels[0], "levels": list(result.exposure_levels)}
        if result.exposure_levels
        else None
    )
    out["estimates"] = {k: _fit_json(result.estimates.get(k)) for k in ESTIMATE_KEYS}
    out["recommended"] = list(result.recommended)
    covariates: dict[str, Any] = {}
    for c, v in result.verdicts.items():
        e = ev.covariates.get(c) if ev is not None else None
        covariates[c] = {
            "role": result.diagram.roles[c].role,
            "verdict": v.code,
            "label": v.label,
            "reason": v.reason,
            "group": list(v.group) if v.group else None,
            "suggested": v.suggested,
            "added": _cmp_json(e.added, with_vif=e.vif_exposure_added, added=True) if e else None,
            "dropped": _cmp_json(e.dropped, added=False) if e else None,
            "vif": e.vif if e else None,
            "tolerance": e.tolerance if e else None,
            "aux_r2": e.aux_r2 if e else None,
            "r2_exposure": e.r2_exposure if e else None,
            "joint": _joint_json(e.joint) if e else None,
        }
    out["covariates"] = covariates
    # Data-level groups (members may all be ``adjust``); keep_one_groups are the
    # ones a script may reduce to a single member.
    out["collinear_groups"] = [list(g) for g in result.collinear_groups]
    out["keep_one_groups"] = [list(g) for g in result.keep_one_groups]
    out["evalue"] = (
        {
            "estimate": result.evalue.estimate,
            "ci": result.evalue.ci,
            "conversion": result.evalue.conversion,
        }
        if result.evalue is not None
        else None
    )
    out["thresholds"] = dict(result.thresholds)
    out["collinearity"] = collinearity_json(ev.collinearity) if ev is not None else None
    out["modification"] = {c: _modification_json(m) for c, m in result.modification.items()}
    out["residual_confounding"] = {
        c: {
            "linear": r.linear,
            "spline": r.spline,
            "change_pct": r.change_pct,
            "knots": r.knots,
            "flagged": r.flagged,
        }
        for c, r in result.residual_confounding.items()
    }
    out["disagreements"] = list(result.disagreements)
    out["messages"] = list(result.messages)
    out["diagram_checks"] = _checks_json(result)
    out["model_code"] = (
        model_code_json(model_code(result, project, data_path)) if project is not None else None
    )
    cleaned: dict[str, Any] = _clean(out)
    return cleaned
