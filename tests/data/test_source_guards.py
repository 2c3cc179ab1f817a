"""The guards against bad data hold on every engine, not only in memory.

One table of hostile data files (zero bytes inside a value or at the end,
stray text in a numeric column, nested Parquet columns used or unused, data
paths that are not regular files) is read through the in-memory, DuckDB and
Dask engines; each case must end the same way on each: refused with the same
plain message, or analysed with the same note and the same estimate.
"""

from __future__ import annotations

import json
import os
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from covariscope.data.sources import open_source
from covariscope.errors import DataError
from covariscope.model.project import load_project
from covariscope.study import run_study

N = 120


def _frame() -> pd.DataFrame:
    rng = np.random.default_rng(3)
    c = rng.normal(size=N)
    x = c + rng.normal(size=N)
    return pd.DataFrame({"x": x, "y": x + c + rng.normal(size=N), "c": c})


def _csv_with_nul(folder: Path) -> str:
    text = _frame().to_csv(index=False).encode()
    at = text.index(b"\n", 200) + 3
    (folder / "data.csv").write_bytes(text[:at] + b"\0" + text[at:])
    return "data.csv"


def _csv_with_zero_tail(folder: Path) -> str:
    (folder / "data.csv").write_bytes(_frame().to_csv(index=False).encode() + b"\0" * 100_000)
    return "data.csv"


def _stray(column: str, suffix: str) -> Callable[[Path], str]:
    def write(folder: Path) -> str:
        frame = _frame().astype({column: str})
        frame.loc[17, column] = "n.a."
        if suffix == "csv":
            frame.to_csv(folder / "data.csv", index=False)
        else:
            frame.to_parquet(folder / "data.parquet", index=False)
        return f"data.{suffix}"

    return write


def _nested(bound: bool) -> Callable[[Path], str]:
    def write(folder: Path) -> str:
        frame = _frame()
        table = pa.Table.from_pandas(frame.drop(columns="c") if bound else frame)
        if bound:
            table = table.append_column("c", pa.array([{"a": 1}] * N))
        else:
            table = table.append_column("tags", pa.array([[1, 2]] * N))
        pq.write_table(table, folder / "data.parquet")
        return "data.parquet"

    return write


def _fifo(folder: Path) -> str:
    os.mkfifo(folder / "data.parquet")
    return "data.parquet"


def _folder(folder: Path) -> str:
    (folder / "data.parquet").mkdir()
    return "data.parquet"


def _device_link(folder: Path) -> str:
    (folder / "data.parquet").symlink_to("/dev/urandom")
    return "data.parquet"


REFUSED = "refused"
SAID = "said"
#: (case, writer, outcome, the words every engine uses)
CASES: list[tuple[str, Callable[[Path], str], str, str]] = [
    ("nul-inside-a-value", _csv_with_nul, REFUSED, "zero byte (NUL) at line 6 (byte 243)"),
    ("zero-bytes-at-the-end", _csv_with_zero_tail, REFUSED, "ends in 100,000 zero bytes"),
    ("stray-text-exposure-csv", _stray("x", "csv"), REFUSED, "'n.a.' in data row(s) 18"),
    ("stray-text-exposure-parquet", _stray("x", "parquet"), REFUSED, "'n.a.' in data row(s) 18"),
    ("stray-text-covariate-parquet", _stray("c", "parquet"), SAID, "'n.a.' in data row(s) 18"),
    ("nested-column-unused", _nested(bound=False), SAID, "Column 'tags' holds list"),
    ("nested-column-bound", _nested(bound=True), SAID, "Column 'c' holds struct"),
    ("fifo", _fifo, REFUSED, "is not a regular file"),
    ("folder", _folder, REFUSED, "is a folder, not a data file"),
    ("device-behind-a-link", _device_link, REFUSED, "is not a regular file"),
]
ENGINES = ("memory", "duckdb", "dask")


@pytest.fixture(scope="module")
def cluster() -> Any:
    """A small local Dask cluster (threads, so it starts in a second)."""
    distributed = pytest.importorskip("distributed")
    with (
        distributed.LocalCluster(
            n_workers=1, threads_per_worker=1, processes=False, dashboard_address=None
        ) as local,
        distributed.Client(local) as client,
    ):
        yield client


def _project(folder: Path, data: str) -> Path:
    nodes = [
        {"id": "x", "kind": "exposure", "column": "x"},
        {"id": "y", "kind": "outcome", "column": "y"},
        {"id": "c", "column": "c"},
    ]
    arrows = [{"from": "x", "to": "y"}, {"from": "c", "to": "x"}, {"from": "c", "to": "y"}]
    path = folder / "study.json"
    path.write_text(
        json.dumps(
            {
                "format": "covariscope-project",
                "version": 1,
                "diagram": {"nodes": nodes, "arrows": arrows},
                "data": {"path": data},
            }
        )
    )
    return path


def _open(path: Path, engine: str, request: pytest.FixtureRequest) -> Any:
    if engine == "dask" and path.suffix == ".parquet" and path.is_file() and not path.is_symlink():
        from covariscope.data.sources.cluster import DaskSource

        return DaskSource(path, client=request.getfixturevalue("cluster"))
    return open_source(path, engine)


def _outcome(
    folder: Path, write: Callable[[Path], str], engine: str, request: pytest.FixtureRequest
) -> tuple[str, Any]:
    """("refused", message) or ("said", result)."""
    project = load_project(_project(folder, write(folder)))
    assert project.data is not None
    try:
        source = _open(project.data.resolve(project.path), engine, request)
        try:
            return SAID, run_study(project, source=source)
        finally:
            getattr(source, "close", lambda: None)()
    except DataError as exc:
        return REFUSED, str(exc)


@pytest.mark.parametrize("engine", ENGINES)
@pytest.mark.parametrize(("name", "write", "expected", "words"), CASES, ids=[c[0] for c in CASES])
def test_every_engine_meets_bad_data_with_the_same_words(
    tmp_path: Path,
    request: pytest.FixtureRequest,
    engine: str,
    name: str,
    write: Callable[[Path], str],
    expected: str,
    words: str,
) -> None:
    folder = tmp_path / name
    folder.mkdir()
    if engine == "dask" and name.startswith(("nul", "zero", "stray-text-exposure-csv")):
        # the Dask engine reads Parquet only, and says so before anything else
        words = "The Dask engine reads Parquet"
    how, what = _outcome(folder, write, engine, request)
    assert how == expected, what
    if how == REFUSED:
        assert words in what
        return
    assert any(words in m for m in what.messages), what.messages
    crude = what.estimates["crude"]
    assert crude is not None
    # the same estimate as every other engine gives on the usable columns
    assert crude.coef == pytest.approx(1.5886, abs=5e-5)
