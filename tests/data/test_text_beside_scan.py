"""A large text file is parsed while its scan runs beside it: the table, the
notes and every refusal are those of the plain order (scan, then parse)."""

from __future__ import annotations

import codecs

import numpy as np
import pandas as pd
import pytest

from covariscope.data import loading, text
from covariscope.data.loading import load_table
from covariscope.errors import DataError

ROWS = 6000  # about 150 KB: past the 64 KiB head the encoding guess reads


def _body(sep: str = ",", decimal: str = ".") -> str:
    rng = np.random.default_rng(5)
    lines = [sep.join(["id", "dose", "group", "note"])]
    for i in range(ROWS):
        dose = f"{rng.normal():.6f}".replace(".", decimal)
        lines.append(sep.join([str(i), dose, f"g{i % 3}", "" if i % 7 else "NA"]))
    return "\n".join(lines) + "\n"


def _far_down(body: str, line: str) -> str:
    return body + line


CASES = {
    "utf-8": lambda: _body().encode(),
    "utf-8 beyond the head": lambda: _far_down(_body(), "6000,1.5,gé,x\n").encode(),
    "byte-order mark": lambda: codecs.BOM_UTF8 + _body().encode(),
    "cp1252 beyond the head": lambda: _far_down(_body(), "6000,1.5,g\u20ac,x\n").encode("cp1252"),
    "latin-1 beyond the head": lambda: _body().encode() + b"6000,1.5,g\x81,x\n",
    "utf-16": lambda: _body(sep="\t").encode("utf-16"),
    "semicolons and decimal commas": lambda: _body(sep=";", decimal=",").encode(),
    "text far down a numeric column": lambda: _far_down(_body(), "6000,n/a?,g1,x\n").encode(),
    "zero byte beyond the head": lambda: _body().encode() + b"6000,1\x00,g1,x\n",
    "zero bytes at the end": lambda: _body().encode() + b"\x00" * 300,
    "a row too wide beyond the head": lambda: _far_down(_body(), "6000,1,g1,x,extra\n").encode(),
    "an unclosed quote beyond the head": lambda: _far_down(_body(), '6000,1,"g1,x\n').encode(),
}


def _load(path, beside: bool, monkeypatch):
    monkeypatch.setattr(loading, "PARALLEL_SCAN_BYTES", 0 if beside else 2**62)
    try:
        return load_table(path)
    except DataError as exc:
        return str(exc)


@pytest.mark.parametrize("case", sorted(CASES))
def test_beside_the_scan_reads_what_the_plain_order_reads(case, tmp_path, monkeypatch):
    # Reference: the plain order (the whole scan, then the parse) on the same file.
    monkeypatch.setattr(text, "CHUNK_ROWS", 1000)  # several chunks, as a large file has
    path = tmp_path / "study.csv"
    path.write_bytes(CASES[case]())
    plain = _load(path, False, monkeypatch)
    beside = _load(path, True, monkeypatch)
    if isinstance(plain, str):
        assert beside == plain
        return
    assert not isinstance(beside, str), beside
    pd.testing.assert_frame_equal(beside.frame, plain.frame, check_exact=True)
    assert list(beside.frame.dtypes) == list(plain.frame.dtypes)
    fields = ("format", "sha256", "delimiter", "encoding", "notes", "left_out")
    assert [getattr(beside, f) for f in fields] == [getattr(plain, f) for f in fields]


def test_the_parse_beside_the_scan_is_the_one_kept_when_they_agree(tmp_path, monkeypatch):
    monkeypatch.setattr(loading, "PARALLEL_SCAN_BYTES", 0)
    parses: list[str] = []
    real = loading.read_delimited

    def counted(path, encoding, *args):
        parses.append(encoding)
        return real(path, encoding, *args)

    monkeypatch.setattr(loading, "read_delimited", counted)
    path = tmp_path / "study.csv"
    path.write_bytes(CASES["utf-8"]())
    load_table(path)
    assert parses == ["utf-8"]
    parses.clear()
    path.write_bytes(CASES["cp1252 beyond the head"]())
    assert load_table(path).encoding == "cp1252"
    assert parses == ["utf-8", "cp1252"]  # the guess was wrong: read again, in the right one
