"""Every class of bad data or degenerate design: a plain message, never an
internal error, never a wrong figure.

The exit status follows the classes documented in ``covariscope.cli``:
REFUSED (the bound data cannot estimate the effect: same column, an outcome
the exposure determines, out-of-range or stray values in the exposure or
outcome, an outcome with one value or not coded for its family) ends in one
line and exit status 2; SAID (a problem confined to one covariate or one
setting) leaves the rest of the study running, exit status 0, and names
what was left out in the messages.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from covariscope.cli import main


def _frame(n: int = 120, seed: int = 3) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    c = rng.normal(size=n)
    x = c + rng.normal(size=n)
    return pd.DataFrame({"x": x, "y": x + c + rng.normal(size=n), "c": c, "d": rng.normal(size=n)})


def _project(folder: Path, frame, *, binds=None, family="linear", columns=None) -> Path:
    binds = binds or {"x": "x", "y": "y", "c": "c"}
    nodes = [
        {"id": "x", "kind": "exposure", "column": binds["x"]},
        {"id": "y", "kind": "outcome", "column": binds["y"]},
    ] + [{"id": k, "column": v} for k, v in binds.items() if k not in ("x", "y")]
    arrows = [{"from": "x", "to": "y"}] + [
        {"from": k, "to": t} for k in binds if k not in ("x", "y") for t in ("x", "y")
    ]
    if isinstance(frame, bytes):
        (folder / "data.csv").write_bytes(frame)
    else:
        frame.to_csv(folder / "data.csv", index=False)
    project = {
        "format": "covariscope-project",
        "version": 1,
        "diagram": {"nodes": nodes, "arrows": arrows},
        "data": {"path": "data.csv"},
        "analysis": {"family": family, "family_columns": columns or {}},
    }
    path = folder / "p.json"
    path.write_text(json.dumps(project))
    return path


def _with(**columns):
    def build(folder: Path, **kw) -> Path:
        frame = _frame()
        for name, make in columns.items():
            frame[name] = make(frame)
        return _project(folder, frame, **kw)

    return build


def _stray(frame):
    values = frame["x"].astype(object)
    values[17] = "n.a."
    return values


REFUSED = [
    ("same-column", _with(), {"binds": {"x": "x", "y": "x", "c": "c"}}, 'both the column "x"'),
    (
        "survival-time-is-exposure",
        _with(e=lambda f: 1),
        {"family": "cox", "columns": {"cox": {"time": "x", "event": "e"}}},
        "survival time",
    ),
    ("outcome-linear-in-exposure", _with(y=lambda f: 3 * f.x - 2), {}, "exact linear function"),
    ("outcome-copy-of-exposure", _with(y=lambda f: f.x), {}, "exact linear function"),
    ("huge-exposure", _with(x=lambda f: f.x * 1e300), {}, "as large as"),
    ("huge-outcome", _with(y=lambda f: f.y * 1e200), {}, "as large as"),
    ("tiny-spread-exposure", _with(x=lambda f: f.x * 1e-200), {}, "not constant"),
    ("constant-linear-outcome", _with(y=lambda f: 5.0), {}, "single value 5"),
    ("stray-text-in-exposure", _with(x=_stray), {}, "'n.a.' in data row(s) 18"),
    (
        "all-ones-logistic-outcome",
        _with(b=lambda f: 1),
        {"family": "logistic", "columns": {"logistic": {"outcome": "b"}}},
        "single value 1",
    ),
    (
        "all-zeros-risk-ratio-outcome",
        _with(b=lambda f: 0),
        {"family": "risk_ratio", "columns": {"risk_ratio": {"outcome": "b"}}},
        "single value 0",
    ),
    (
        "logistic-outcome-not-binary",
        _with(b=lambda f: (f.y > 0).astype(int) + (f.y > 1).astype(int)),
        {"family": "logistic", "columns": {"logistic": {"outcome": "b"}}},
        "coded 0/1",
    ),
    (
        "huge-cox-time",
        _with(t=lambda f: (f.y - f.y.min() + 1) * 1e300, e=lambda f: 1),
        {"family": "cox", "columns": {"cox": {"time": "t", "event": "e"}}},
        "as large as",
    ),
    (
        "huge-logistic-exposure",
        _with(x=lambda f: f.x * 1e300, b=lambda f: (f.y > 0).astype(int)),
        {"family": "logistic", "columns": {"logistic": {"outcome": "b"}}},
        "as large as",
    ),
    (
        "tiny-risk-ratio-exposure",
        _with(x=lambda f: f.x * 1e-200, b=lambda f: (f.y > 0).astype(int)),
        {"family": "risk_ratio", "columns": {"risk_ratio": {"outcome": "b"}}},
        "not constant",
    ),
]


@pytest.mark.parametrize(
    ("build", "kw", "expected"), [c[1:] for c in REFUSED], ids=[c[0] for c in REFUSED]
)
def test_a_degenerate_design_is_refused_in_one_line(tmp_path, capsys, build, kw, expected):
    code = main(["check", str(build(tmp_path, **kw))])
    _, err = capsys.readouterr()
    assert code == 2, err
    assert expected in err
    assert len(err.strip().splitlines()) == 1
    assert "internal error" not in err


SAID = [
    ("tiny-covariate", _with(c=lambda f: f.c * 1e-200), {}, "it is not constant"),
    ("huge-covariate", _with(c=lambda f: f.c * 1e200), {}, "as large as"),
    (
        "covariate-on-outcome-column",
        _with(),
        {"binds": {"x": "x", "y": "y", "c": "y"}},
        "adjusted for itself",
    ),
    (
        "offset-on-linear",
        _with(o=lambda f: 1.0),
        {"columns": {"linear": {"offset": "o"}}},
        "Only the risk/rate-ratio family takes an offset",
    ),
    (
        "offset-on-logistic",
        _with(o=lambda f: 1.0, b=lambda f: (f.y > 0).astype(int)),
        {"family": "logistic", "columns": {"logistic": {"outcome": "b", "offset": "o"}}},
        "offset",
    ),
]


@pytest.mark.parametrize(
    ("build", "kw", "expected"), [c[1:] for c in SAID], ids=[c[0] for c in SAID]
)
def test_a_problem_with_one_part_is_said_and_the_rest_runs(tmp_path, capsys, build, kw, expected):
    code = main(["check", "--json", str(build(tmp_path, **kw))])
    out, err = capsys.readouterr()
    assert code == 0, err
    result = json.loads(out)
    assert any(expected in m for m in result["messages"]), result["messages"]


def test_a_study_where_everyone_has_the_event_fits(tmp_path, capsys):
    """A 0/1 event column holding only 1s keeps 1 = event (it was coded 0)."""
    rng = np.random.default_rng(5)
    path = _with(t=lambda f: rng.exponential(size=len(f)) + 0.1, e=lambda f: 1)(
        tmp_path, family="cox", columns={"cox": {"time": "t", "event": "e"}}
    )
    assert main(["check", "--json", str(path)]) == 0
    result = json.loads(capsys.readouterr().out)
    crude = result["models"]["crude"] if "models" in result else None
    assert crude is None or crude.get("estimate") is not None
    assert not any("no events" in m for m in result["messages"])


def test_exact_copies_of_a_confounder_get_review_naming_the_aliasing(tmp_path, capsys):
    """Age in years and in months: the diagram says two variables, the data one."""
    path = _with(c2=lambda f: f.c * 12)(tmp_path, binds={"x": "x", "y": "y", "c": "c", "c2": "c2"})
    assert main(["check", "--json", str(path)]) == 0
    result = json.loads(capsys.readouterr().out)
    covariates = result["covariates"]
    for node, other in (("c", "c2"), ("c2", "c")):
        assert covariates[node]["verdict"] == "review"
        assert "aliased with" in covariates[node]["reason"]
        assert other in covariates[node]["reason"]


DATA = [
    ("fifo", "not a regular file"),
    ("folder", "is a folder"),
    ("urandom", "not a regular file"),
    ("zero", "not a regular file"),
    ("null", "not a regular file"),
    ("nul-in-value", "zero byte (NUL) at line"),
    ("zero-tail", "ends in 3,000,000 zero bytes"),
]


@pytest.mark.parametrize(("kind", "expected"), DATA, ids=[d[0] for d in DATA])
def test_a_data_file_that_is_not_a_regular_file_or_is_damaged_is_named(
    tmp_path, capsys, kind, expected
):
    frame = _frame()
    target = tmp_path / "data.csv"
    path = _project(tmp_path, frame)
    target.unlink()
    if kind == "fifo":
        os.mkfifo(target)
    elif kind == "folder":
        target.mkdir()
    elif kind in ("urandom", "zero", "null"):
        target.symlink_to(f"/dev/{kind}")
    else:
        text = frame.to_csv(index=False).encode()
        if kind == "nul-in-value":
            at = text.index(b"\n", len(text) // 2) + 3
            text = text[:at] + b"\x00" + text[at:]
        else:
            text += b"\0" * 3_000_000
        target.write_bytes(text)
    for argv in (["check", str(path)], ["check", str(path), "--data", str(target)]):
        code = main(argv)
        out, err = capsys.readouterr()
        assert "internal error" not in err
        assert expected in out + err, (argv, out[-500:], err)
        assert code in (0, 2)


def test_parquet_nested_columns_are_left_out_and_named(tmp_path, capsys):
    pa = pytest.importorskip("pyarrow")
    import pyarrow.parquet as pq

    frame = _frame()
    table = pa.table(
        {
            **{c: frame[c].to_numpy() for c in frame.columns},
            "tags": [[1, 2]] * len(frame),
            "visit": [{"n": 1}] * len(frame),
        }
    )
    pq.write_table(table, tmp_path / "data.parquet")
    path = _project(tmp_path, frame)
    code = main(["check", "--json", str(path), "--data", str(tmp_path / "data.parquet")])
    out, err = capsys.readouterr()
    assert code == 0, err
    messages = json.loads(out)["messages"]
    assert any("'tags'" in m and "left out" in m for m in messages), messages
    assert any("'visit'" in m for m in messages)


@pytest.mark.parametrize("family", ["linear", "logistic"])
def test_a_covariate_rescaled_as_the_message_says_matches_statsmodels(tmp_path, capsys, family):
    """A covariate scaled by 1e-200 is left out, named, and called not constant;
    multiplied back by 1e200 as the message suggests, the full model's
    exposure estimate is statsmodels' on the same rescaled data (reference:
    statsmodels OLS and Logit)."""
    import statsmodels.api as sm

    frame = _frame()
    frame["b"] = (frame.y > frame.y.median()).astype(int)
    columns = {"logistic": {"outcome": "b"}} if family == "logistic" else {}
    tiny = frame.assign(c=frame.c * 1e-200)
    (tmp_path / "tiny").mkdir()
    code = main(
        ["check", "--json", str(_project(tmp_path / "tiny", tiny, family=family, columns=columns))]
    )
    out, _ = capsys.readouterr()
    assert code == 0
    said = json.loads(out)["messages"]
    assert any('column "c"' in m and "it is not constant" in m for m in said), said
    rescaled = tiny.assign(c=tiny.c * 1e200)
    (tmp_path / "fixed").mkdir()
    path = _project(tmp_path / "fixed", rescaled, family=family, columns=columns)
    assert main(["check", "--json", str(path)]) == 0
    full = json.loads(capsys.readouterr()[0])["estimates"]["full"]
    design = sm.add_constant(rescaled[["x", "c"]])
    if family == "linear":
        ref = sm.OLS(rescaled.y, design).fit()
    else:
        ref = sm.Logit(rescaled.b, design).fit(disp=0)
    assert full["coef"] == pytest.approx(ref.params["x"], rel=1e-6)
    assert full["se"] == pytest.approx(ref.bse["x"], rel=1e-5)
