"""Small value helpers shared by loading, profiling and coercion.

Kept in one place so that "is this a number?" and "which level comes
first?" get the same answer everywhere.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

__all__ = [
    "is_textual",
    "level_key",
    "natural_key",
    "parse_numbers",
    "quote_examples",
    "sort_levels",
    "tidy_text_column",
]

_DIGITS = re.compile(r"(\d+)")


def is_textual(series: pd.Series) -> bool:
    """True for string and generic object columns (not numbers, dates, categories)."""
    return bool(pd.api.types.is_string_dtype(series.dtype) or series.dtype == object) and not (
        isinstance(series.dtype, pd.CategoricalDtype)
    )


def parse_numbers(series: pd.Series, decimal: str = ".") -> tuple[pd.Series, pd.Series]:
    """Read a column as numbers.

    Returns
    -------
    numbers : Series of float64
        The parsed values, NaN where missing or not a number.
    bad : Series of bool
        True where a value is present but is not a number.

    Examples
    --------
    >>> nums, bad = parse_numbers(pd.Series(["1", " 2.5", None, "n/a"]))
    >>> nums.tolist()[:2], bad.tolist()
    ([1.0, 2.5], [False, False, False, True])
    """
    if pd.api.types.is_bool_dtype(series.dtype):
        numbers = series.astype("float64")
        return numbers, pd.Series(False, index=series.index)
    if pd.api.types.is_numeric_dtype(series.dtype) and not isinstance(
        series.dtype, pd.CategoricalDtype
    ):
        return series.astype("float64"), pd.Series(False, index=series.index)
    fast = _numbers_by_arrow(series, decimal)
    if fast is not None:
        return fast, pd.Series(False, index=series.index)
    text = series.astype("str").str.strip()
    if decimal != ".":
        text = text.str.replace(decimal, ".", regex=False)
    text = text.where(text != "", np.nan)
    numbers = pd.to_numeric(text, errors="coerce").astype("float64")
    bad = text.notna() & numbers.isna()
    return numbers, bad


def _numbers_by_arrow(series: pd.Series, decimal: str) -> pd.Series | None:
    """Parse a clean numeric text column quickly; None when any value is not a number.

    pyarrow's cast is several times faster than ``pd.to_numeric`` but
    refuses the whole column on one bad value, so it only serves the
    common, clean case; the slow path then finds the bad values.
    """
    try:
        array = pa.array(series.astype("str"), from_pandas=True)
        array = pc.utf8_trim_whitespace(array)
        if decimal != ".":
            array = pc.replace_substring(array, decimal, ".")
        array = pc.if_else(pc.equal(array, ""), pa.scalar(None, pa.string()), array)
        numbers = pc.cast(array, pa.float64())
    except (pa.ArrowInvalid, pa.ArrowTypeError, pa.ArrowNotImplementedError):
        return None
    values = numbers.to_numpy(zero_copy_only=False).astype("float64", copy=False)
    return pd.Series(values, index=series.index, name=series.name)


def tidy_text_column(series: pd.Series, decimal: str = ".") -> pd.Series:
    """Turn a column of strings into numbers when every present value is one.

    Whole numbers without gaps become int64, others float64; a column with
    any non-number stays text (blank strings become missing).
    """
    numbers, bad = parse_numbers(series, decimal)
    if bool(bad.any()):
        out = series.astype("str").str.strip()
        return out.where(series.notna() & (out != ""), np.nan)
    finite = numbers.dropna()
    if (
        len(finite) == len(numbers)
        and len(finite)
        and bool(np.all(np.isfinite(finite)) and np.all(finite == np.round(finite)))
        and float(finite.abs().max()) < 2**53
    ):
        return numbers.astype("int64")
    return numbers


def level_key(value: Any) -> Any:
    """A hashable, comparable form of a level: whole floats become ints.

    >>> level_key(np.float64(1.0)), level_key("a"), level_key(2.5)
    (1, 'a', 2.5)
    """
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and math.isfinite(value) and value == int(value):
        return int(value)
    return value


def natural_key(text: str) -> tuple[Any, ...]:
    """Sort key reading digit runs as numbers and ignoring case ('a2' < 'a10')."""
    parts = _DIGITS.split(text.casefold())
    return tuple(int(p) if p.isdigit() else p for p in parts)


def sort_levels(values: Iterable[Any]) -> tuple[Any, ...]:
    """Sort levels sensibly: numbers ascending, then text in natural order.

    >>> sort_levels(["b10", "b9", "A"])
    ('A', 'b9', 'b10')
    >>> sort_levels([2.0, 0, 1])
    (0, 1, 2)
    """
    keys = {level_key(v) for v in values}
    numbers = sorted(k for k in keys if isinstance(k, int | float) and not isinstance(k, bool))
    others = sorted(
        (k for k in keys if not (isinstance(k, int | float) and not isinstance(k, bool))),
        key=lambda k: (natural_key(str(k)), str(k)),
    )
    return (*numbers, *others)


def quote_examples(values: Iterable[Any], limit: int = 3) -> str:
    """The first ``limit`` distinct values, quoted, for a message."""
    seen: list[str] = []
    for value in values:
        text = repr(str(value))
        if text not in seen:
            seen.append(text)
        if len(seen) == limit:
            break
    return ", ".join(seen)
