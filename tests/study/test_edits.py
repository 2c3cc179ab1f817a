"""What an edit recomputes, read from the study cache's own counters (issue 9).

Each test warms one cache with a run, resets its counters, makes one edit
and runs again; the counters (and a data source that logs the columns it
hands out) say which stages ran and which columns were read.  Every second
run is also checked against a fresh run on an empty cache: the cache must
never change an answer.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from covariscope.data.loading import LoadedTable, load_table
from covariscope.model.project import load_project, project_from_dict
from covariscope.study import run_study
from covariscope.study.cache import StageCount, StudyCache
from covariscope.study.source import TableSource
from covariscope.views.check_json import study_to_json
from covariscope.views.recompute import recompute_summary

DEMO = Path(__file__).resolve().parents[2] / "demo_data"

#: Stages that read the data's rows (a pass over one or more columns).
ROW_STAGES = ("profile", "missing", "term", "outcomes", "rows")


class LoggingSource(TableSource):
    """A table source that remembers which columns it handed out."""

    def __init__(self, table: LoadedTable) -> None:
        super().__init__(table)
        self.read: list[str] = []

    def column(self, column: str) -> pd.Series:
        self.read.append(column)
        return super().column(column)

    def missing(self, column: str) -> np.ndarray:
        self.read.append(column)
        return super().missing(column)


def _generated() -> tuple[object, LoadedTable]:
    rng = np.random.default_rng(9)
    n = 3000
    c1, c2, c3, p1 = (rng.normal(size=n) for _ in range(4))
    grp = rng.choice(["a", "b", "c"], size=n)
    x = 0.6 * c1 + 0.4 * c2 + (grp == "b") * 0.5 + rng.normal(size=n)
    y = 1.5 * x + c1 + 0.8 * c2 + 0.5 * c3 + 0.7 * p1 + rng.normal(size=n)
    frame = pd.DataFrame({"x": x, "y": y, "c1": c1, "c2": c2, "c3": c3, "p1": p1, "grp": grp})
    frame["y_bin"] = (y > np.median(y)).astype(int)
    frame.loc[rng.choice(n, 40, replace=False), "c3"] = np.nan
    nodes = ["x", "y", "c1", "c2", "c3", "p1", "grp"]
    arrows = [("x", "y"), ("c1", "x"), ("c1", "y"), ("c2", "x"), ("c2", "y")]
    arrows += [("c3", "y"), ("p1", "y"), ("grp", "x")]
    project = project_from_dict(
        {
            "format": "covariscope-project",
            "version": 1,
            "diagram": {
                "nodes": [
                    {
                        "id": v,
                        "kind": {"x": "exposure", "y": "outcome"}.get(v, "covariate"),
                        "measured": True,
                        "column": v,
                    }
                    for v in nodes
                ],
                "arrows": [{"from": a, "to": b} for a, b in arrows],
            },
            "analysis": {
                "family": "linear",
                "proposed": ["c1"],
                "family_columns": {"logistic": {"outcome": "y_bin"}},
            },
        }
    )
    return project, LoadedTable(frame, Path("generated.csv"), "text", "1" * 64)


def _demo() -> tuple[object, LoadedTable]:
    project = load_project(DEMO / "demo_project.json")
    return project, load_table(DEMO / "demo_cohort.csv")


STUDIES = {"demo": _demo, "generated": _generated}


@pytest.fixture(params=sorted(STUDIES))
def warm(request):
    project, table = STUDIES[request.param]()
    source = LoggingSource(table)
    cache = StudyCache()
    run_study(project, table=source, cache=cache)
    cache.reset_counts()
    source.read.clear()
    return project, source, cache


@pytest.fixture
def rerun(same):
    """Run again on the warm cache; the answer must equal a fresh run's."""

    def again(project, source, cache):
        result = run_study(project, table=source, cache=cache)
        fresh = run_study(project, table=TableSource(source.table), cache=StudyCache())
        assert same(study_to_json(result), study_to_json(fresh))
        return result

    return again


def _misses(cache: StudyCache) -> dict[str, int]:
    return {stage: c.misses for stage, c in cache.counts().items() if c.misses}


def _covariate(project, *, bound=True):
    return next(
        n for n in project.diagram.covariates if n.measured and (n.column is not None) == bound
    )


def test_node_move_and_note_run_nothing(warm, rerun):
    project, source, cache = warm
    node = _covariate(project)
    project.diagram.update_node(node.id, x=node.x + 40.0, y=node.y - 25.0, note="moved")
    result = rerun(project, source, cache)
    assert _misses(cache) == {}
    assert result.recomputed == ()
    assert source.read == []


def test_label_change_rewrites_sentences_only(warm, rerun):
    project, source, cache = warm
    node = _covariate(project)
    project.diagram.update_node(node.id, label="A new label")
    result = rerun(project, source, cache)
    assert set(_misses(cache)) <= {"bindings", "verdicts"}
    assert source.read == []
    assert "A new label" in json.dumps(result.names)


def test_tick_reviews_the_proposal_and_fits_one_model_without_reading_rows(warm, rerun):
    project, source, cache = warm
    candidates = [n.id for n in project.diagram.covariates if n.measured and n.column]
    ticked = next(c for c in candidates if c not in project.proposed)
    project.analysis.proposed = [*project.proposed, ticked]
    rerun(project, source, cache)
    misses = _misses(cache)
    assert set(misses) <= {"review", "evidence", "verdicts", "fit"}
    assert misses.get("fit", 0) <= 1  # the proposed-set model, when no earlier model had its terms
    assert source.read == []


def test_added_arrow_refits_only_new_models_without_reading_rows(warm, rerun):
    project, source, cache = warm
    bound = [n.id for n in project.diagram.covariates if n.measured and n.column]
    a, b = next(
        (a, b)
        for a in bound
        for b in bound
        if a != b
        and not project.diagram.has_arrow(a, b)
        and not project.diagram.has_arrow(b, a)
        and _acyclic_with(project, a, b)
    )
    project.diagram.add_arrow(a, b)
    rerun(project, source, cache)
    misses = _misses(cache)
    assert not set(misses) & {*ROW_STAGES, "summary", "design"}
    assert source.read == []


def _acyclic_with(project, a, b) -> bool:
    import networkx as nx

    G = project.diagram.to_networkx()
    G.add_edge(a, b)
    return nx.is_directed_acyclic_graph(G)


def test_binding_a_column_reads_only_that_column(warm, rerun):
    project, source, cache = warm
    node = next(
        n
        for n in project.diagram.covariates
        if n.measured
        and n.column
        and n.id not in project.proposed
        and not _has_missing(source, n.column)
    )
    column = node.column
    project.diagram.update_node(node.id, column=None)
    cache = StudyCache()  # warmed without the column
    run_study(project, table=source, cache=cache)
    cache.reset_counts()
    source.read.clear()
    (_, narrow), *_ = cache.entries("design")
    project.diagram.update_node(node.id, column=column)
    after = rerun(project, source, cache)
    assert set(source.read) == {column}
    said = recompute_summary(after.recomputed, 0, 0.0)
    assert "the cross-products of new or recoded columns" in said
    assert "every row" not in said
    assert cache.count("rows").misses == 0  # the cross-products were extended, not recomputed
    assert cache.count("term").misses == 1
    # A column that misses no value (its profile says so) drops no row: the
    # sample is the earlier one, and no missing-value mask is read at all.
    assert cache.count("missing").misses == 0
    # The design grew in place: only the new term's columns were written, the
    # others are the narrower design's own (neither copied nor read again).
    *_, (_, wide) = cache.entries("design")
    assert cache.count("column") == StageCount(
        hits=narrow.values.shape[1], misses=wide.blocks[node.id].df
    )
    assert wide.values[:, : narrow.values.shape[1]].ctypes.data == narrow.values.ctypes.data


def _has_missing(source, column) -> bool:
    return bool(source.table.frame[column].isna().any())


def test_switching_family_and_back_refits_nothing(warm, rerun):
    project, source, cache = warm
    project.analysis.family = "logistic"
    run_study(project, table=source, cache=cache)
    project.analysis.family = "linear"
    cache.reset_counts()
    source.read.clear()
    rerun(project, source, cache)
    assert _misses(cache) == {}
    assert source.read == []


def _rebound(rerun, node, family=None):
    """The generated study run with ``node`` unbound, then run again by
    ``rerun`` once it is bound: (before, after, the cache, counts reset between)."""
    project, table = _generated()
    if family is not None:
        project.analysis.family = family
    source = LoggingSource(table)
    project.diagram.update_node(node, column=None)
    cache = StudyCache()
    before = run_study(project, table=source, cache=cache)
    cache.reset_counts()
    project.diagram.update_node(node, column=node)
    return before, rerun(project, source, cache), cache


def test_binding_a_column_refits_only_the_models_that_hold_it(rerun):
    _, result, cache = _rebound(rerun, "p1", "logistic")
    ev = result.evidence
    models = {(), tuple(ev.candidates), *((c,) for c in ev.covariates)}
    models |= {tuple(t for t in ev.candidates if t != c) for c in ev.candidates}
    models |= {f.terms for f in ev.sets.values()}
    holding = [m for m in models if "p1" in m]
    # The models without p1 come over from the engine of the design without it;
    # two more allow for the keep-one ranking's own models.
    assert cache.count("fit").misses <= len(holding) + 2 < len(models)


def test_reference_level_change_recodes_that_column_only(warm, rerun):
    project, source, cache = warm
    node, level = ("smoke", "former") if "smoke" in project.diagram else ("grp", "b")
    column = project.diagram.node(node).column
    project.analysis.reference_levels[column] = level
    rerun(project, source, cache)
    assert set(source.read) == {column}
    assert cache.count("profile").misses == 1
    assert cache.count("term").misses == 1
    assert cache.count("missing").misses == 0


def test_the_data_panel_profiles_come_from_the_same_cache(warm):
    from covariscope.study.prepare import table_profiles

    project, source, cache = warm
    a = project.analysis
    first = table_profiles(cache, source, a.column_types, a.reference_levels)
    cache.reset_counts()
    source.read.clear()
    column = project.diagram.node("c1" if "c1" in project.diagram else "age").column
    types = {**a.column_types, column: "continuous"}
    again = table_profiles(cache, source, types, a.reference_levels)
    assert again.keys() == first.keys()
    assert cache.count("profile").misses <= 1  # only the column whose type was set
    assert set(source.read) <= {column}


#: The stages that read the rows after the verdicts (one entry per item).
READING_STAGES = ("pictures", "modification", "residual")


def test_tick_reads_no_row_for_modification_or_residual_checks(rerun):
    project, table = _generated()
    table = LoggingSource(table)
    cache = StudyCache()
    run_study(project, table=table, cache=cache)
    cache.reset_counts()
    project.analysis.proposed = [*project.proposed, "p1"]
    result = rerun(project, table, cache)
    assert result.modification  # the generated study has a recommended model
    assert cache.count("modification").hits == len(result.modification)
    assert cache.count("residual").hits == len(result.residual_confounding) > 0
    assert not set(_misses(cache)) & set(READING_STAGES)


def test_arrow_that_keeps_the_recommended_set_retests_only_changed_claims(rerun):
    project, table = _generated()
    table = LoggingSource(table)
    cache = StudyCache()
    before = run_study(project, table=table, cache=cache)
    cache.reset_counts()
    project.diagram.add_arrow("p1", "c3")  # c3 and p1 both only cause y
    after = rerun(project, table, cache)
    assert after.recommended == before.recommended
    assert not set(_misses(cache)) & set(READING_STAGES)
    claims = cache.count("claim")
    assert after.diagram_checks is not None
    assert claims.misses + claims.hits == after.diagram_checks.tested
    assert claims.misses < claims.hits


def test_binding_a_candidate_computes_its_own_modification_only(rerun):
    before, after, cache = _rebound(rerun, "p1")
    assert set(after.modification) == set(before.modification) | {"p1"}
    assert cache.count("modification").misses == 1
    assert cache.count("modification").hits == len(before.modification)
    assert cache.count("residual").misses == 0


def test_the_cache_holds_one_copy_of_the_outcome_and_no_mask_for_a_complete_column(warm):
    # Memory, not speed: the outcome the design was built from is the design's
    # own column, and a column with no missing value keeps no byte per row.
    _, source, cache = warm
    (_, design), *_ = cache.entries("design")
    (_, outcomes), *_ = cache.entries("outcomes")
    assert np.shares_memory(outcomes.y, design.values)
    for (_, column), mask in cache.entries("missing"):
        missing = source.table.frame[column].isna().to_numpy()
        np.testing.assert_array_equal(mask, missing)
        if not missing.any():
            assert mask.strides == (0,)


def _fits(result) -> dict[str, object]:
    ev = result.evidence
    fits = {"crude": ev.crude, "full": ev.full, **{f"set {k}": f for k, f in ev.sets.items()}}
    fits |= {f"dropped {k}": f for k, f in ev.dropped_fits.items()}
    return fits


def test_a_grown_design_gives_a_cold_run_s_fits_to_1e_12():
    # Binding p1 grows the design in place (its column after the outcome's) and
    # extends the cross-products; every linear fit must equal the fit of a design
    # built whole from the same rows, to rounding (the sums are added in another order).
    project, table = _generated()
    project.diagram.update_node("p1", column=None)
    cache = StudyCache()
    run_study(project, table=table, cache=cache)
    project.diagram.update_node("p1", column="p1")
    grown = run_study(project, table=table, cache=cache)
    *_, (_, design) = cache.entries("design")
    assert design.outcome_index < design.blocks["p1"].index[0]  # it did grow
    cold = run_study(project, table=table, cache=StudyCache())
    assert _fits(grown).keys() == _fits(cold).keys()
    for name, fit in _fits(grown).items():
        other = _fits(cold)[name]
        assert fit.terms == other.terms, name
        for a, b in ((fit.coef, other.coef), (fit.se, other.se), (fit.resid_sd, other.resid_sd)):
            assert a == pytest.approx(b, rel=1e-12), name
        assert fit.term_coefs.keys() == other.term_coefs.keys(), name
        for k, v in fit.term_coefs.items():
            np.testing.assert_allclose(v, other.term_coefs[k], rtol=1e-12, atol=1e-14)


def test_binding_a_column_with_missing_values_shrinks_the_sample_and_rebuilds_the_design(
    rerun,
):
    # The rows change, so no earlier number of the others can be kept: every
    # column is read and written again, and the answer is a fresh run's.
    before, after, cache = _rebound(rerun, "c3")
    assert after.sample.used == before.sample.used - 40
    assert cache.count("missing").misses == 1  # the new column's mask; the others' are kept
    assert cache.count("column").hits == 0
    assert cache.count("rows").misses == 1  # the cross-products of the new rows
    # and the status bar says every row was read again
    assert "the cross-products of every row" in recompute_summary(after.recomputed, 0, 0.0)
