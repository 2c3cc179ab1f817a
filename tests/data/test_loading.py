"""Loading: every format round-trips, detection is reported, the file is only read."""

from __future__ import annotations

import hashlib
import importlib.util
import itertools
import os
import sys
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from covariscope.data import loading, text
from covariscope.data.loading import LoadCancelledError, file_sha256, load_table
from covariscope.errors import DataError


def small_frame() -> pd.DataFrame:
    """Invented, seeded study rows with numbers, codes, text and gaps."""
    rng = np.random.default_rng(7)
    n = 12
    return pd.DataFrame(
        {
            "pid": np.arange(1, n + 1),
            "age": rng.integers(30, 70, n).astype("float64"),
            "sbp": rng.normal(130, 12, n).round(1),
            "smoker": rng.integers(0, 2, n).astype("float64"),
            "town": rng.choice(["Ålesund", "Besançon", "Cádiz"], n),
        }
    )


def assert_same(loaded: pd.DataFrame, written: pd.DataFrame) -> None:
    assert list(loaded.columns) == list(written.columns)
    for name in written.columns:
        got, want = loaded[name], written[name]
        if pd.api.types.is_numeric_dtype(want.dtype):
            np.testing.assert_allclose(got.to_numpy(dtype=float), want.to_numpy(dtype=float))
        else:
            assert got.astype(str).tolist() == want.astype(str).tolist()


def _writer_available(module: str) -> bool:
    return importlib.util.find_spec(module) is not None


def write_csv(frame: pd.DataFrame, path: Path) -> None:
    frame.to_csv(path, index=False)


def write_tsv(frame: pd.DataFrame, path: Path) -> None:
    frame.to_csv(path, index=False, sep="\t")


def write_excel(frame: pd.DataFrame, path: Path) -> None:
    frame.to_excel(path, index=False, sheet_name="visits")


def write_parquet(frame: pd.DataFrame, path: Path) -> None:
    frame.to_parquet(path, index=False)


def write_stata(frame: pd.DataFrame, path: Path) -> None:
    import pyreadstat

    pyreadstat.write_dta(frame, str(path))


def write_spss(frame: pd.DataFrame, path: Path) -> None:
    import pyreadstat

    pyreadstat.write_sav(frame, str(path))


def write_zsav(frame: pd.DataFrame, path: Path) -> None:
    import pyreadstat

    pyreadstat.write_sav(frame, str(path), compress=True)


def write_sas(frame: pd.DataFrame, path: Path) -> None:
    import pyreadstat

    if not hasattr(pyreadstat, "write_sas7bdat"):
        pytest.skip("this pyreadstat cannot write .sas7bdat")
    pyreadstat.write_sas7bdat(frame, str(path))


def write_xpt(frame: pd.DataFrame, path: Path) -> None:
    import pyreadstat

    pyreadstat.write_xport(frame, str(path))


FORMATS = [
    ("study.csv", write_csv, "text", "pandas"),
    ("study.tsv", write_tsv, "text", "pandas"),
    ("study.xlsx", write_excel, "excel", "openpyxl"),
    ("study.parquet", write_parquet, "parquet", "pyarrow"),
    ("study.dta", write_stata, "stata", "pyreadstat"),
    ("study.sav", write_spss, "spss", "pyreadstat"),
    ("study.zsav", write_zsav, "spss", "pyreadstat"),
    ("study.sas7bdat", write_sas, "sas", "pyreadstat"),
    ("study.xpt", write_xpt, "sas_transport", "pyreadstat"),
]


@pytest.mark.parametrize(("name", "writer", "kind", "module"), FORMATS)
def test_each_format_round_trips(tmp_path, name, writer, kind, module):
    if not _writer_available(module):
        pytest.skip(f"{module} is not installed")
    frame = small_frame()
    path = tmp_path / name
    writer(frame, path)
    table = load_table(path)
    assert table.format == kind
    assert table.rows == len(frame)
    assert_same(table.frame, frame)
    assert table.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.mark.parametrize(("name", "writer", "kind", "module"), FORMATS)
def test_file_is_only_read(tmp_path, name, writer, kind, module):
    if not _writer_available(module):
        pytest.skip(f"{module} is not installed")
    path = tmp_path / name
    writer(small_frame(), path)
    before_bytes = path.read_bytes()
    before = os.stat(path)
    listing = sorted(p.name for p in tmp_path.iterdir())
    load_table(path)
    after = os.stat(path)
    assert path.read_bytes() == before_bytes
    assert after.st_mtime_ns == before.st_mtime_ns
    assert sorted(p.name for p in tmp_path.iterdir()) == listing


def test_stata_value_labels_are_kept(tmp_path):
    pyreadstat = pytest.importorskip("pyreadstat")
    frame = pd.DataFrame({"educ": [1.0, 2.0, 3.0, 2.0], "y": [0.5, 1.5, 2.5, 3.5]})
    path = tmp_path / "labelled.dta"
    labels = {"educ": {1: "primary", 2: "secondary", 3: "tertiary"}}
    pyreadstat.write_dta(frame, str(path), variable_value_labels=labels)
    table = load_table(path)
    assert dict(table.value_labels["educ"]) == labels["educ"]
    assert table.frame["educ"].tolist() == [1, 2, 3, 2]
    assert any("Value labels" in n for n in table.notes)


def test_excel_sheet_choice_and_note(tmp_path):
    path = tmp_path / "book.xlsx"
    with pd.ExcelWriter(path) as writer:
        pd.DataFrame({"a": [1, 2]}).to_excel(writer, sheet_name="first", index=False)
        pd.DataFrame({"b": [3.5, 4.5, 5.5]}).to_excel(writer, sheet_name="second", index=False)
    assert list(load_table(path).frame.columns) == ["a"]
    second = load_table(path, sheet="second")
    assert second.frame["b"].tolist() == [3.5, 4.5, 5.5]
    assert any("'first'" in n for n in second.notes)
    assert load_table(path, sheet=1).frame.shape == (3, 1)
    with pytest.raises(DataError, match=r"no sheet named 'third'.*'first', 'second'"):
        load_table(path, sheet="third")


# --- delimiter and encoding detection -------------------------------------------------

ROWS = [["name", "age", "bmi"], ["José", "41", "22.5"], ["Zoë", "35", "27.0"], ["Ana", "52", ""]]


@pytest.mark.parametrize(("delimiter", "word"), [(",", "comma"), (";", "semicolon"), ("\t", "tab")])
@pytest.mark.parametrize(
    ("encoding", "label"),
    [("utf-8", "UTF-8"), ("cp1252", "cp1252"), ("utf-8-sig", "byte-order mark")],
)
def test_delimiter_and_encoding_detected(tmp_path, delimiter, word, encoding, label):
    path = tmp_path / "people.txt"
    path.write_bytes("\n".join(delimiter.join(r) for r in ROWS).encode(encoding))
    table = load_table(path)
    assert table.delimiter == delimiter
    assert table.encoding == encoding
    assert table.frame["name"].tolist() == ["José", "Zoë", "Ana"]
    assert table.frame["age"].tolist() == [41, 35, 52]
    assert np.isnan(table.frame["bmi"].iloc[2])
    assert any(word in n and label in n for n in table.notes)


def test_latin1_when_cp1252_does_not_fit(tmp_path):
    path = tmp_path / "odd.csv"
    # 0x81 is undefined in cp1252, so only latin-1 reads every byte.
    path.write_bytes(b"name,x\nA\x81b,1\nCaf\xe9,2\n")
    table = load_table(path)
    assert table.encoding == "latin-1"
    assert table.frame["name"].tolist() == ["A\x81b", "Café"]


def test_utf16_with_bom(tmp_path):
    path = tmp_path / "export.txt"
    path.write_bytes("a\tb\n1\t2\n3\t4\n".encode("utf-16"))
    table = load_table(path)
    assert (table.encoding, table.delimiter) == ("utf-16", "\t")
    assert table.frame["b"].tolist() == [2, 4]


def test_decimal_comma_with_semicolons(tmp_path):
    path = tmp_path / "eu.csv"
    path.write_text("weight;height\n70,5;1,80\n82,0;1,75\n", encoding="utf-8")
    table = load_table(path)
    assert table.frame["weight"].tolist() == [70.5, 82.0]
    assert any("Decimal comma" in n for n in table.notes)


def test_commas_inside_quoted_text_do_not_fool_the_delimiter(tmp_path):
    path = tmp_path / "quoted.csv"
    lines = ["id;comment;score"] + [f'{i};"late, then early, then late";{i * 2}' for i in range(6)]
    path.write_text("\n".join(lines), encoding="utf-8")
    table = load_table(path)
    assert table.delimiter == ";"
    assert table.frame.shape == (6, 3)


def test_encoding_fault_beyond_the_sample_is_found(tmp_path, monkeypatch):
    """The whole file is checked, not only the first block."""
    monkeypatch.setattr("covariscope.data.scan.BLOCK_SIZE", 64)
    body = "".join(f"{i},plain\n" for i in range(200))
    path = tmp_path / "late.csv"
    path.write_bytes(("k,v\n" + body).encode() + "99,café\n".encode("cp1252"))
    table = load_table(path)
    assert table.encoding == "cp1252"
    assert table.frame["v"].iloc[-1] == "café"


def test_column_names_are_tidied_with_notes(tmp_path):
    path = tmp_path / "names.csv"
    path.write_text(",  age ,bmi\n1,40,22\n2,50,24\n", encoding="utf-8")
    table = load_table(path)
    assert list(table.frame.columns) == ["unnamed_1", "age", "bmi"]
    assert any("Column 1 has no name" in n for n in table.notes)
    assert any("Spaces around" in n for n in table.notes)


def test_header_called_na_stays_a_name(tmp_path):
    path = tmp_path / "na.csv"
    path.write_text("NA,b\n1,2\n", encoding="utf-8")
    assert list(load_table(path).frame.columns) == ["NA", "b"]


def test_content_wins_over_extension(tmp_path):
    path = tmp_path / "really_a_workbook.csv"
    pd.DataFrame({"a": [1, 2]}).to_excel(path, index=False, engine="openpyxl")
    table = load_table(path)
    assert table.format == "excel"
    assert any("content is Excel workbook" in n for n in table.notes)


# --- hash, progress, cancel -----------------------------------------------------------


def test_sha256_equals_hashlib(tmp_path, monkeypatch):
    monkeypatch.setattr("covariscope.data.scan.BLOCK_SIZE", 1000)
    data = np.random.default_rng(3).bytes(25_000)
    path = tmp_path / "blob.bin"
    path.write_bytes(data)
    assert file_sha256(path) == hashlib.sha256(data).hexdigest()  # reference: hashlib


def _large_csv(path: Path, rows: int = 1200) -> None:
    rng = np.random.default_rng(11)
    pd.DataFrame({"x": rng.normal(size=rows), "g": rng.integers(0, 3, rows)}).to_csv(
        path, index=False
    )


@pytest.mark.parametrize(
    ("name", "writer"),
    [("big.csv", _large_csv), ("big.dta", None), ("big.parquet", None), ("big.xlsx", None)],
)
def test_progress_is_monotone_and_reaches_one(tmp_path, monkeypatch, name, writer):
    monkeypatch.setattr(text, "CHUNK_ROWS", 200)
    monkeypatch.setattr("covariscope.data.scan.BLOCK_SIZE", 4096)
    monkeypatch.setattr("covariscope.data.readers.STAT_CHUNK_ROWS", 500)
    monkeypatch.setattr("covariscope.data.readers._EXCEL_PROGRESS_ROWS", 300)
    path = tmp_path / name
    frame = pd.DataFrame({"x": np.arange(1200, dtype=float), "g": np.arange(1200) % 3})
    if writer is not None:
        writer(path)
    elif name.endswith(".dta"):
        pytest.importorskip("pyreadstat").write_dta(frame, str(path))
    elif name.endswith(".parquet"):
        frame.to_parquet(path, row_group_size=400)
    else:
        frame.to_excel(path, index=False)
    seen: list[float] = []
    table = load_table(path, progress=seen.append)
    assert table.rows == 1200
    assert seen == sorted(seen)
    assert len(set(seen)) == len(seen)
    assert seen[-1] == 1.0
    assert all(0.0 <= v <= 1.0 for v in seen)
    assert len(seen) > 5  # many intermediate reports, not only start and end


def test_cancel_stops_the_load(tmp_path, monkeypatch):
    monkeypatch.setattr(text, "CHUNK_ROWS", 100)
    path = tmp_path / "big.csv"
    _large_csv(path)
    seen: list[float] = []
    polls = itertools.count()
    with pytest.raises(LoadCancelledError, match="Loading cancelled"):
        load_table(path, progress=seen.append, cancel=lambda: next(polls) > 4)
    assert seen
    assert seen[-1] < 1.0
    with pytest.raises(DataError):  # a cancelled load is a DataError too
        load_table(path, cancel=lambda: True)


# --- bad input: one message each ------------------------------------------------------


def test_missing_file(tmp_path):
    with pytest.raises(DataError, match="was not found"):
        load_table(tmp_path / "absent.csv")


def test_folder_is_not_a_file(tmp_path):
    with pytest.raises(DataError, match="is a folder"):
        load_table(tmp_path)


def test_empty_file(tmp_path):
    path = tmp_path / "empty.csv"
    path.write_bytes(b"")
    with pytest.raises(DataError, match=r"is empty \(0 bytes\)"):
        load_table(path)


def test_blank_lines_only(tmp_path):
    path = tmp_path / "blank.csv"
    path.write_text("\n\n   \n", encoding="utf-8")
    with pytest.raises(DataError, match="only blank lines"):
        load_table(path)


@pytest.mark.parametrize("suffix", [".csv", ".xlsx", ".parquet"])
def test_header_only(tmp_path, suffix):
    path = tmp_path / f"header{suffix}"
    empty = pd.DataFrame({"age": pd.Series([], dtype=float), "sex": pd.Series([], dtype=str)})
    {".csv": lambda: empty.to_csv(path, index=False),
     ".xlsx": lambda: empty.to_excel(path, index=False),
     ".parquet": lambda: empty.to_parquet(path)}[suffix]()  # fmt: skip
    with pytest.raises(DataError, match=r"column names \(age, sex\) but no rows"):
        load_table(path)


def test_duplicate_column_names_are_named(tmp_path):
    path = tmp_path / "dup.csv"
    path.write_text("id,bmi,age,bmi,age\n1,2,3,4,5\n", encoding="utf-8")
    with pytest.raises(DataError) as info:
        load_table(path)
    message = str(info.value)
    assert "'bmi' (columns 2, 4)" in message
    assert "'age' (columns 3, 5)" in message
    assert "Rename them" in message


def test_duplicate_names_after_trimming_spaces(tmp_path):
    path = tmp_path / "dup2.csv"
    path.write_text("age,age \n1,2\n", encoding="utf-8")
    with pytest.raises(DataError, match="repeats column names: 'age'"):
        load_table(path)


def test_rows_wider_than_header(tmp_path):
    path = tmp_path / "wide.csv"
    path.write_text("a,b\n1,2,3\n4,5\n", encoding="utf-8")
    with pytest.raises(DataError, match="more fields than the header"):
        load_table(path)


def test_ragged_row_later_in_file(tmp_path):
    path = tmp_path / "ragged.csv"
    path.write_text("a,b,c\n1,2,3\n4,5,6,7\n", encoding="utf-8")
    with pytest.raises(DataError, match="line 3 has 4 fields where the header has 3"):
        load_table(path)


def test_unknown_binary_format(tmp_path):
    path = tmp_path / "mystery.bin"
    path.write_bytes(b"\x00\x01\x02garbage\x00" * 10)
    with pytest.raises(DataError, match=r"unknown format.*\.csv"):
        load_table(path)


def test_damaged_workbook(tmp_path):
    path = tmp_path / "broken.xlsx"
    path.write_bytes(b"PK\x03\x04" + b"\x00" * 100)
    with pytest.raises(DataError, match="could not be opened as an Excel workbook"):
        load_table(path)


def test_damaged_stata_file(tmp_path):
    pytest.importorskip("pyreadstat")
    path = tmp_path / "broken.dta"
    path.write_bytes(b"<stata_dta><header>" + b"\x07" * 50)
    with pytest.raises(DataError, match="could not be read as a Stata file"):
        load_table(path)


OLD_XLS = Path(__file__).parent / "fixtures" / "small_cohort.xls"


def test_old_xls_without_reader_says_what_to_do(tmp_path, monkeypatch):
    # Whether or not xlrd is installed: hide it, as on a machine without it.
    monkeypatch.setitem(sys.modules, "xlrd", None)
    path = tmp_path / "old.xls"
    path.write_bytes(OLD_XLS.read_bytes())
    with pytest.raises(DataError, match=r"needs the xlrd package\. Save it as \.xlsx or CSV"):
        load_table(path)


def test_old_xls_is_read_like_an_xlsx():
    pytest.importorskip("xlrd")
    table = load_table(OLD_XLS)
    assert table.format == "excel_old"
    assert table.sha256 == hashlib.sha256(OLD_XLS.read_bytes()).hexdigest()
    assert table.notes == ("Read sheet 'cohort'; the workbook also has 'notes'.",)
    # outside reference: pandas' own .xls reader (engine="xlrd") on the same file
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # pandas deprecates its xlrd engine; the values stand
        expected = pd.read_excel(OLD_XLS, engine="xlrd")
    pd.testing.assert_frame_equal(table.frame, expected, check_dtype=False)
    frame = table.frame
    assert frame["age"].dtype == np.int64
    assert frame["sbp"].isna().sum() == 1
    assert pd.api.types.is_datetime64_any_dtype(frame["enrolled"])
    assert frame["enrolled"].iloc[0] == pd.Timestamp("2021-03-04")
    assert frame["consent"].tolist() == [True, True, False, True, False]
    assert frame["smoker"].tolist() == ["no", "yes", "no", "yes", "no"]


def test_old_xls_sheets_by_name_and_number(tmp_path):
    pytest.importorskip("xlrd")
    with pytest.raises(DataError, match="no rows of data"):
        load_table(OLD_XLS, sheet="notes")
    with pytest.raises(
        DataError, match=r"no sheet named 'results'\. Choose one of: 'cohort', 'notes'"
    ):
        load_table(OLD_XLS, sheet="results")
    assert load_table(OLD_XLS, sheet=0).rows == 5


def test_damaged_old_xls_says_what_to_do(tmp_path):
    pytest.importorskip("xlrd")
    path = tmp_path / "broken.xls"
    path.write_bytes(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\x00" * 100)
    with pytest.raises(DataError, match=r"could not be opened as an old-style \.xls workbook"):
        load_table(path)
    # half of a real workbook
    path.write_bytes(OLD_XLS.read_bytes()[:2000])
    with pytest.raises(DataError, match=r"save it again as \.xlsx, or export it as CSV"):
        load_table(path)


def test_all_missing_column_is_not_fatal(tmp_path):
    path = tmp_path / "gap.csv"
    path.write_text("a,b\n1,\n2,\n", encoding="utf-8")
    table = load_table(path)
    assert table.frame["b"].isna().all()


def test_supported_suffixes_cover_the_design():
    # DESIGN §4: CSV/TSV, Excel, Parquet, Stata, SPSS, SAS.
    kinds = set(loading.SUPPORTED_SUFFIXES.values())
    assert {"text", "excel", "parquet", "stata", "spss", "sas", "sas_transport"} <= kinds


def test_column_type_does_not_depend_on_chunks(tmp_path, monkeypatch):
    """A stray text value far down the file makes the whole column text, as in one read."""
    monkeypatch.setattr(text, "CHUNK_ROWS", 50)
    values = [str(i) for i in range(300)]
    values[250] = "about 5"
    path = tmp_path / "late_text.csv"
    path.write_text("k,v\n" + "".join(f"{i},{v}\n" for i, v in enumerate(values)), encoding="utf-8")
    chunked = load_table(path).frame
    whole = pd.read_csv(path)  # reference: pandas reading the file in one piece
    assert chunked["v"].tolist() == whole["v"].astype(str).tolist()
    assert chunked["k"].tolist() == whole["k"].tolist()
    assert chunked["k"].dtype == np.int64


def _chunk_reads(monkeypatch):
    """The columns each read of the file's chunks asked for (None: every column)."""
    reads = []
    read_chunks = text._read_chunks

    def counted(*args, **kwargs):
        reads.append(kwargs.get("usecols"))
        return read_chunks(*args, **kwargs)

    monkeypatch.setattr(text, "_read_chunks", counted)
    return reads


def test_a_chunk_of_nothing_but_missing_values_agrees_with_any_other(tmp_path, monkeypatch):
    """A run of empty cells as long as a chunk is no second kind of value: the
    column is read once, as pandas reads it in one piece (the reference)."""
    monkeypatch.setattr(text, "CHUNK_ROWS", 50)
    words = ("low", "mid", "high")
    lines = [
        f"{i},{'' if 50 <= i < 100 else words[i % 3]},{'' if 100 <= i < 150 else i % 2 == 1}\n"
        for i in range(200)
    ]
    path = tmp_path / "gaps.csv"
    path.write_text("k,t,b\n" + "".join(lines), encoding="utf-8")
    reads = _chunk_reads(monkeypatch)
    frame = load_table(path).frame
    whole = pd.read_csv(path)
    assert reads == [None]  # no column read again as text
    for column in ("t", "b"):
        assert frame[column].isna().tolist() == whole[column].isna().tolist()
        assert frame[column].dropna().tolist() == whole[column].dropna().tolist()
    assert frame["k"].dtype == np.int64


def test_numbers_in_one_chunk_and_text_in_another_are_read_again_as_text(tmp_path, monkeypatch):
    monkeypatch.setattr(text, "CHUNK_ROWS", 50)
    lines = [f"{i},{i if i < 150 else 'x' + str(i)}\n" for i in range(200)]
    path = tmp_path / "late_words.csv"
    path.write_text("k,v\n" + "".join(lines), encoding="utf-8")
    reads = _chunk_reads(monkeypatch)
    frame = load_table(path).frame
    assert reads == [None, [1]]
    assert frame["v"].tolist() == pd.read_csv(path)["v"].astype(str).tolist()
