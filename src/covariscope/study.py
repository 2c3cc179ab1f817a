"""The study: one project, its data and every analysis, tied together.

:func:`run_study` is the one place that turns a project (diagram, data
reference, settings) into the answer the analyst reads: roles and
adjustment sets from the diagram, the comparison models and evidence from
the data, one verdict per covariate, the recommended set with its estimate
and E-value, and plain-words messages.  The GUI, the command line and the
report call it; none of them recomputes a statistic.

Without data (no data file, or none bound) the result is graph-only: the
verdicts come from the diagram alone and say so, and the sample, evidence,
estimates and E-value are None.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import networkx as nx
import numpy as np
import pandas as pd

from covariscope.analysis.design import TermSpec, make_design
from covariscope.analysis.evalue import COMMON_OUTCOME_PREVALENCE, EValue, evalue_for_estimate
from covariscope.analysis.evidence import (
    Comparison,
    EvidenceEngine,
    EvidenceTable,
    compute_evidence,
)
from covariscope.analysis.fits import RATIO_FAMILIES, Fit, effect_measure
from covariscope.analysis.graph import (
    DiagramAnalysis,
    analyse_diagram,
    backdoor_paths,
    is_sufficient,
)
from covariscope.analysis.recommend import pair_r2, recommend_set
from covariscope.analysis.verdicts import (
    LABELS,
    VERDICTS,
    Facts,
    Numbers,
    Shift,
    Verdict,
    collinear_groups,
    decide_verdict,
    format_set,
)
from covariscope.data.coerce import coerce_column
from covariscope.data.loading import LoadedTable, load_table
from covariscope.data.profile import profile_table
from covariscope.data.sample import AnalyticSample, analytic_sample
from covariscope.model.errors import DataError
from covariscope.model.project import DEFAULT_THRESHOLDS, Project

__all__ = [
    "LABELS",
    "VERDICTS",
    "StudyResult",
    "Verdict",
    "format_study_text",
    "run_study",
    "study_to_json",
]

ESTIMATE_KEYS = ("crude", "proposed", "recommended", "full")
_TERM_TYPES = ("continuous", "binary", "count", "categorical")

Progress = Callable[[float, str], None]


@dataclass(frozen=True)
class StudyResult:
    """Everything Covariscope says about one project (see STUDY_API)."""

    exposure: str
    outcome: str
    family: str
    effect_measure: str
    diagram: DiagramAnalysis
    proposed: tuple[str, ...]
    sample: AnalyticSample | None
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

    @property
    def has_data(self) -> bool:
        return self.evidence is not None


# -- data preparation ----------------------------------------------------------------


def _outcome_columns(
    project: Project, family: str, outcome_column: str | None
) -> dict[str, str | None]:
    chosen = dict(project.analysis.family_columns.get(family, {}))
    cols: dict[str, str | None] = {
        "outcome": chosen.get("outcome", outcome_column),
        "time": chosen.get("time"),
        "event": chosen.get("event"),
        "offset": chosen.get("offset"),
    }
    if family == "cox":
        cols["outcome"] = None
    return cols


def _prepare(
    project: Project,
    frame: pd.DataFrame,
    family: str,
    exposure: str,
    outcome: str,
    analysis: DiagramAnalysis,
    messages: list[str],
) -> tuple[AnalyticSample | None, EvidenceEngine | None, list[str]]:
    """Analytic sample and evidence engine, or (None, None, ...) with a message."""
    diagram = project.diagram
    x_col = diagram.node(exposure).column
    y_col = diagram.node(outcome).column
    if x_col is None:
        messages.append(
            f'The exposure "{exposure}" is not bound to a data column, so only the diagram is analysed; bind it to a column.'
        )
        return None, None, []
    cols = _outcome_columns(project, family, y_col)
    if family == "cox" and (cols["time"] is None or cols["event"] is None):
        messages.append(
            "The Cox family needs a time and an event column; set them for the project "
            "(analysis.family_columns.cox), or choose another family. Only the diagram is analysed."
        )
        return None, None, []
    if family != "cox" and cols["outcome"] is None:
        messages.append(
            f'The outcome "{outcome}" is not bound to a data column, so only the diagram is analysed; bind it to a column.'
        )
        return None, None, []
    bound: list[str] = []
    for node in diagram.covariates:
        if not node.measured or node.column is None:
            continue
        if node.column not in frame.columns:
            messages.append(
                f'"{node.id}" is bound to the column "{node.column}", which is not in the data; it is left out.'
            )
            continue
        bound.append(node.id)
    outcome_cols = [c for c in (cols["outcome"], cols["time"], cols["event"], cols["offset"]) if c]
    needed = list(
        dict.fromkeys([*outcome_cols, x_col, *(diagram.node(b).column or "" for b in bound)])
    )
    missing_cols = [c for c in needed if c not in frame.columns]
    if missing_cols:
        messages.append(
            f"The data have no column {', '.join(map(repr, missing_cols))}; only the diagram is analysed. "
            "Bind existing columns."
        )
        return None, None, []
    types = project.analysis.column_types
    refs = project.analysis.reference_levels
    sub = frame.loc[:, needed]
    profiles = profile_table(
        sub,
        {k: v for k, v in types.items() if k in sub.columns},
        {k: v for k, v in refs.items() if k in sub.columns},
    )
    usable: list[str] = []
    for b in bound:
        column = diagram.node(b).column
        assert column is not None
        kind = profiles[column].type
        if kind not in _TERM_TYPES:
            messages.append(
                f'"{b}" is bound to "{column}", a {kind} column, which a model cannot use; '
                "it is left out (set its type if this is wrong)."
            )
            continue
        usable.append(b)
    bound = usable
    needed = list(
        dict.fromkeys([*outcome_cols, x_col, *(diagram.node(b).column or "" for b in bound)])
    )
    sample = analytic_sample(frame, needed)
    work = sample.frame.copy()
    specs: dict[str, TermSpec] = {}
    for b in bound:
        column = diagram.node(b).column
        assert column is not None
        specs[b] = _spec(work, column, profiles[column].type, profiles[column].reference)
    x_spec = _spec(work, x_col, profiles[x_col].type, profiles[x_col].reference)
    for key in ("outcome", "event"):
        col = cols[key]
        if col is not None and profiles[col].type == "binary":
            work[col] = coerce_column(work[col], "binary", profiles[col].reference)
    for key in ("time", "offset"):
        col = cols[key]
        if col is not None:
            work[col] = coerce_column(work[col], "continuous")
    if cols["outcome"] is not None and profiles[cols["outcome"]].type in ("continuous", "count"):
        work[cols["outcome"]] = coerce_column(work[cols["outcome"]], "continuous")
    design = make_design(
        work,
        exposure=x_spec,
        covariates=specs,
        outcome=cols["outcome"],
        family=family,
        time=cols["time"],
        event=cols["event"],
        offset=cols["offset"],
        exposure_node=exposure,
    )
    return sample, EvidenceEngine(design, family), bound


def _spec(work: pd.DataFrame, column: str, kind: str, reference: Any) -> TermSpec:
    if kind in ("continuous", "count"):
        work[column] = coerce_column(work[column], kind)
        return TermSpec(column, kind)
    if kind == "binary":
        work[column] = coerce_column(work[column], "binary", reference)
        return TermSpec(column, "binary", 0.0)
    return TermSpec(column, "categorical", reference)


# -- helpers -------------------------------------------------------------------------


def _finite(value: float | None) -> float | None:
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _shift(c: Comparison | None) -> Shift | None:
    if c is None:
        return None
    change = _finite(c.change_pct) if c.change_defined else None
    return Shift(change, _finite(c.se_inflation_pct), _finite(c.change_pct_ratio))


def _numbers(ev: EvidenceTable | None, node: str) -> Numbers | None:
    if ev is None or node not in ev.covariates:
        return None
    c = ev.covariates[node]
    return Numbers(
        added=_shift(c.added),
        dropped=_shift(c.dropped),
        vif_exposure=_finite(c.vif_exposure_added),
        vif=_finite(c.vif),
        aux_r2=_finite(c.aux_r2),
        r2_exposure=_finite(c.r2_exposure),
    )


def _opened_paths(
    G: nx.DiGraph, x: str, y: str, proposed: Sequence[str], node: str
) -> tuple[tuple[str, ...], ...]:
    """Backdoor paths open given the proposed set but closed without ``node``."""
    with_open = {p.nodes for p in backdoor_paths(G, x, y, proposed).paths if p.open}
    rest = [p for p in proposed if p != node]
    without_open = {p.nodes for p in backdoor_paths(G, x, y, rest).paths if p.open}
    return tuple(sorted(with_open - without_open))


def _would_close(da: DiagramAnalysis, node: str) -> tuple[tuple[str, ...], ...]:
    facts = da.roles[node]
    paths = da.paths.paths
    out = [
        paths[i].nodes
        for i, collider in facts.on_paths
        if not collider and i < len(paths) and paths[i].open
    ]
    return tuple(out)


def _stands_for(G: nx.DiGraph, da: DiagramAnalysis, node: str) -> tuple[str, ...]:
    return tuple(
        sorted(
            a for a in nx.ancestors(G, node) if a in da.roles and da.roles[a].role == "confounder"
        )
    )


def _se_lookup(
    ev: EvidenceTable | None, names: Mapping[tuple[str, ...], str]
) -> Callable[[tuple[str, ...]], float | None]:
    def se_of(members: tuple[str, ...]) -> float | None:
        if ev is None:
            return None
        fit = ev.sets.get(names.get(members, ""))
        return fit.se if fit is not None and fit.ok else None

    return se_of


def _evalue(
    fit: Fit | None, family: str, measure: str, prepared_y: np.ndarray | None, share: float | None
) -> tuple[EValue | None, str | None]:
    if fit is None or not fit.ok:
        return None, None
    try:
        if family in RATIO_FAMILIES:
            ratio, ratio_ci = fit.ratio, fit.ratio_ci
            assert ratio is not None
            assert ratio_ci is not None
            common = share is not None and share >= COMMON_OUTCOME_PREVALENCE
            return evalue_for_estimate(ratio, ratio_ci, measure, common_outcome=common), None
        if family == "linear" and prepared_y is not None and len(prepared_y) > 1:
            sd = float(np.std(prepared_y, ddof=1))
            return evalue_for_estimate(fit.coef, fit.ci, "mean difference", outcome_sd=sd), None
    except (ValueError, ZeroDivisionError, OverflowError) as exc:
        return None, f"The E-value could not be computed: {exc}."
    return None, None


# -- the study -----------------------------------------------------------------------


def run_study(
    project: Project,
    *,
    table: LoadedTable | None = None,
    family: str | None = None,
    progress: Progress | None = None,
    cancel: Callable[[], bool] | None = None,
) -> StudyResult:
    """Analyse a project: diagram, data, evidence, verdicts and the recommended set.

    Parameters
    ----------
    project : Project
    table : LoadedTable, optional
        Data to use; default: the project's data file when it names one.
    family : str, optional
        Model family; default: the project's.
    progress : callable(fraction, text), optional
    cancel : callable() → bool, optional
        Checked between models (raises
        :class:`~covariscope.analysis.evidence.EvidenceCancelledError`).

    Raises
    ------
    DiagramError
        No exposure or outcome.
    DataError
        The project's data file cannot be read.

    Examples
    --------
    >>> from covariscope.model import Diagram, Node, Project
    >>> d = Diagram()
    >>> for n in (Node("x", kind="exposure"), Node("y", kind="outcome"), Node("c")):
    ...     d.add_node(n)
    >>> for a, b in (("c", "x"), ("c", "y"), ("x", "y")):
    ...     d.add_arrow(a, b)
    >>> r = run_study(Project(d))
    >>> r.verdicts["c"].code, r.recommended, r.evidence is None
    ('adjust', ('c',), True)
    """
    diagram = project.diagram
    exposure, outcome = diagram.require_question()
    family = family or project.analysis.family
    measure = effect_measure(family)
    thresholds = dict(DEFAULT_THRESHOLDS)
    thresholds.update(project.analysis.thresholds)
    proposed = tuple(p for p in project.proposed if p in diagram)
    messages: list[str] = []

    def report(fraction: float, text: str) -> None:
        if progress is not None:
            progress(fraction, text)

    report(0.0, "Reading the diagram")
    G = diagram.to_networkx()
    da = analyse_diagram(G, exposure, outcome, proposed)

    if table is None and project.data is not None:
        report(0.05, "Loading the data")
        table = load_table(project.data.resolve(project.path))
    data_name = table.path.name if table is not None else None
    data_sha = table.sha256 if table is not None else None
    stored_sha = project.data.sha256 if project.data is not None else None
    if table is not None and stored_sha and data_sha and data_sha != stored_sha:
        messages.append(
            f"The data file {data_name} has changed since it was bound to this project "
            "(its SHA-256 differs); check that it is the intended file."
        )

    sample: AnalyticSample | None = None
    engine: EvidenceEngine | None = None
    evidence: EvidenceTable | None = None
    bound: list[str] = []
    if table is not None:
        try:
            sample, engine, bound = _prepare(
                project, table.frame, family, exposure, outcome, da, messages
            )
        except DataError as exc:
            messages.append(f"{exc} Only the diagram is analysed.")
            sample, engine = None, None
    else:
        messages.append(
            "No data are bound to this project, so the verdicts come from the diagram alone; "
            "load the study data to see how each covariate moves the estimate."
        )

    minimal = [tuple(s) for s in da.minimal_sets]
    set_names = {m: f"minimal:{i}" for i, m in enumerate(minimal)}
    if engine is not None:
        report(0.15, "Fitting the comparison models")
        roles = da.roles
        candidates = [
            b
            for b in bound
            if not roles[b].descendant_of_exposure
            and not roles[b].descendant_of_outcome
            and b not in da.measures_exposure
            and b not in da.measures_outcome
        ]
        sets: dict[str, Sequence[str]] = {}
        unbound_proposed = [p for p in proposed if p not in bound]
        if unbound_proposed:
            messages.append(
                f"The proposed set holds {', '.join(unbound_proposed)}, which has no data, so the "
                "proposed model is not fitted."
            )
        else:
            sets["proposed"] = proposed
        for members, name in set_names.items():
            if all(m in bound for m in members):
                sets[name] = members

        def step(done: int, total: int) -> None:
            report(0.15 + 0.8 * done / max(total, 1), f"Fitting model {done} of {total}")

        evidence = compute_evidence(
            engine,
            candidates=candidates,
            added=bound,
            sets=sets,
            progress=step,
            cancel=cancel,
            index_threshold=thresholds["condition_index"],
        )
        messages.extend(evidence.warnings)
        if sample is not None and sample.message:
            messages.append(sample.message)

    # Collinear confounder groups (proxy links, R² between them, flagged dimensions).
    confounders = [
        c
        for c, f in da.roles.items()
        if f.role == "confounder" and diagram.node(c).measured and c not in da.measures_exposure
    ]
    r2_pairs: dict[tuple[str, str], float] = {}
    flagged: list[tuple[str, ...]] = []
    if evidence is not None and engine is not None:
        blocks = {
            c: list(engine.design.blocks[c].index) for c in confounders if c in engine.design.blocks
        }
        r2_pairs = pair_r2(engine.summary.correlation, blocks)
        flagged = [tuple(d.nodes) for d in evidence.collinearity.flagged]
    groups = collinear_groups(
        confounders,
        proxy_groups=da.groups,
        pair_r2=r2_pairs,
        flagged=flagged,
        r2_threshold=thresholds["r2"],
    )

    rec = recommend_set(
        minimal,
        proposed=proposed,
        groups=groups,
        keep_choices=project.analysis.keep_choices,
        se_of=_se_lookup(evidence, set_names),
    )
    recommended = rec.members or ()
    if evidence is not None and rec.members is not None:
        name = set_names.get(tuple(sorted(rec.members)), "")
        if name not in evidence.sets:
            messages.append(
                "The recommended set holds a covariate without data, so its model is not fitted."
            )
    if not da.identifiable:
        messages.append(
            "No set of measured covariates is sufficient in this diagram: the effect is not "
            "identified by adjustment (see the unmeasured variables and the E-value)."
        )
    if proposed and not da.review.sufficient:
        messages.append(
            f"The proposed set {format_set(proposed)} is not sufficient: it leaves "
            f"{len(da.review.open_paths)} backdoor path(s) open."
        )

    # Verdicts.
    base = list(recommended) if rec.members is not None else list(proposed)
    verdicts: dict[str, Verdict] = {}
    for c, facts in da.roles.items():
        node = diagram.node(c)
        group = next((g for g in groups if c in g), ())
        group_alone: tuple[str, ...] = ()
        suggested: str | None = None
        why = ""
        if group:
            rest = [m for m in base if m not in group]
            group_alone = tuple(m for m in group if is_sufficient(G, exposure, outcome, [*rest, m]))
            key = "|".join(sorted(group))
            chosen = project.analysis.keep_choices.get(key)
            in_rec = [m for m in group if m in recommended]
            if chosen in group:
                suggested, why = chosen, "it is the saved choice"
            elif in_rec:
                suggested, why = in_rec[0], "it is the member in the recommended set"
            elif group_alone:
                suggested = group_alone[0]
        stands = _stands_for(G, da, c) if facts.role == "confounder_proxy" else ()
        adjusted = tuple(s for s in stands if diagram.node(s).measured and s in base)
        f = Facts(
            node=c,
            role=facts.role,
            measured=node.measured,
            has_data=evidence is not None and c in evidence.covariates,
            measures_exposure=c in da.measures_exposure,
            measures_outcome=c in da.measures_outcome,
            in_proposed=c in proposed,
            group=group,
            group_alone=group_alone,
            suggested=suggested,
            suggested_why=why,
            opened_paths=(
                _opened_paths(G, exposure, outcome, proposed, c)
                if facts.role == "collider" and c in proposed
                else ()
            ),
            stands_for=stands,
            stands_for_adjusted=adjusted,
            would_close=_would_close(da, c) if not node.measured else (),
            sufficient_without=(True if rec.members is not None else (False if proposed else None)),
            set_name="recommended" if rec.members is not None else "proposed",
            set_members=tuple(base),
        )
        verdict = decide_verdict(f, _numbers(evidence, c), family=family, thresholds=thresholds)
        if evidence is None and node.measured and verdict.code != "unmeasured":
            verdict = Verdict(
                verdict.node,
                verdict.code,
                verdict.label,
                verdict.reason.rstrip(".") + " (from the diagram alone; no data).",
                verdict.group,
                verdict.suggested,
            )
        verdicts[c] = verdict

    estimates: dict[str, Fit | None] = dict.fromkeys(ESTIMATE_KEYS)
    ev_value: EValue | None = None
    if evidence is not None and engine is not None:
        estimates["crude"] = evidence.crude
        estimates["full"] = evidence.full
        estimates["proposed"] = evidence.sets.get("proposed")
        if rec.members is not None:
            estimates["recommended"] = evidence.sets.get(
                set_names.get(tuple(sorted(rec.members)), "")
            )
        design = engine.design
        share = None
        if family == "cox" and design.event is not None:
            share = float(np.mean(design.event))
        elif family in ("logistic", "risk_ratio") and design.y is not None:
            share = float(np.mean(design.y > 0))
        ev_value, problem = _evalue(estimates["recommended"], family, measure, design.y, share)
        if problem:
            messages.append(problem)

    disagreements = tuple(
        f"{v.node}: {v.reason}"
        for v in verdicts.values()
        if v.code == "review"
        or (v.code == "exclude_measures_exposure" and v.node not in da.measures_exposure)
    )
    messages.append(
        "The diagram holds assumptions the data cannot fully test; the thresholds are guides, "
        "not rules, and unmeasured confounding is possible."
    )
    report(1.0, "Done")
    return StudyResult(
        exposure=exposure,
        outcome=outcome,
        family=family,
        effect_measure=measure,
        diagram=da,
        proposed=proposed,
        sample=sample,
        evidence=evidence,
        verdicts=verdicts,
        recommended=tuple(recommended),
        estimates=estimates,
        collinear_groups=groups,
        evalue=ev_value,
        thresholds=thresholds,
        disagreements=disagreements,
        messages=tuple(dict.fromkeys(messages)),
        data_name=data_name,
        data_sha256=data_sha,
        recommended_reason=rec.reason,
    )


# -- output --------------------------------------------------------------------------


def _clean(value: Any) -> Any:
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


def study_to_json(result: StudyResult) -> dict[str, Any]:
    """The ``covariscope check --json`` object (schema: schemas/check.schema.json).

    Fields that do not apply are null, never absent.
    """
    out: dict[str, Any] = dict(result.diagram.to_json())
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
        }
    out["covariates"] = covariates
    out["collinear_groups"] = [list(g) for g in result.collinear_groups]
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
    out["disagreements"] = list(result.disagreements)
    out["messages"] = list(result.messages)
    cleaned: dict[str, Any] = _clean(out)
    return cleaned


def _fmt(value: float | None, spec: str = ".1f", suffix: str = "") -> str:
    if value is None or not math.isfinite(value):
        return "–"
    return f"{value:{spec}}{suffix}"


def _estimate_line(name: str, fit: Fit | None, measure: str) -> str:
    if fit is None:
        return f"  {name:<12} not fitted"
    if not fit.ok:
        return f"  {name:<12} could not be fitted: {fit.message}"
    if fit.ratio is not None and fit.ratio_ci is not None:
        lo, hi = fit.ratio_ci
        return f"  {name:<12} {measure} {fit.ratio:.3f} (95% CI {lo:.3f} to {hi:.3f}), n = {fit.n}"
    lo, hi = fit.ci
    return (
        f"  {name:<12} {measure} {fit.coef:.3f} (95% CI {lo:.3f} to {hi:.3f}), "
        f"SE {fit.se:.3f}, n = {fit.n}"
    )


def format_study_text(result: StudyResult) -> str:
    """The readable review that ``covariscope check`` prints."""
    t = result.thresholds
    lines = [
        f"Effect of {result.exposure} on {result.outcome} ({result.family} model, {result.effect_measure})",
        f"Data: {result.data_name or 'none'}"
        + (
            f"; {result.sample.used} of {result.sample.rows} rows used (complete cases)"
            if result.sample is not None and result.evidence is not None
            else ""
        ),
        f"Guides (not rules): change {t['change_pct']:g}%, SE inflation {t['se_inflation_pct']:g}%, "
        f"VIF {t['vif']:g}, R² {t['r2']:g}, condition index {t['condition_index']:g}",
        "",
    ]
    ev = result.evidence
    ratio = result.family in RATIO_FAMILIES
    header = f"{'covariate':<14} {'role':<22} {'verdict':<26} {'change %':>9} {'SE infl %':>10} {'VIF':>7}"
    lines += [header, "-" * len(header)]
    for c, v in result.verdicts.items():
        e = ev.covariates.get(c) if ev is not None else None
        change = se = vif = None
        if e is not None:
            change = (
                e.added.change_pct_ratio
                if ratio
                else (e.added.change_pct if e.added.change_defined else None)
            )
            se = e.added.se_inflation_pct
            vif = e.vif  # of the covariate in the full model; none when it is not a candidate
        lines.append(
            f"{c:<14} {result.diagram.roles[c].role:<22} {v.code:<26} {_fmt(change, '+.1f'):>9} "
            f"{_fmt(se, '+.1f'):>10} {_fmt(vif, '.2f'):>7}"
        )
    lines.append(
        "change % and SE infl %: the covariate added alone to the crude model; "
        "VIF: the covariate in the full model (– when it is not a candidate)."
    )
    lines.append("")
    lines.append("Reasons:")
    for c, v in result.verdicts.items():
        lines.append(f"  {c}: {v.reason}")
    lines.append("")
    da = result.diagram
    sets = (
        "; ".join(format_set(s) for s in da.minimal_sets) or "none (not identified by adjustment)"
    )
    lines.append(f"Minimal sufficient sets: {sets}")
    lines.append(
        f"Proposed set: {format_set(result.proposed)} — "
        + (
            "sufficient"
            if da.review.sufficient
            else f"NOT sufficient ({len(da.review.open_paths)} open path(s))"
        )
    )
    if da.review.open_paths:
        for p in da.review.open_paths[:5]:
            lines.append(f"    open: {' – '.join(p)}")
    if da.review.harmful:
        lines.append(f"    harmful: {', '.join(da.review.harmful)}")
    if da.review.unnecessary:
        lines.append(f"    unnecessary: {', '.join(da.review.unnecessary)}")
    lines.append(
        f"Recommended set: {format_set(result.recommended) if result.recommended else 'none'}"
    )
    if result.recommended_reason:
        lines.append(f"    {result.recommended_reason}")
    if result.collinear_groups:
        lines.append(
            "Collinear groups: " + "; ".join(format_set(g) for g in result.collinear_groups)
        )
    lines.append("")
    if ev is not None:
        lines.append("Estimates:")
        for key in ESTIMATE_KEYS:
            lines.append(_estimate_line(key, result.estimates.get(key), result.effect_measure))
        if result.evalue is not None:
            lines.append(
                f"E-value (recommended): {result.evalue.estimate:.2f} for the estimate, "
                f"{result.evalue.ci:.2f} for the CI limit nearer the null ({result.evalue.conversion})"
            )
        lines.append("")
    if result.disagreements:
        lines.append("Where diagram and data disagree:")
        lines += [f"  - {d}" for d in result.disagreements]
        lines.append("")
    lines.append("Cautions:")
    lines += [f"  - {m}" for m in result.messages]
    return "\n".join(lines) + "\n"
