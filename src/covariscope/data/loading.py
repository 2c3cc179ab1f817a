"""Load a study data set from a file, read-only, with progress and cancellation.

Supported: delimited text (CSV, TSV, TXT: delimiter, decimal mark and
encoding detected), Excel (.xlsx, and old-style .xls with the xlrd package),
Parquet, Stata (.dta), SPSS (.sav, .zsav), SAS (.sas7bdat, .xpt).

The file is opened for reading only and nothing is ever written beside it.
Its SHA-256 is computed once, in the same streaming pass that checks a text
file's encoding, and kept on the result so that a project can tell when the
data changed.
"""

from __future__ import annotations

import codecs
import os
import stat
import threading
from collections import defaultdict
from collections.abc import Callable, Mapping
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from covariscope.data import scan as scan_module
from covariscope.data.heap import release_freed_memory
from covariscope.data.progress import LoadCancelledError, Steps
from covariscope.data.readers import (
    ReadResult,
    read_excel,
    read_old_excel,
    read_parquet,
    read_statistical,
)
from covariscope.data.scan import FileScan, scan_file
from covariscope.data.text import DELIMITER_NAMES, TextLayout, detect_layout, read_delimited
from covariscope.errors import DataError

__all__ = [
    "FORMAT_LABELS",
    "SUPPORTED_SUFFIXES",
    "LoadCancelledError",
    "LoadedTable",
    "check_text_bytes",
    "detect_format",
    "file_sha256",
    "load_table",
]

FORMAT_LABELS = {
    "text": "delimited text",
    "excel": "Excel workbook",
    "excel_old": "Excel 97–2003 workbook",
    "parquet": "Parquet",
    "stata": "Stata",
    "spss": "SPSS",
    "sas": "SAS",
    "sas_transport": "SAS transport",
}
SUPPORTED_SUFFIXES = {
    ".csv": "text",
    ".tsv": "text",
    ".tab": "text",
    ".txt": "text",
    ".xlsx": "excel",
    ".xlsm": "excel",
    ".xls": "excel_old",
    ".parquet": "parquet",
    ".pq": "parquet",
    ".dta": "stata",
    ".sav": "spss",
    ".zsav": "spss",
    ".sas7bdat": "sas",
    ".xpt": "sas_transport",
}
#: Text files from this size on are parsed while their scan runs beside (see `_read_text`).
PARALLEL_SCAN_BYTES = 16 * 2**20
_ENCODING_LABELS = {
    "utf-8": "UTF-8",
    "utf-8-sig": "UTF-8 with byte-order mark",
    "utf-16": "UTF-16",
    "cp1252": "Windows-1252 (cp1252)",
    "latin-1": "Latin-1 (ISO-8859-1)",
}


@dataclass(frozen=True, eq=False)
class LoadedTable:
    """A data set as read from its file.

    Attributes
    ----------
    frame : pandas.DataFrame
        One column per file column, index 0..n-1 in file order. Text columns
        whose every value is a number are numbers (int64 when whole and
        complete, else float64); other text stays text. In text files the
        usual missing-value markers (an empty field, ``NA``, ``N/A``,
        ``n/a``, ``NaN``, ``null``, ``#N/A``; pandas' defaults) are missing.
    path : Path
        The file, resolved.
    format : str
        A key of :data:`FORMAT_LABELS`.
    sha256 : str
        Hex digest of the file's bytes.
    delimiter, encoding : str or None
        For text files, the detected delimiter and codec name; for
        Stata/SPSS/SAS the encoding recorded in the file, where known.
    notes : tuple of str
        Plain sentences for the user: what was detected and assumed.
    value_labels : mapping
        Column -> {code: label}, for Stata and SPSS files that carry them.
    """

    frame: pd.DataFrame
    path: Path
    format: str
    sha256: str
    delimiter: str | None = None
    encoding: str | None = None
    notes: tuple[str, ...] = ()
    value_labels: Mapping[str, Mapping[Any, str]] = field(default_factory=dict)
    #: sentences naming the file's columns that were left out (nested
    #: Parquet values, ...): the study repeats them to the user
    left_out: tuple[str, ...] = ()

    @property
    def rows(self) -> int:
        """Number of data rows."""
        return len(self.frame)


def file_sha256(path: str | os.PathLike[str]) -> str:
    """SHA-256 of a file's bytes, read in blocks.

    Examples
    --------
    >>> import hashlib, tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = Path(d) / "x.csv"
    ...     _ = p.write_bytes(b"a\\n1\\n")
    ...     file_sha256(p) == hashlib.sha256(b"a\\n1\\n").hexdigest()
    True
    """
    target = _existing_file(Path(path))
    return scan_file(target).sha256


def load_table(
    path: str | os.PathLike[str],
    *,
    progress: Callable[[float], None] | None = None,
    cancel: Callable[[], bool] | None = None,
    sheet: str | int | None = None,
) -> LoadedTable:
    """Read a data file into a :class:`LoadedTable`.

    Parameters
    ----------
    path : path-like
        The data file. It is only read.
    progress : callable, optional
        Called with non-decreasing fractions in [0, 1], ending with 1.0.
    cancel : callable, optional
        Polled between blocks; when it returns True the load stops with
        :class:`LoadCancelledError` (a :class:`DataError`).
    sheet : str or int, optional
        Excel only: sheet name or 0-based position (default the first).

    Raises
    ------
    DataError
        The file is missing, empty, of an unknown format, holds a header but
        no rows, or repeats a column name; the message says how to fix it.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = Path(d) / "study.csv"
    ...     _ = p.write_text("id;age\\n1;40\\n2;51\\n", encoding="utf-8")
    ...     table = load_table(p)
    >>> table.delimiter, table.frame["age"].tolist()
    (';', [40, 51])
    """
    target = _existing_file(Path(path))
    steps = Steps(progress, cancel)
    steps.begin(0.0, 0.0)
    head = _read_head(target)
    if not head:
        raise DataError(
            f"{target.name} is empty (0 bytes). Choose the file that holds the data, or "
            "export it again from its source."
        )
    kind, notes = detect_format(target, head)
    delimiter: str | None = None
    encoding: str | None = None
    if kind == "text":
        scan, layout, (frame, names) = _read_text(target, steps)
        encoding = scan.encoding
        assert encoding is not None
        delimiter = layout.delimiter
        notes.append(
            f"Read as {DELIMITER_NAMES[delimiter]}-separated text, "
            f"encoding {_ENCODING_LABELS[encoding]}."
        )
        notes.extend(layout.notes)
        result = ReadResult(frame, names)
    else:
        steps.begin(0.0, 0.1)
        scan = scan_file(target, steps)
        steps.begin(0.1, 1.0)
        result = _read_binary(target, kind, sheet, steps)
        encoding = result.encoding
    notes.extend(result.notes)
    notes.extend(result.left_out)
    frame = _checked_frame(target, result, notes)
    release_freed_memory()  # what the reader's chunks held, so the peak is not the data twice
    steps.finish()
    return LoadedTable(
        frame=frame,
        path=target,
        format=kind,
        sha256=scan.sha256,
        delimiter=delimiter,
        encoding=encoding,
        notes=tuple(notes),
        value_labels=result.value_labels,
        left_out=(*result.left_out,),
    )


def _read_text(
    path: Path, steps: Steps
) -> tuple[FileScan, TextLayout, tuple[pd.DataFrame, list[str]]]:
    """The scan (hash, encoding, zero bytes), the layout and the parsed text.

    The scan must see every byte before the encoding is known, and the
    parser needs the encoding.  A large file whose first bytes are UTF-8 (or
    carry a byte-order mark) is parsed in that encoding while the scan runs
    beside it, on another thread (hashing and parsing let go of the
    interpreter lock); the parse is kept only when the scan agrees, and what
    the scan refuses (zero bytes) is refused first, as in the plain order.
    """
    size = path.stat().st_size
    guess = _likely_encoding(path) if size >= PARALLEL_SCAN_BYTES else None
    if guess is not None:
        read = _read_beside_scan(path, guess, size, steps)
        if read is not None:
            return read
    steps.begin(0.0, 0.3)
    scan = scan_file(path, steps, text=True)
    _refuse_zero_bytes(path, scan)
    assert scan.encoding is not None
    layout = detect_layout(scan.head, scan.encoding, path.suffix.lower())
    steps.begin(0.3, 1.0)
    return scan, layout, read_delimited(path, scan.encoding, layout, scan.size, steps)


def _read_beside_scan(
    path: Path, encoding: str, size: int, steps: Steps
) -> tuple[FileScan, TextLayout, tuple[pd.DataFrame, list[str]]] | None:
    """Parse in ``encoding`` while the scan runs; None when the scan finds
    another encoding (the caller then reads the file in the plain order)."""
    stop = threading.Event()
    with ThreadPoolExecutor(max_workers=1, thread_name_prefix="covariscope-scan") as pool:
        scanning = pool.submit(scan_file, path, Steps(None, stop.is_set), text=True)
        parsed: tuple[pd.DataFrame, list[str]] | None = None
        failure: DataError | None = None
        try:
            # the same bytes as the scan's head: its first block's first 64 KiB
            head = _read_head(path, min(scan_module.BLOCK_SIZE, 65536))
            layout = detect_layout(head, encoding, path.suffix.lower())
            steps.begin(0.0, 1.0)
            parsed = read_delimited(path, encoding, layout, size, steps)
        except LoadCancelledError:
            stop.set()
            raise
        except DataError as exc:  # said only if the scan finds nothing to say first
            failure = exc
        except BaseException:
            stop.set()
            raise
        scan = scanning.result()
    _refuse_zero_bytes(path, scan)
    if scan.encoding != encoding:
        return None
    if failure is not None:
        raise failure
    assert parsed is not None
    return scan, layout, parsed


def _likely_encoding(path: Path) -> str | None:
    """The encoding the scan will most likely choose, judged from the first
    64 KiB: a byte-order mark's, or UTF-8 when they decode; None when they
    hold a zero byte or do not decode (the plain order then decides)."""
    head = _read_head(path, 65536)
    if head.startswith(codecs.BOM_UTF8):
        return "utf-8-sig"
    if b"\x00" in head:
        return None
    try:
        codecs.getincrementaldecoder("utf-8")().decode(head)
    except UnicodeDecodeError:
        return None
    return "utf-8"


def detect_format(path: Path, head: bytes) -> tuple[str, list[str]]:
    """Decide a file's format from its first bytes, then its extension.

    The content wins over the name: a workbook saved as ``.csv`` is read as
    a workbook, with a note saying so.
    """
    suffix = path.suffix.lower()
    by_name = SUPPORTED_SUFFIXES.get(suffix)
    by_content = _format_from_bytes(head)
    notes: list[str] = []
    if by_content is not None:
        if by_name is not None and by_name != by_content:
            notes.append(
                f"The name ends in {suffix} but the content is {FORMAT_LABELS[by_content]}; "
                f"read as {FORMAT_LABELS[by_content]}."
            )
        return by_content, notes
    if by_name is not None and by_name != "text":
        return by_name, notes
    if (
        b"\x00" not in head
        or by_name == "text"  # a damaged text file: the zero bytes are named later
        or head.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE))
    ):
        if by_name is None:
            notes.append(f"Unknown extension {suffix or '(none)'}; read as delimited text.")
        return "text", notes
    known = ", ".join(sorted(SUPPORTED_SUFFIXES))
    raise DataError(
        f"{path.name} is not a data file Covariscope can read (unknown format). "
        f"Save it as one of: {known}."
    )


def _format_from_bytes(head: bytes) -> str | None:
    if head.startswith(b"PK\x03\x04"):
        return "excel"
    if head.startswith(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"):
        return "excel_old"
    if head.startswith(b"PAR1"):
        return "parquet"
    if head.startswith((b"$FL2", b"$FL3")):
        return "spss"
    if head.startswith(b"<stata_dta>") or (
        len(head) > 1 and head[0] in (0x71, 0x72, 0x73) and head[1] in (1, 2)
    ):
        return "stata"
    if head[12:16] == b"\xc2\xea\x81\x60":
        return "sas"
    if head.startswith(b"HEADER RECORD*******LIB"):
        return "sas_transport"
    return None


def _existing_file(path: Path) -> Path:
    if not path.exists():
        raise DataError(
            f"The data file {str(path)!r} was not found. Check the name and folder, or "
            "locate the file again."
        )
    if path.is_dir():
        raise DataError(f"{str(path)!r} is a folder, not a data file. Choose a file inside it.")
    if not stat.S_ISREG(path.stat().st_mode):
        # a pipe would block forever and a device never ends
        raise DataError(
            f"{str(path)!r} is not a regular file (it is a pipe, device or socket). Save the "
            "data to a file and choose that file."
        )
    if not os.access(path, os.R_OK):
        raise DataError(
            f"The data file {str(path)!r} cannot be read (permission denied). Ask for read "
            "access or copy the file somewhere you can read it."
        )
    return path.resolve()


def check_text_bytes(path: Path) -> str:
    """One pass over a delimited-text file that refuses zero bytes inside it
    or at its end, as :func:`load_table` does, for the engines that read
    the file where it lies.  Returns the file's SHA-256.

    Raises
    ------
    DataError
        A zero byte inside the data (named by line and byte) or a tail of
        zero bytes (named by its size and where to cut the file).
    """
    target = _existing_file(path)
    scan = scan_file(target, text=True)
    _refuse_zero_bytes(target, scan)
    return scan.sha256


def _refuse_zero_bytes(path: Path, scan: FileScan) -> None:
    """A text data file never holds a zero byte: one inside a value would
    silently cut the value short; a run of them at the end is what a crash
    during writing leaves."""
    if scan.nul_at is not None:
        offset, line = scan.nul_at
        raise DataError(
            f"{path.name} holds a zero byte (NUL) at line {line} (byte {offset:,}), inside "
            "the data; a text data file never holds one, and the value there would be read "
            "cut short. Remove it, or export the data again from its source."
        )
    if scan.nul_tail_from is not None:
        count = scan.size - scan.nul_tail_from
        raise DataError(
            f"{path.name} ends in {count:,} zero bytes (from byte {scan.nul_tail_from:,} on), "
            "what an interrupted write leaves behind. Export the data again, or cut the "
            f"file at byte {scan.nul_tail_from:,}."
        )


def _read_head(path: Path, size: int = 64) -> bytes:
    try:
        with open(path, "rb") as handle:
            return handle.read(size)
    except OSError as exc:
        raise DataError(
            f"The data file {path.name} cannot be read ({exc.strerror}). Check that it is "
            "not open elsewhere with exclusive access."
        ) from exc


def _read_binary(path: Path, kind: str, sheet: str | int | None, steps: Steps) -> ReadResult:
    if kind == "excel":
        return read_excel(path, sheet, steps)
    if kind == "excel_old":
        return read_old_excel(path, sheet, steps)
    if kind == "parquet":
        return read_parquet(path, steps)
    return read_statistical(path, kind, steps)


def _checked_frame(path: Path, result: ReadResult, notes: list[str]) -> pd.DataFrame:
    """Name the columns, and refuse duplicates, no columns, and no rows."""
    frame = result.frame
    if not result.names or frame.shape[1] == 0:
        raise DataError(
            f"{path.name} holds no columns. Choose the file that holds the data, or export "
            "it again with a header row."
        )
    names: list[str] = []
    stripped: list[str] = []
    for position, raw in enumerate(result.names, start=1):
        name = raw.strip()
        if not name:
            name = f"unnamed_{position}"
            notes.append(f"Column {position} has no name; it is called {name!r}.")
        elif name != raw:
            stripped.append(name)
        names.append(name)
    if stripped:
        notes.append(
            "Spaces around column names removed: " + ", ".join(repr(n) for n in stripped) + "."
        )
    positions: dict[str, list[int]] = defaultdict(list)
    for position, name in enumerate(names, start=1):
        positions[name].append(position)
    repeated = {n: p for n, p in positions.items() if len(p) > 1}
    if repeated:
        listing = "; ".join(
            f"{n!r} (columns {', '.join(map(str, p))})" for n, p in repeated.items()
        )
        raise DataError(
            f"{path.name} repeats column names: {listing}. Rename them in the file so that "
            "every column has its own name, then load it again."
        )
    frame = frame.copy(deep=False)
    frame.columns = names
    if len(frame) == 0:
        shown = ", ".join(names[:5]) + (", ..." if len(names) > 5 else "")
        raise DataError(
            f"{path.name} has column names ({shown}) but no rows of data. Export the data "
            "again, including its rows."
        )
    return frame
