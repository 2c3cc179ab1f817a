"""The three data sources give the same study, number for number.

The reference is the in-memory engine (today's path, itself checked against
statsmodels and lifelines-free published examples in tests/analysis); the
DuckDB and Dask engines must reproduce its full result — every fit, every
comparison, VIF, verdict, the analytic sample's counts — to 1e-10 relative
for linear models (sums in float64, merged exactly) and to the Newton
tolerance for the iterative families.
"""

from __future__ import annotations

import math
import shutil
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest

from covariscope.data.loading import load_table
from covariscope.data.sources import MemorySource, open_source
from covariscope.data.sources.duck import DuckSource
from covariscope.errors import DataError
from covariscope.model import Diagram, Node, Project
from covariscope.model.project import AnalysisSettings, DataRef, load_project
from covariscope.study import run_study
from covariscope.views.check_json import study_to_json

DEMO = Path(__file__).parents[2] / "src" / "covariscope" / "demo"
FAMILIES = ("linear", "logistic", "risk_ratio", "cox")
#: Relative agreement: exact sums for linear models, the Newton tolerance otherwise.
TOLERANCE = {"linear": 1e-10, "logistic": 1e-7, "risk_ratio": 1e-7, "cox": 1e-10}
#: Parts of the result that name the engine or the file, not the analysis, and the
#: checks that read the rows themselves (effect modification, residual confounding),
#: made in memory only; the diagram checks are compared claim by claim (see
#: _same_numeric_claims).
ENGINE_WORDS = ("messages", "data", "modification", "residual_confounding", "diagram_checks")


def _leaves(value: Any, path: str = "") -> dict[str, Any]:
    if isinstance(value, dict):
        out: dict[str, Any] = {}
        for k, v in value.items():
            out.update(_leaves(v, f"{path}.{k}"))
        return out
    if isinstance(value, list):
        out = {}
        for i, v in enumerate(value):
            out.update(_leaves(v, f"{path}[{i}]"))
        return out
    return {path: value}


def _same_numeric_claims(a: dict[str, Any] | None, b: dict[str, Any] | None, rtol: float) -> None:
    """Rows left in their source test only the claims between numeric variables (from
    the cross-product matrix); those agree with the in-memory study's to rounding."""
    if a is None or b is None:
        assert a is b
        return
    left = {(c["a"], c["b"]): c for c in a["claims"]}
    for claim in b["claims"]:
        mine = left[(claim["a"], claim["b"])]
        if (claim["test"], claim["strength_kind"]) == (mine["test"], mine["strength_kind"]):
            for key in ("statistic", "p", "strength"):
                assert math.isclose(claim[key], mine[key], rel_tol=max(rtol, 1e-8), abs_tol=1e-12)


def assert_same_study(a: dict[str, Any], b: dict[str, Any], rtol: float) -> None:
    """Every leaf of two ``check --json`` results agrees (numbers to ``rtol``)."""
    left = _leaves({k: v for k, v in a.items() if k not in ENGINE_WORDS})
    right = _leaves({k: v for k, v in b.items() if k not in ENGINE_WORDS})
    assert left.keys() == right.keys()
    _same_numeric_claims(a["diagram_checks"], b["diagram_checks"], rtol)
    for key, x in left.items():
        y = right[key]
        if any(isinstance(v, str) and "claim(s)" in v for v in (x, y)):
            continue  # a verdict's count of untested claims: fewer are tested out of memory
        if isinstance(x, float) and isinstance(y, float):
            assert math.isclose(x, y, rel_tol=rtol, abs_tol=1e-12), (key, x, y)
        else:
            assert x == y, (key, x, y)


def generated(n: int, seed: int = 3) -> pd.DataFrame:
    """Two confounders, a text categorical with a chosen reference, a text binary,
    missing values in each, and an outcome for every family (true effects known)."""
    rng = np.random.default_rng(seed)
    age = rng.normal(50, 10, n)
    region = rng.choice(["north", "south", "east"], n, p=[0.5, 0.3, 0.2])
    smoker = rng.choice(["no", "yes"], n, p=[0.7, 0.3])
    z = (age - 50) / 10 + (region == "south") * 0.5
    exposed = (rng.random(n) < 1 / (1 + np.exp(-z))).astype(float)
    lin = 0.4 * exposed + 0.5 * z + 0.3 * (smoker == "yes")
    frame = pd.DataFrame(
        {
            "age": age,
            "region": region,
            "smoker": smoker,
            "exposed": exposed,
            "y": 2 + lin + rng.normal(0, 1, n),
            "event": (rng.random(n) < 1 / (1 + np.exp(-(lin - 1.5)))).astype(np.int64),
            "time": rng.exponential(1 / np.exp(lin - 2)) + 0.01,
        }
    )
    frame.loc[rng.random(n) < 0.02, "age"] = np.nan
    frame.loc[rng.random(n) < 0.02, "region"] = None
    frame.loc[rng.random(n) < 0.01, "smoker"] = None
    return frame


def generated_project(path: Path, family: str) -> Project:
    d = Diagram()
    for node in (
        Node("x", kind="exposure", column="exposed"),
        Node("o", kind="outcome", column="y"),
        Node("age", column="age"),
        Node("region", column="region"),
        Node("smoker", column="smoker"),
    ):
        d.add_node(node)
    for a, b in (("age", "x"), ("age", "o"), ("region", "x"), ("region", "o"), ("x", "o")):
        d.add_arrow(a, b)
    d.add_arrow("smoker", "o")
    analysis = AnalysisSettings(
        family=family,
        proposed=["age", "region"],
        reference_levels={"region": "south"},
        family_columns={
            "logistic": {"outcome": "event"},
            "risk_ratio": {"outcome": "event"},
            "cox": {"time": "time", "event": "event"},
        },
    )
    return Project(d, DataRef(path.name, ""), analysis, path.parent / "study.json")


@pytest.fixture(scope="module")
def generated_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("sources") / "generated.parquet"
    generated(3000).to_parquet(path, row_group_size=700)
    return path


@pytest.fixture(scope="module")
def cluster() -> Any:
    """A small local Dask cluster (threads, so it starts in a second)."""
    distributed = pytest.importorskip("distributed")
    with (
        distributed.LocalCluster(
            n_workers=2, threads_per_worker=1, processes=False, dashboard_address=None
        ) as local,
        distributed.Client(local) as client,
    ):
        yield client


@pytest.fixture(scope="module")
def dask_source(generated_file: Path, cluster: Any) -> Any:
    from covariscope.data.sources.cluster import DaskSource

    return DaskSource(generated_file, client=cluster)


def _study(project: Project, source: Any, family: str) -> dict[str, Any]:
    return study_to_json(run_study(project, source=source, family=family))


@pytest.mark.parametrize("family", FAMILIES)
def test_duckdb_and_dask_give_the_in_memory_study(
    generated_file: Path, dask_source: Any, family: str
) -> None:
    project = generated_project(generated_file, family)
    memory = _study(project, MemorySource(load_table(generated_file)), family)
    duck = DuckSource(generated_file, batch_rows=500)  # several batches per pass
    try:
        in_duckdb = _study(project, duck, family)
    finally:
        duck.close()
    on_dask = _study(project, dask_source, family)
    assert memory["sample"]["used"] < 3000  # missing values were dropped, the same ones
    assert_same_study(memory, in_duckdb, TOLERANCE[family])
    assert_same_study(memory, on_dask, TOLERANCE[family])


@pytest.fixture(scope="module")
def demo_copy(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The demo study beside a Parquet copy of its data (the rows as the loader reads them)."""
    folder = tmp_path_factory.mktemp("demo")
    for name in ("demo_project.json", "demo_levels_project.json", "demo_cohort.csv"):
        shutil.copy(DEMO / name, folder / name)
    load_table(folder / "demo_cohort.csv").frame.to_parquet(folder / "demo_cohort.parquet")
    return folder


@pytest.mark.parametrize("family", FAMILIES)
def test_the_demo_study_is_the_same_on_every_engine(
    family: str, demo_copy: Path, cluster: Any
) -> None:
    from covariscope.data.sources.cluster import DaskSource

    project = load_project(demo_copy / "demo_project.json")
    memory = _study(project, MemorySource(load_table(demo_copy / "demo_cohort.csv")), family)
    duck = DuckSource(demo_copy / "demo_cohort.parquet")
    try:
        in_duckdb = _study(project, duck, family)
    finally:
        duck.close()
    on_dask = _study(project, DaskSource(demo_copy / "demo_cohort.parquet", client=cluster), family)
    assert_same_study(memory, in_duckdb, TOLERANCE[family])
    assert_same_study(memory, on_dask, TOLERANCE[family])


def test_a_multilevel_exposure_is_the_same_in_duckdb(demo_copy: Path) -> None:
    project = load_project(demo_copy / "demo_levels_project.json")
    memory = _study(project, MemorySource(load_table(demo_copy / "demo_cohort.csv")), "logistic")
    duck = DuckSource(demo_copy / "demo_cohort.parquet")
    try:
        in_duckdb = _study(project, duck, "logistic")
    finally:
        duck.close()
    assert memory["exposure_levels"] == in_duckdb["exposure_levels"]
    assert len(memory["estimates"]["crude"]["contrasts"]) == 2
    assert_same_study(memory, in_duckdb, TOLERANCE["logistic"])


def test_a_csv_file_is_read_where_it_lies(demo_copy: Path) -> None:
    project = load_project(demo_copy / "demo_project.json")
    memory = _study(project, MemorySource(load_table(demo_copy / "demo_cohort.csv")), "linear")
    duck = DuckSource(demo_copy / "demo_cohort.csv")
    try:
        in_duckdb = _study(project, duck, "linear")
    finally:
        duck.close()
    assert_same_study(memory, in_duckdb, TOLERANCE["linear"])


def test_categorical_terms_and_reference_levels_are_coded_alike(
    generated_file: Path, dask_source: Any
) -> None:
    from covariscope.study.whole_source import prepare_evidence

    project = generated_project(generated_file, "logistic")
    names = []
    duck = DuckSource(generated_file)
    try:
        for source in (MemorySource(load_table(generated_file)), duck, dask_source):
            _, engine, _ = prepare_evidence(project, source, "logistic", "x", "o", [])
            assert engine is not None
            names.append(engine.design.column_names)
    finally:
        duck.close()
    assert names[0] == ("exposed", "age", "region[east]", "region[north]", "smoker")
    assert names[0] == names[1] == names[2]


def test_a_sample_too_large_for_the_plots_is_said_to_be_a_sample(generated_file: Path) -> None:
    from covariscope.data.sources import batched

    duck = DuckSource(generated_file)
    try:
        full = duck.analytic_sample(("exposed", "age"))
        assert not full.frame_is_sample
        assert len(full.frame) == full.used
        small = batched.PLOT_ROWS
        batched.PLOT_ROWS = 100
        try:
            part = duck.analytic_sample(("exposed", "age"))
        finally:
            batched.PLOT_ROWS = small
    finally:
        duck.close()
    assert part.frame_is_sample
    assert len(part.frame) == 100
    assert part.used == full.used  # the counts stay exact


def test_profiles_count_every_row(generated_file: Path) -> None:
    frame = pd.read_parquet(generated_file)
    duck = DuckSource(generated_file, batch_rows=400)
    try:
        profiles = duck.profiles(("region", "age", "smoker"), {}, {"region": "south"})
    finally:
        duck.close()
    assert profiles["region"].missing == int(frame["region"].isna().sum())
    assert profiles["region"].levels == ("east", "north", "south")
    assert profiles["region"].reference == "south"
    assert profiles["age"].maximum == pytest.approx(float(frame["age"].max()), rel=1e-15)
    assert profiles["smoker"].type == "binary"


def test_engines_are_chosen_by_size_or_by_name(generated_file: Path) -> None:
    from covariscope.data.sources.choose import choose_engine

    assert choose_engine(generated_file, "duckdb") == "duckdb"
    assert choose_engine(generated_file) == "memory"  # small
    assert choose_engine(generated_file, share=1e-12) == "duckdb"


def test_an_excel_workbook_is_refused_out_of_memory_with_the_fix(tmp_path: Path) -> None:
    path = tmp_path / "data.xlsx"
    pd.DataFrame({"a": [1, 2]}).to_excel(path, index=False)
    with pytest.raises(DataError, match="save it as Parquet or CSV"):
        open_source(path, "duckdb")


def test_a_stata_file_is_converted_once_beside_the_project(tmp_path: Path) -> None:
    path = tmp_path / "data.dta"
    pd.DataFrame({"a": [1.0, 2.0, 3.0], "b": [0.5, None, 1.5]}).to_stata(path, write_index=False)
    notes: list[str] = []
    source = open_source(path, "duckdb", cache_dir=tmp_path / "cache", notes=notes)
    assert source.path == path  # the user's file, for its checksum
    assert source.rows == 3
    assert any("converted once to Parquet" in n for n in notes)
    assert len(list((tmp_path / "cache").glob("*.parquet"))) == 1


def test_a_missing_dask_names_the_extra(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    import builtins
    import importlib

    real = importlib.import_module

    def without_dask(name: str, *args: Any) -> Any:
        if name.startswith(("dask", "distributed")):
            raise ImportError(name)
        return real(name, *args)

    monkeypatch.setattr(importlib, "import_module", without_dask)
    assert builtins  # the import machinery itself is untouched
    from covariscope.data.sources.cluster import DaskSource

    with pytest.raises(DataError, match=r"covariscope\[cluster\]"):
        DaskSource(tmp_path / "x.parquet")


def test_cox_out_of_memory_says_it_reads_the_rows_into_memory(generated_file: Path) -> None:
    """Risk sets are sums over rows sorted by time: the review says the rows were read."""
    duck = DuckSource(generated_file)
    try:
        result = run_study(generated_project(generated_file, "cox"), source=duck, family="cox")
    finally:
        duck.close()
    assert result.evidence is not None
    said = [m for m in result.messages if "Cox models need every row" in m]
    assert said
    assert "duckdb read them into memory" in said[0]


def test_a_level_seen_only_outside_the_sample_ends_a_single_value(generated_file: Path) -> None:
    # The types are inferred on a sample; the levels counted over every row decide.
    from covariscope.data.profile import profile_column
    from covariscope.data.sources.batched import FrameCounts

    seen = profile_column(pd.Series(["a"] * 10, name="rare"))
    assert seen.single_value
    counts = FrameCounts(
        rows=11, missing={"rare": 0}, alone={}, several=0, complete=11, levels={"rare": {"a", "b"}}
    )
    duck = DuckSource(generated_file, batch_rows=400)
    try:
        exact = duck._exact(seen, counts, None)
    finally:
        duck.close()
    assert exact.levels == ("a", "b")
    assert not exact.single_value
    assert exact.distinct == 2
