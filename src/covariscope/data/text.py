"""Delimited text files: delimiter and decimal-mark detection, chunked reading.

The encoding comes from :func:`covariscope.data.scan.scan_file`; the
delimiter from :class:`csv.Sniffer` on the first lines, checked against how
consistently each candidate splits those lines (the sniffer alone is easily
fooled by commas inside text).
"""

from __future__ import annotations

import csv
import io
import re
import warnings
from collections import Counter
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from covariscope.data.progress import Steps
from covariscope.data.values import tidy_text_column
from covariscope.errors import DataError

__all__ = ["CANDIDATE_DELIMITERS", "TextLayout", "detect_layout", "read_delimited"]

CANDIDATE_DELIMITERS = (",", ";", "\t", "|")
DELIMITER_NAMES = {",": "comma", ";": "semicolon", "\t": "tab", "|": "vertical bar"}
CHUNK_ROWS = 100_000
_SAMPLE_LINES = 50
_COMMA_DECIMAL = re.compile(r"^[+-]?\d+,\d+$")
_POINT_DECIMAL = re.compile(r"^[+-]?\d+\.\d+$")


@dataclass(frozen=True)
class TextLayout:
    """How a delimited text file is laid out."""

    delimiter: str
    decimal: str
    header: tuple[str, ...]
    notes: tuple[str, ...]


def detect_layout(head: bytes, encoding: str, suffix: str) -> TextLayout:
    """Find the delimiter, the decimal mark and the raw header of a text file.

    Parameters
    ----------
    head : bytes
        The first bytes of the file (tens of kilobytes are plenty).
    encoding : str
        Its text encoding.
    suffix : str
        The file name's extension; decides between tab and comma when the
        file has a single column.

    Examples
    --------
    >>> detect_layout(b"a;b\\n1,5;2\\n3,0;4\\n", "utf-8", ".csv").delimiter
    ';'
    >>> detect_layout(b"a;b\\n1,5;2\\n3,0;4\\n", "utf-8", ".csv").decimal
    ','
    """
    text = head.decode(encoding, errors="replace")
    if encoding == "utf-8-sig":
        text = text.removeprefix("\ufeff")
    lines = text.splitlines()
    if len(head) >= 65536 and len(lines) > 1:
        lines = lines[:-1]  # the last line of a cut sample may be partial
    lines = [line for line in lines if line.strip()][:_SAMPLE_LINES]
    sample = "\n".join(lines)
    notes: list[str] = []
    delimiter = _choose_delimiter(sample, suffix)
    rows = list(csv.reader(io.StringIO(sample), delimiter=delimiter))
    if rows and len(rows[0]) == 1:
        notes.append("Only one column found: if the file has more, check its delimiter.")
    decimal = "."
    if delimiter != ",":
        fields = [f.strip() for row in rows[1:] for f in row]
        commas = sum(bool(_COMMA_DECIMAL.match(f)) for f in fields)
        points = sum(bool(_POINT_DECIMAL.match(f)) for f in fields)
        if commas and not points:
            decimal = ","
            notes.append("Decimal comma detected: numbers such as 1,5 read as 1.5.")
    header = tuple(rows[0]) if rows else ()
    return TextLayout(delimiter, decimal, header, tuple(notes))


def _choose_delimiter(sample: str, suffix: str) -> str:
    scores = {d: _consistency(sample, d) for d in CANDIDATE_DELIMITERS}
    try:
        sniffed = csv.Sniffer().sniff(sample, delimiters="".join(CANDIDATE_DELIMITERS)).delimiter
    except csv.Error:
        sniffed = None
    if sniffed in scores and scores[sniffed][1] > 1 and scores[sniffed][0] >= 0.9:
        return sniffed
    best = max(scores, key=lambda d: scores[d])
    if scores[best][1] > 1:
        return best
    return "\t" if suffix in {".tsv", ".tab"} else ","


def _consistency(sample: str, delimiter: str) -> tuple[float, int]:
    """Share of lines with the most common field count, and that count."""
    counts = [len(row) for row in csv.reader(io.StringIO(sample), delimiter=delimiter) if row]
    if not counts:
        return (0.0, 0)
    count, times = Counter(counts).most_common(1)[0]
    return (times / len(counts), count)


def read_delimited(
    path: Path, encoding: str, layout: TextLayout, size: int, steps: Steps
) -> tuple[pd.DataFrame, list[str]]:
    """Read the whole file in chunks of rows, reporting the share of bytes read.

    pandas infers each chunk's column types on its own; a column that comes
    out as numbers in one chunk and as text in another (a stray "n/a" far
    down the file) is read again as text and converted once, so a column's
    type never depends on where the chunks fell.
    Returns the frame and the raw column names (before any renaming).
    """
    chunks = _read_chunks(path, encoding, layout, size, steps, 0.0, 0.9)
    if chunks:
        frame = pd.concat(chunks, ignore_index=True) if len(chunks) > 1 else chunks[0]
    else:
        frame = pd.DataFrame(columns=list(layout.header) or None)
    pandas_names = [str(c) for c in frame.columns]
    names = list(layout.header) if len(layout.header) == len(pandas_names) else pandas_names
    frame = frame.reset_index(drop=True)
    frame.columns = range(frame.shape[1])
    mixed = [i for i in frame.columns if _mixed_kinds([c.iloc[:, i] for c in chunks])]
    if mixed:
        again = _read_chunks(path, encoding, layout, size, steps, 0.9, 0.95, usecols=mixed)
        text = pd.concat(again, ignore_index=True) if len(again) > 1 else again[0]
        for position, column in zip(mixed, text.columns, strict=True):
            frame[position] = tidy_text_column(text[column].reset_index(drop=True), layout.decimal)
    for i in frame.columns:
        if frame[i].dtype == object and bool(frame[i].dropna().map(type).eq(str).all()):
            frame[i] = frame[i].astype("str")
    steps.report(1.0)
    return frame, names


def _mixed_kinds(parts: list[pd.Series]) -> bool:
    """True when chunks disagree: numbers in one, text (or booleans) in another.

    A chunk holding nothing but missing values agrees with any other; when
    every chunk is of one kind (the usual case) no value is looked at.
    """
    if len({_kind(part.dtype) for part in parts}) <= 1:
        return False
    return len({_kind(part.dtype) for part in parts if part.notna().any()}) > 1


def _kind(dtype: object) -> str:
    if pd.api.types.is_bool_dtype(dtype):
        return "bool"
    if pd.api.types.is_numeric_dtype(dtype):
        return "number"
    return "text"


def _read_chunks(
    path: Path,
    encoding: str,
    layout: TextLayout,
    size: int,
    steps: Steps,
    low: float,
    high: float,
    usecols: list[int] | None = None,
) -> list[pd.DataFrame]:
    chunks: list[pd.DataFrame] = []
    with open(path, "rb") as handle, warnings.catch_warnings():
        # pandas only warns when data rows are wider than the header, and then
        # drops the extra fields: treat that as the error it is.
        warnings.simplefilter("error", pd.errors.ParserWarning)
        try:
            reader = pd.read_csv(
                handle,
                sep=layout.delimiter,
                decimal=layout.decimal,
                encoding=encoding,
                header=0,
                dtype=None if usecols is None else str,
                usecols=usecols,
                chunksize=CHUNK_ROWS,
                skip_blank_lines=True,
                engine="c",
                index_col=False,
            )
            with reader:
                for chunk in reader:
                    chunks.append(chunk)
                    done = handle.tell() / size if size else 1.0
                    steps.report(low + (high - low) * done)
        except pd.errors.EmptyDataError as exc:
            raise DataError(
                f"{path.name} holds no data (only blank lines). Choose the file that "
                "holds the data, or export it again from its source."
            ) from exc
        except pd.errors.ParserError as exc:
            raise DataError(
                f"{path.name} could not be read as {DELIMITER_NAMES[layout.delimiter]}-separated "
                f"text: {_plain_parser_message(exc)}. Check that every row has as many fields "
                "as the header and that quotes are closed, or export the file again."
            ) from exc
        except pd.errors.ParserWarning as exc:
            raise DataError(
                f"{path.name}: some rows have more fields than the header has names. Check "
                "the delimiter, give every column a name, or export the file again."
            ) from exc
        except UnicodeDecodeError as exc:
            raise DataError(
                f"{path.name} is not valid {encoding} text at byte {exc.start}. Save it again "
                "as UTF-8 text from its source program."
            ) from exc
    return chunks


def _plain_parser_message(exc: Exception) -> str:
    text = str(exc).strip().rstrip(".")
    match = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", text)
    if match:
        expected, line, saw = match.groups()
        return f"line {line} has {saw} fields where the header has {expected}"
    return text
