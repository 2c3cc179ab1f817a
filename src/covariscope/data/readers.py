"""Readers for workbook, columnar and statistical-package files.

Each reader opens the file read-only, reports progress through
:class:`~covariscope.data.progress.Steps`, and returns the frame, the raw
column names, notes for the user, and (where the format has them) value
labels and the text encoding recorded in the file.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from covariscope.data.progress import Steps
from covariscope.data.values import tidy_text_column
from covariscope.errors import DataError

__all__ = [
    "ReadResult",
    "nested_columns",
    "nested_parquet_columns",
    "read_excel",
    "read_old_excel",
    "read_parquet",
    "read_statistical",
]

STAT_CHUNK_ROWS = 200_000
_EXCEL_PROGRESS_ROWS = 5_000


@dataclass
class ReadResult:
    """A reader's output before the shared checks."""

    frame: pd.DataFrame
    names: list[str]
    notes: list[str] = field(default_factory=list)
    value_labels: dict[str, dict[Any, str]] = field(default_factory=dict)
    encoding: str | None = None
    #: sentences naming the columns left out because no model can use them
    left_out: list[str] = field(default_factory=list)


def read_excel(path: Path, sheet: str | int | None, steps: Steps) -> ReadResult:
    """Read one sheet of an .xlsx workbook (openpyxl, read-only mode).

    The first non-empty row is the header; blank rows are skipped; cached
    values of formulas are read, not the formulas.
    """
    import openpyxl

    # A handle rather than a path: openpyxl then opens nothing itself and
    # does not refuse a workbook whose name has another extension.
    with open(path, "rb") as handle:
        try:
            book = openpyxl.load_workbook(handle, read_only=True, data_only=True)
        except Exception as exc:  # openpyxl raises many kinds for a damaged file
            raise DataError(
                f"{path.name} could not be opened as an Excel workbook ({exc}). Open it in "
                "your spreadsheet program and save it again as .xlsx, or export it as CSV."
            ) from exc
        try:
            names = list(book.sheetnames)
            title = _pick_sheet(path, names, sheet)
            sheet_obj = book[title]
            total = sheet_obj.max_row or 0
            rows: list[tuple[Any, ...]] = []
            for number, row in enumerate(sheet_obj.iter_rows(values_only=True), start=1):
                if any(v is not None and not (isinstance(v, str) and not v.strip()) for v in row):
                    rows.append(row)
                if number % _EXCEL_PROGRESS_ROWS == 0:
                    steps.report(number / total if total else 0.0)
        finally:
            book.close()
    return _sheet_result(rows, names, title)


def read_old_excel(path: Path, sheet: str | int | None, steps: Steps) -> ReadResult:
    """Read one sheet of an old-style .xls workbook (BIFF, Excel 97–2003) with xlrd.

    The same rules as :func:`read_excel`: the first non-empty row is the
    header, blank rows are skipped, cached values of formulas are read, and
    date cells become dates.

    Raises
    ------
    DataError
        xlrd is not installed, the file is damaged or not a workbook, or
        the sheet does not exist.
    """
    try:
        import xlrd
    except ImportError as exc:
        raise DataError(
            f"{path.name} is an old-style .xls workbook, which needs the xlrd package. Save "
            "it as .xlsx or CSV in your spreadsheet program, or install xlrd."
        ) from exc
    # The bytes, not the path: xlrd then opens nothing itself (the file is only read).
    content = path.read_bytes()
    try:
        book = xlrd.open_workbook(file_contents=content, on_demand=True)
    except Exception as exc:  # xlrd raises several kinds for a damaged file
        raise DataError(
            f"{path.name} could not be opened as an old-style .xls workbook ({exc}). Open it "
            "in your spreadsheet program and save it again as .xlsx, or export it as CSV."
        ) from exc
    try:
        names = list(book.sheet_names())
        title = _pick_sheet(path, names, sheet)
        sheet_obj = book.sheet_by_name(title)
        total = sheet_obj.nrows
        rows: list[tuple[Any, ...]] = []
        for number in range(total):
            row = tuple(_old_cell(cell, book.datemode, xlrd) for cell in sheet_obj.row(number))
            if any(v is not None and not (isinstance(v, str) and not v.strip()) for v in row):
                rows.append(row)
            if (number + 1) % _EXCEL_PROGRESS_ROWS == 0:
                steps.report((number + 1) / total)
    finally:
        book.release_resources()
    return _sheet_result(rows, names, title)


def _old_cell(cell: Any, datemode: int, xlrd: Any) -> Any:
    """A cell's value as openpyxl would give it (None for blanks and errors)."""
    kind = cell.ctype
    if kind in (xlrd.XL_CELL_EMPTY, xlrd.XL_CELL_BLANK, xlrd.XL_CELL_ERROR):
        return None
    if kind == xlrd.XL_CELL_DATE:
        try:
            return xlrd.xldate.xldate_as_datetime(cell.value, datemode)
        except (ValueError, OverflowError, xlrd.xldate.XLDateError):
            return cell.value  # a number formatted as a date outside the calendar
    if kind == xlrd.XL_CELL_BOOLEAN:
        return bool(cell.value)
    return cell.value


def _sheet_result(rows: list[tuple[Any, ...]], names: list[str], title: str) -> ReadResult:
    """The frame of a sheet's non-empty rows, the first being the header."""
    notes = []
    if len(names) > 1:
        others = ", ".join(repr(n) for n in names if n != title)
        notes.append(f"Read sheet {title!r}; the workbook also has {others}.")
    if not rows:
        return ReadResult(pd.DataFrame(), [], notes)
    width = max(len(r) for r in rows)
    header = list(rows[0]) + [None] * (width - len(rows[0]))
    body = [list(r) + [None] * (width - len(r)) for r in rows[1:]]
    # Formatting can stretch a sheet's used range past the data: drop
    # trailing columns that have neither a name nor a value.
    while width and header[width - 1] is None and all(r[width - 1] is None for r in body):
        width -= 1
    header = header[:width]
    columns = {i: _excel_column([r[i] for r in body]) for i in range(width)}
    frame = pd.DataFrame(columns, index=pd.RangeIndex(len(body)))
    raw = ["" if h is None else _header_text(h) for h in header]
    return ReadResult(frame, raw, notes)


def _pick_sheet(path: Path, names: list[str], sheet: str | int | None) -> str:
    if sheet is None:
        if not names:
            raise DataError(f"{path.name} has no sheets. Save the workbook again with the data.")
        return names[0]
    if isinstance(sheet, int):
        if 0 <= sheet < len(names):
            return names[sheet]
        raise DataError(
            f"{path.name} has {len(names)} sheet(s); there is no sheet number {sheet + 1}. "
            f"Choose one of: {', '.join(repr(n) for n in names)}."
        )
    if sheet in names:
        return sheet
    raise DataError(
        f"{path.name} has no sheet named {sheet!r}. Choose one of: "
        f"{', '.join(repr(n) for n in names)}."
    )


def _header_text(value: Any) -> str:
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)


def _excel_column(values: list[Any]) -> pd.Series:
    present = [v for v in values if v is not None]
    if present and all(isinstance(v, dt.datetime | dt.date) for v in present):
        return pd.to_datetime(pd.Series(values, dtype=object))
    if present and all(isinstance(v, bool) for v in present):
        return pd.Series(values, dtype="boolean" if len(present) < len(values) else bool)
    if all(isinstance(v, int | float) and not isinstance(v, bool) for v in present):
        numbers = pd.Series(values, dtype="float64")
        return tidy_text_column(numbers) if present else numbers
    text = pd.Series([None if v is None else _header_text(v) for v in values], dtype="str")
    return tidy_text_column(text)


def read_parquet(path: Path, steps: Steps) -> ReadResult:
    """Read a Parquet file row group by row group (pyarrow)."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    with open(path, "rb") as handle:
        try:
            parquet = pq.ParquetFile(handle)
        except (pa.ArrowInvalid, OSError) as exc:
            raise DataError(
                f"{path.name} could not be read as Parquet ({exc}). Export it again, "
                "or save it as CSV."
            ) from exc
        groups = parquet.num_row_groups
        tables = []
        for index in range(groups):
            tables.append(parquet.read_row_group(index))
            steps.report((index + 1) / groups)
        table = pa.concat_tables(tables) if tables else parquet.schema_arrow.empty_table()
    table, notes = _without_nested(table, path)
    names = [str(n) for n in table.column_names]
    # Rename before converting: pandas cannot build a frame from duplicate names
    # reliably, and the shared checks report duplicates from ``names``.
    frame = table.rename_columns([f"c{i}" for i in range(len(names))]).to_pandas()
    frame.columns = range(len(names))
    return ReadResult(frame.reset_index(drop=True), names, left_out=notes)


def nested_columns(schema: Any) -> dict[str, str]:
    """Columns of an Arrow schema that hold nested values (lists, structs,
    maps), each with the plain sentence that says it was left out.

    Every engine leaves these out the same way: a variable holds one value
    per row.
    """
    import pyarrow.types as pat

    return {
        field.name: (
            f"Column {field.name!r} holds {field.type} values (several values per row), which "
            "cannot be a variable in a model; it was left out. The other columns were read. "
            "To use it, store one value per row in the file."
        )
        for field in schema
        if pat.is_nested(field.type)
    }


def nested_parquet_columns(path: Path) -> dict[str, str]:
    """:func:`nested_columns` of a Parquet file or folder, from its schema
    alone (no row is read); empty for any other file."""
    if path.suffix.lower() not in (".parquet", ".pq") and not path.is_dir():
        return {}
    import pyarrow.dataset as ds

    return nested_columns(ds.dataset(str(path), format="parquet").schema)


def _without_nested(table: Any, path: Path) -> tuple[Any, list[str]]:
    """Leave out columns of nested types (lists, structs, maps): a variable
    holds one value per row.  Each one left out is named, with its type."""
    nested = nested_columns(table.schema)
    if not nested:
        return table, []
    if len(nested) == table.num_columns:
        raise DataError(
            f"{path.name}: every column holds nested values (lists or structures), none of "
            "which can be a variable. Store one value per row and column, then load it again."
        )
    keep = [i for i, field in enumerate(table.schema) if field.name not in nested]
    return table.select(keep), list(nested.values())


_STAT_KINDS = {
    "stata": ("read_dta", "Stata"),
    "spss": ("read_sav", "SPSS"),
    "sas": ("read_sas7bdat", "SAS"),
    "sas_transport": ("read_xport", "SAS transport"),
}


def read_statistical(path: Path, kind: str, steps: Steps) -> ReadResult:
    """Read a Stata, SPSS or SAS file with pyreadstat, in blocks of rows.

    Codes are kept as numbers; their value labels are returned separately.
    Falls back to pandas' own readers when pyreadstat is not installed.
    """
    function_name, label = _STAT_KINDS[kind]
    try:
        import pyreadstat
    except ImportError:
        return _read_statistical_with_pandas(path, kind, label)
    reader: Callable[..., Any] = getattr(pyreadstat, function_name)
    try:
        _, meta = reader(str(path), metadataonly=True)
        total = meta.number_rows
        chunks = []
        offset = 0
        while True:
            chunk, meta = reader(
                str(path),
                row_offset=offset,
                row_limit=STAT_CHUNK_ROWS,
                dates_as_pandas_datetime=True,
            )
            chunks.append(chunk)
            offset += len(chunk)
            steps.report(offset / total if total else 0.0)
            if len(chunk) < STAT_CHUNK_ROWS or (total is not None and offset >= total):
                break
    except pyreadstat.ReadstatError as exc:
        raise DataError(
            f"{path.name} could not be read as a {label} file ({exc}). Check that the file "
            f"is complete, or export it again from {label}."
        ) from exc
    frame = pd.concat(chunks, ignore_index=True) if len(chunks) > 1 else chunks[0]
    names = [str(n) for n in frame.columns]
    frame.columns = range(len(names))
    labels = {
        str(k): {_plain(code): str(text) for code, text in v.items()}
        for k, v in (meta.variable_value_labels or {}).items()
    }
    notes = []
    if labels:
        notes.append(
            f"Value labels found for {len(labels)} column(s); the codes are kept as values."
        )
    encoding = getattr(meta, "file_encoding", None)
    return ReadResult(frame.reset_index(drop=True), names, notes, labels, encoding or None)


def _plain(code: Any) -> Any:
    if isinstance(code, float) and code.is_integer():
        return int(code)
    return code


def _read_statistical_with_pandas(path: Path, kind: str, label: str) -> ReadResult:
    if kind == "spss":
        raise DataError(
            f"{path.name} is an SPSS file, which needs the pyreadstat package. Install it, "
            "or export the data from SPSS as CSV."
        )
    try:
        if kind == "stata":
            frame = pd.read_stata(path, convert_categoricals=False)
        else:
            frame = pd.read_sas(path, format="xport" if kind == "sas_transport" else "sas7bdat")
    except Exception as exc:  # pandas raises several kinds for a damaged file
        raise DataError(
            f"{path.name} could not be read as a {label} file ({exc}). Export it again."
        ) from exc
    names = [str(n) for n in frame.columns]
    frame.columns = range(len(names))
    return ReadResult(frame.reset_index(drop=True), names)
