"""Turn a column into the values a model uses, by its (chosen) type.

- ``continuous``, ``count``: float64, NaN where missing.
- ``binary``: float64 0/1, the reference level 0 and the other level 1
  (so the estimate is for the non-reference level); NaN where missing.
- ``categorical``: a pandas Categorical whose first category is the
  reference level (treatment coding drops the first category); a given
  reference absent from these rows stays, as an empty first category.
- ``date``: datetime64.
- ``identifier``, ``text``: text, unchanged apart from the dtype.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from covariscope.data.profile import (
    COLUMN_TYPES,
    column_levels,
    match_level,
    text_in_numbers_error,
    validate_type,
)
from covariscope.data.values import level_key, parse_numbers
from covariscope.errors import DataError

__all__ = ["binary_coding", "coerce_column"]


def binary_coding(series: pd.Series, reference: object = None) -> tuple[Any, Any]:
    """The (level coded 0, level coded 1) of a binary column.

    The reference defaults to the first sorted level (0 for 0/1). A column
    with one observed value out of {0, 1} keeps 0 and 1 as they are; with
    one observed value and a different reference given (chosen on the whole
    file, absent from these rows), the observed value is coded 1.

    Examples
    --------
    >>> binary_coding(pd.Series(["yes", "no", "yes"]))
    ('no', 'yes')
    >>> binary_coding(pd.Series(["yes", "no"]), reference="yes")
    ('yes', 'no')
    """
    validate_type(series, "binary")
    levels = column_levels(series)
    if len(levels) < 2 and set(levels) <= {0, 1}:
        levels = (0, 1)
    if not levels:
        raise DataError(
            f"Column {str(series.name)!r} has no values, so it cannot be coded 0/1. "
            "Leave it unbound, or check the export."
        )
    if reference is not None and len(levels) == 1 and not _names_a_level(levels, reference):
        # A reference chosen on the whole file can be absent from a subset
        # of its rows (the analytic sample): the one level left is then 1.
        return level_key(reference), levels[0]
    ref = match_level(str(series.name), levels, reference)
    others = [v for v in levels if v != ref]
    return ref, (others[0] if others else None)


def coerce_column(series: pd.Series, type: str, reference: object = None) -> pd.Series:
    """Return ``series`` as a model will use it, given its type.

    Parameters
    ----------
    series : pandas.Series
        The column (its name appears in messages).
    type : str
        One of :data:`~covariscope.data.profile.COLUMN_TYPES`.
    reference : object, optional
        Reference level for binary and categorical columns (default the
        first sorted level).

    Raises
    ------
    DataError
        "Text in a numeric column", naming the column, how many values are
        not numbers and examples, with the fix; or any other mismatch found
        by :func:`~covariscope.data.profile.validate_type`.

    Examples
    --------
    >>> coerce_column(pd.Series(["no", "yes", None], name="smoker"), "binary").tolist()
    [0.0, 1.0, nan]
    >>> coerce_column(pd.Series(["b", "a", "c"]), "categorical", reference="c").cat.categories.tolist()
    ['c', 'a', 'b']
    """
    name = str(series.name)
    if type not in COLUMN_TYPES:
        raise DataError(
            f"Unknown column type {type!r} for {name!r}. Choose one of: {', '.join(COLUMN_TYPES)}."
        )
    if type in ("continuous", "count"):
        numbers, bad = parse_numbers(series)
        if bool(bad.any()):
            raise text_in_numbers_error(name, series[bad], int(series.notna().sum()), type)
        validate_type(numbers.rename(series.name), type)
        return numbers.rename(series.name)
    if type == "binary":
        zero, one = binary_coding(series, reference)
        codes, keys = _factorized(series)
        # One number per distinct value, then one lookup per row: no Python call per row.
        per_level = np.array(
            [0.0 if k == zero else (1.0 if one is not None and k == one else np.nan) for k in keys]
            + [np.nan]
        )
        return pd.Series(per_level[codes], index=series.index, name=series.name, dtype="float64")
    if type == "categorical":
        levels = column_levels(series)
        if reference is not None and levels and not _names_a_level(levels, reference):
            # As for binary: kept as an empty first category, so the coding of
            # the other levels is the same as on the whole file.
            levels = (level_key(reference), *levels)
        ref = match_level(name, levels, reference)
        order = [ref, *(v for v in levels if v != ref)] if levels else []
        codes, keys = _factorized(series)
        position = {k: i for i, k in enumerate(order)}
        per_level = np.array([position.get(k, -1) for k in keys] + [-1], dtype=np.int64)
        return pd.Series(
            pd.Categorical.from_codes(per_level[codes], categories=order),
            index=series.index,
            name=series.name,
        )
    if type == "date":
        validate_type(series, "date")
        if pd.api.types.is_datetime64_any_dtype(series.dtype):
            return series
        return pd.to_datetime(series, errors="coerce", format="mixed").rename(series.name)
    return series.astype("str").where(series.notna(), np.nan)


def _factorized(series: pd.Series) -> tuple[np.ndarray, list[Any]]:
    """Integer codes per row (missing: the last code) and each distinct value's level key."""
    codes, uniques = pd.factorize(series, use_na_sentinel=True)
    keys = [level_key(u) for u in pd.Index(uniques).tolist()]
    codes = np.where(codes < 0, len(keys), codes)
    return codes, keys


def _names_a_level(levels: tuple[Any, ...], reference: object) -> bool:
    wanted = level_key(reference)
    return any(level == wanted or str(level) == str(reference) for level in levels)
