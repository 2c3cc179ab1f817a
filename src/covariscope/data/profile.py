"""Column profiles: inferred type, missing values, distinct values, range, levels.

Inference rules (applied to the present values; the first that holds wins).
The thresholds are common practice, not taken from a published source, and
the user can override any column's type.

1. Dates: a datetime column, or text whose every value looks like a date
   (``2021-03-04``, ``04/03/2021``, optionally with a time) → ``date``.
2. Two distinct values (``0/1``, ``1/2``, ``no/yes``, booleans), or a
   single value out of ``{0, 1}`` → ``binary``.
3. A pandas categorical column → ``categorical`` (its own level order).
4. Whole numbers:

   - all different, at least 20 rows, and either a name that reads as an
     identifier (``id``, ``*_id``, ``key``, ``code``, ``no``, ``number``) or a
     run of consecutive values (every integer from min to max) → ``identifier``;
   - 3 to 10 distinct values, all between 1 and 20 (small positive codes
     such as education 1–5) → ``categorical``;
   - non-negative, with zeros present, at least 3 distinct values and a
     positive sample skewness (the long right tail of event counts) →
     ``count``;
   - otherwise → ``continuous``. Ages and years are therefore continuous;
     a 0–4 code without its own labels reads as continuous or count:
     override it to categorical when it is one.
5. Other numbers → ``continuous``.
6. Text: all different with at least 20 rows → ``identifier``; at most 20
   distinct values → ``categorical``; otherwise ``text``.

Levels are sorted numbers-first, ascending, then text in natural order
(``grade 2`` before ``grade 10``). The default reference level is the first
of these (so 0 for a 0/1 column, ``no`` before ``yes``, the lowest code):
predictable, and the same as the usual treatment coding in regression
software. The user can choose another level.
"""

from __future__ import annotations

import functools
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from covariscope.data.values import (
    is_textual,
    level_key,
    parse_numbers,
    quote_examples,
    sort_levels,
)
from covariscope.errors import DataError
from covariscope.vocabulary import ColumnType

__all__ = [
    "COLUMN_TYPES",
    "LEVEL_TYPES",
    "ColumnProfile",
    "check_settings_columns",
    "column_levels",
    "match_level",
    "profile_column",
    "profile_table",
    "text_in_numbers_error",
    "validate_type",
]

COLUMN_TYPES: tuple[str, ...] = tuple(ColumnType)
LEVEL_TYPES = ("binary", "categorical")

MAX_CODE_LEVELS = 10
MAX_TEXT_LEVELS = 20
MIN_IDENTIFIER_ROWS = 20
MANY_LEVELS = 50
MOSTLY_MISSING_PCT = 50.0
_ID_NAME = re.compile(r"(^|[_\W])(id|key|code|no|number|nr)$|^id[_\W]", re.IGNORECASE)
_DATE_TEXT = re.compile(
    r"^(\d{4}-\d{1,2}-\d{1,2}|\d{1,2}[/.]\d{1,2}[/.]\d{4})([ T]\d{1,2}:\d{2}(:\d{2}(\.\d+)?)?)?$"
)


@dataclass(frozen=True)
class ColumnProfile:
    """What one column holds.

    Attributes
    ----------
    name : str
    type : str
        The type in use: the override if one was given, else the inferred one.
    inferred_type : str
        What the rules in this module's docstring concluded.
    missing : int
    missing_pct : float
        Percentage of rows missing (0–100).
    distinct : int
        Distinct present values (counted when first asked for).
    single_value : bool
        Every present value is the same one: ``distinct == 1``, without the count.
    minimum, maximum : float, pandas.Timestamp or None
        For numbers and dates; None for text.
    levels : tuple
        For binary and categorical columns, the sorted levels; else empty.
    reference : object or None
        The reference level for binary and categorical columns.
    warnings : tuple of str
        Plain sentences: all missing, constant, numbers mixed with text, ...
    level_labels : dict
        Level -> its value label, for the levels that have one (Stata and
        SPSS files carry them).  The levels themselves stay the codes, so the
        design and the saved reference level read the same values with or
        without labels; :meth:`level_text` is the form to show.
    """

    name: str
    type: str
    inferred_type: str
    missing: int
    missing_pct: float
    minimum: Any
    maximum: Any
    levels: tuple[Any, ...]
    reference: Any
    warnings: tuple[str, ...]
    # A dict is not hashable; the profile's hash leaves it out.
    level_labels: Mapping[Any, str] = field(default_factory=dict, hash=False)
    #: a mostly numeric column's few text values, and the first data rows
    #: (1-based) that hold them; empty when there are none
    stray_values: tuple[str, ...] = ()
    stray_rows: tuple[int, ...] = ()
    # Counting every distinct value of a float column costs more than all the
    # type rules: they need only "one, two or more", so the exact count waits
    # until something asks for it.
    count_distinct: Callable[[], int] = field(
        default=lambda: 0, hash=False, compare=False, repr=False
    )
    #: every present value is one and the same (``distinct == 1``), known from
    #: the type rules' count, which is exact up to two, without the full count
    single_value: bool = False

    @functools.cached_property
    def distinct(self) -> int:
        """Distinct present values (counted on first use)."""
        return self.count_distinct()

    def level_text(self, level: Any) -> str:
        """A level as the user reads it: ``"female (2)"`` when the code has a
        value label, else the level itself (``"2"``)."""
        label = self.level_labels.get(level_key(level))
        return f"{label} ({level})" if label is not None else str(level)


def profile_table(
    frame: pd.DataFrame,
    overrides: Mapping[str, str] | None = None,
    references: Mapping[str, object] | None = None,
    value_labels: Mapping[str, Mapping[Any, str]] | None = None,
) -> dict[str, ColumnProfile]:
    """Profile every column of ``frame``.

    Parameters
    ----------
    overrides : mapping, optional
        Column -> type chosen by the user (one of :data:`COLUMN_TYPES`).
    references : mapping, optional
        Column -> reference level chosen by the user.
    value_labels : mapping, optional
        Column -> {code: label}, as :class:`~covariscope.data.loading.LoadedTable`
        keeps them; they label the levels (``level_labels``) and change no type.

    Raises
    ------
    DataError
        An override or reference names an unknown column, or does not fit
        its column (see :func:`profile_column`).

    Examples
    --------
    >>> frame = pd.DataFrame({"smoker": [0, 1, 1, 0], "bmi": [21.5, 30.2, 25.0, 27.1]})
    >>> {k: p.type for k, p in profile_table(frame).items()}
    {'smoker': 'binary', 'bmi': 'continuous'}
    """
    overrides = dict(overrides or {})
    references = dict(references or {})
    labels = dict(value_labels or {})
    check_settings_columns([str(c) for c in frame.columns], overrides, references)
    return {
        str(name): profile_column(
            frame[name],
            override_type=overrides.get(str(name)),
            reference=references.get(str(name)),
            value_labels=labels.get(str(name)),
        )
        for name in frame.columns
    }


def check_settings_columns(
    columns: Sequence[str], overrides: Mapping[str, str], references: Mapping[str, object]
) -> None:
    """Refuse column settings (types, reference levels) that name columns not in the data."""
    unknown = sorted((set(overrides) | set(references)) - set(columns))
    if unknown:
        raise DataError(
            "The saved column settings name columns that are not in the data: "
            f"{', '.join(map(repr, unknown))}. Rename the columns back, or clear those settings."
        )


def profile_column(
    series: pd.Series,
    override_type: str | None = None,
    reference: object = None,
    value_labels: Mapping[Any, str] | None = None,
) -> ColumnProfile:
    """Profile one column and check a user's type or reference choice.

    Parameters
    ----------
    series : pandas.Series
        The column; its name is used in messages.
    override_type : str, optional
        A type from :data:`COLUMN_TYPES` to use instead of the inferred one.
    reference : object, optional
        Reference level (binary and categorical only; ignored for other
        types, so a stale choice does not block a changed type). Matched
        to a level by value or by its text (``"1"`` matches 1).
    value_labels : mapping, optional
        Code -> label for this column; the labels of its levels become
        ``level_labels`` (the levels stay the codes).

    Raises
    ------
    DataError
        The override is unknown or does not fit the values (text in a
        numeric column, more than two levels for binary, ...), or the
        reference is not a level.

    Examples
    --------
    >>> p = profile_column(pd.Series(["no", "yes", None, "yes"], name="diabetes"))
    >>> p.type, p.levels, p.reference, p.missing
    ('binary', ('no', 'yes'), 'no', 1)
    >>> sex = profile_column(pd.Series([1, 2, 2], name="sex"), value_labels={1: "male", 2: "female"})
    >>> sex.levels, [sex.level_text(v) for v in sex.levels]
    ((1, 2), ['male (1)', 'female (2)'])
    """
    name = str(series.name)
    present = series.dropna()
    missing = int(len(series) - len(present))
    missing_pct = 100.0 * missing / len(series) if len(series) else 0.0
    distinct = _distinct_for_rules(series, present)
    single_value = distinct == 1
    warnings: list[str] = []
    inferred = _infer(series, present, distinct, warnings)
    kind = inferred
    if override_type is not None:
        validate_type(series, override_type)
        kind = override_type
    levels: tuple[Any, ...] = ()
    chosen_reference: Any = None
    if kind in LEVEL_TYPES:
        levels = column_levels(series)
        chosen_reference = match_level(name, levels, reference)
        if reference is None and kind == "binary" and _only_ones(levels):
            # a 0/1 column where every row is 1 (everyone had the event):
            # 0 stays the reference, so the 1s keep meaning 1
            chosen_reference = 0
    no_strays: tuple[tuple[str, ...], tuple[int, ...]] = ((), ())
    strays, stray_rows = _strays(series, present) if override_type is None else no_strays
    minimum, maximum = _range(series, present, kind)
    if kind in LEVEL_TYPES:
        distinct = len(levels)  # the warnings count levels exactly
    _general_warnings(series, present, kind, distinct, missing_pct, warnings)
    return ColumnProfile(
        name=name,
        type=kind,
        inferred_type=inferred,
        missing=missing,
        missing_pct=missing_pct,
        count_distinct=lambda: int(series.nunique()),
        single_value=single_value,
        minimum=minimum,
        maximum=maximum,
        levels=levels,
        reference=chosen_reference,
        warnings=tuple(warnings),
        level_labels=_labels_of(levels, value_labels),
        stray_values=strays,
        stray_rows=stray_rows,
    )


def _distinct_for_rules(series: pd.Series, present: pd.Series) -> int:
    """Distinct present values, exact except that a column of numbers that are not
    all whole reports 3 for "three or more" (the type rules ask no more of it)."""
    if not _plain_numbers(series.dtype) or len(present) == 0:
        return int(present.nunique())
    values = present.to_numpy(dtype=np.float64)
    if _all_whole(values):
        return int(present.nunique())
    other = values != values[0]
    if not other.any():
        return 1
    second = values[int(np.argmax(other))]
    return 2 if bool(np.all(~other | (values == second))) else 3


#: Values a whole-number test looks at first: most columns of measurements
#: are told apart from whole numbers there, without a pass over every row.
_WHOLE_HEAD = 1024


def _all_whole(values: np.ndarray) -> bool:
    """``np.all(values == np.round(values))``, the same answer, found on the
    first values when one of them is not whole.

    >>> _all_whole(np.array([1.0, 2.0, 3.0])), _all_whole(np.r_[np.ones(5000), 0.5])
    (True, False)
    """
    head = values[:_WHOLE_HEAD]
    if not np.all(head == np.round(head)):
        return False
    return bool(np.all(values == np.round(values)))


def _plain_numbers(dtype: Any) -> bool:
    """A numeric column that is neither booleans nor categories."""
    return bool(pd.api.types.is_numeric_dtype(dtype)) and not (
        pd.api.types.is_bool_dtype(dtype) or isinstance(dtype, pd.CategoricalDtype)
    )


def _only_ones(levels: tuple[Any, ...]) -> bool:
    return len(levels) == 1 and not isinstance(levels[0], str) and bool(levels[0] == 1)


def _strays(series: pd.Series, present: pd.Series) -> tuple[tuple[str, ...], tuple[int, ...]]:
    """The few text values of a column that is otherwise numbers, and the
    first rows holding them (1-based data rows)."""
    if len(present) == 0 or not is_textual(series):
        return (), ()
    counts = present.value_counts(sort=False)
    _, bad = parse_numbers(pd.Series(counts.index.astype("str"), dtype="str"))
    bad_rows = int(counts.to_numpy()[bad.to_numpy()].sum())
    if not bad_rows or bad_rows > 0.2 * len(present):
        return (), ()
    wrong = counts.index[bad.to_numpy()]
    rows = np.flatnonzero(series.isin(wrong).to_numpy())[:5] + 1
    return tuple(str(v) for v in wrong[:5]), tuple(int(r) for r in rows)


def _labels_of(levels: tuple[Any, ...], value_labels: Mapping[Any, str] | None) -> dict[Any, str]:
    # Codes may be read as 2.0 in one reader and 2 in another: compare level keys.
    keyed = {level_key(code): str(text) for code, text in (value_labels or {}).items()}
    return {level: keyed[level] for level in levels if level in keyed}


def column_levels(series: pd.Series) -> tuple[Any, ...]:
    """The sorted levels of a column (a categorical keeps its own order)."""
    if isinstance(series.dtype, pd.CategoricalDtype):
        used = set(series.dropna().unique().tolist())
        return tuple(level_key(c) for c in series.cat.categories if c in used)
    return sort_levels(series.dropna().unique().tolist())


def validate_type(series: pd.Series, kind: str) -> None:
    """Raise :class:`DataError` when ``kind`` cannot describe the column's values."""
    name = str(series.name)
    if kind not in COLUMN_TYPES:
        raise DataError(
            f"Unknown column type {kind!r} for {name!r}. Choose one of: {', '.join(COLUMN_TYPES)}."
        )
    present = series.dropna()
    if kind in ("continuous", "count"):
        numbers, bad = parse_numbers(series)
        if bool(bad.any()):
            raise text_in_numbers_error(name, series[bad], len(present), kind)
        values = numbers.dropna()
        if (
            kind == "count"
            and len(values)
            and not bool(((values >= 0) & (values == np.round(values))).all())
        ):
            wrong = values[(values < 0) | (values != np.round(values))]
            raise DataError(
                f"Column {name!r} cannot be a count: {len(wrong)} value(s) are negative or not "
                f"whole numbers (e.g. {quote_examples(wrong.tolist())}). Mark it continuous."
            )
    elif kind == "binary":
        levels = column_levels(series)
        if len(levels) > 2:
            raise DataError(
                f"Column {name!r} cannot be binary: it has {len(levels)} distinct values "
                f"({quote_examples(levels, 5)}{', ...' if len(levels) > 5 else ''}). Mark it "
                "categorical, or recode it to two values in the file."
            )
    elif kind == "date" and not _looks_like_dates(series, present):
        parsed = pd.to_datetime(present.astype("str"), errors="coerce", format="mixed")
        wrong = present[parsed.isna().to_numpy()]
        if len(wrong):
            raise DataError(
                f"Column {name!r} cannot be a date: {len(wrong)} of {len(present)} values are "
                f"not dates (e.g. {quote_examples(wrong.tolist())}). Choose another type, or "
                "clean the file."
            )


def text_in_numbers_error(name: str, wrong: pd.Series, present: int, kind: str) -> DataError:
    """The message for text found where numbers were asked for."""
    return DataError(
        f"Text in a numeric column: {name!r} is marked {kind}, but {len(wrong)} of {present} "
        f"values are not numbers (e.g. {quote_examples(wrong.tolist())}). Mark the column "
        "categorical, or clean the file (a missing value should be an empty cell)."
    )


def _infer(series: pd.Series, present: pd.Series, distinct: int, warnings: list[str]) -> str:
    name = str(series.name)
    if len(present) == 0:
        return "continuous" if pd.api.types.is_numeric_dtype(series.dtype) else "text"
    if pd.api.types.is_datetime64_any_dtype(series.dtype) or _looks_like_dates(series, present):
        return "date"
    if isinstance(series.dtype, pd.CategoricalDtype):
        return "binary" if distinct == 2 else "categorical"
    if pd.api.types.is_bool_dtype(series.dtype):
        return "binary"
    if is_textual(series):
        # Judge the distinct values, weighted by how often each occurs: a
        # million rows of three labels cost three parses, not a million.
        counts = present.value_counts(sort=False)
        _, bad = parse_numbers(pd.Series(counts.index.astype("str"), dtype="str"))
        bad_rows = int(counts.to_numpy()[bad.to_numpy()].sum())
        if bad_rows and bad_rows <= 0.2 * len(present):
            wrong = counts.index[bad.to_numpy()]
            warnings.append(
                f"Looks numeric, but {bad_rows} of {len(present)} values are text (e.g. "
                f"{quote_examples(wrong.tolist())}): clean them in the file, or use the "
                "column as categorical."
            )
        if not bad_rows:
            return _infer_numbers(name, parse_numbers(present)[0], distinct)
        if distinct == 2:
            return "binary"
        if distinct == len(present) and len(present) >= MIN_IDENTIFIER_ROWS:
            return "identifier"
        return "categorical" if distinct <= MAX_TEXT_LEVELS else "text"
    return _infer_numbers(name, present.astype("float64"), distinct)


def _infer_numbers(name: str, values: pd.Series, distinct: int) -> str:
    values = values.dropna()
    if distinct == 2 or (distinct == 1 and bool(values.isin([0.0, 1.0]).all())):
        return "binary"
    whole = bool(np.all(np.isfinite(values))) and _all_whole(values.to_numpy())
    if not whole or distinct < 2:
        return "continuous"
    low, high = float(values.min()), float(values.max())
    if distinct == len(values) and len(values) >= MIN_IDENTIFIER_ROWS:
        consecutive = high - low + 1 == len(values)
        if consecutive or _ID_NAME.search(name):
            return "identifier"
    if distinct <= MAX_CODE_LEVELS and low >= 1 and high <= 20:
        return "categorical"
    if low == 0 and distinct >= 3 and float(values.skew()) > 0:
        return "count"
    return "continuous"


def _looks_like_dates(series: pd.Series, present: pd.Series) -> bool:
    if pd.api.types.is_datetime64_any_dtype(series.dtype):
        return True
    if not is_textual(series) or len(present) == 0:
        return False
    # the first 2000 values only, cut before the text is stripped (not after)
    sample = present.iloc[: min(len(present), 2000)].astype("str").str.strip()
    return bool(sample.str.match(_DATE_TEXT).all())


def match_level(name: str, levels: tuple[Any, ...], reference: object) -> Any:
    """The level that ``reference`` names (by value or text); the first level when None."""
    if not levels:
        return None
    if reference is None:
        return levels[0]
    wanted = level_key(reference)
    for level in levels:
        if level == wanted or str(level) == str(reference):
            return level
    raise DataError(
        f"{reference!r} is not a level of {name!r}. Choose one of: {quote_examples(levels, 20)}."
    )


def _range(series: pd.Series, present: pd.Series, kind: str) -> tuple[Any, Any]:
    if len(present) == 0:
        return None, None
    if pd.api.types.is_datetime64_any_dtype(series.dtype):
        return present.min(), present.max()
    if kind == "date":
        parsed = pd.to_datetime(present.astype("str"), errors="coerce", format="mixed")
        return parsed.min(), parsed.max()
    if is_textual(series):
        # The extremes of the distinct values are the extremes of the column.
        present = pd.Series(present.unique()).astype("str")
    elif _plain_numbers(series.dtype):
        # numbers with nothing missing: numpy's extremes, without the filled copy
        # pandas makes; a zero (which may be -0.0) is left to pandas
        values = present.to_numpy(dtype=np.float64)
        low, high = values.min(), values.max()
        if low != 0 and high != 0:
            return float(low), float(high)
    numbers, bad = parse_numbers(present)
    if bool(bad.any()) or bool(numbers.isna().all()):
        return None, None
    return float(numbers.min()), float(numbers.max())


def _general_warnings(
    series: pd.Series,
    present: pd.Series,
    kind: str,
    distinct: int,
    missing_pct: float,
    warnings: list[str],
) -> None:
    if len(present) == 0:
        warnings.append(
            f"All {len(series)} values are missing: the column cannot be used. Leave it "
            "unbound, or check the export."
        )
        return
    if distinct == 1:
        value = present.iloc[0]
        warnings.append(
            f"Constant: every present value is {str(value)!r}, so it cannot explain any "
            "difference between rows. Leave it out of the models."
        )
    if missing_pct > MOSTLY_MISSING_PCT:
        warnings.append(
            f"{missing_pct:.0f}% of values are missing: adjusting for it would drop most rows "
            "from the analytic sample."
        )
    if kind == "identifier":
        warnings.append("Every value is different: this looks like an identifier, not a covariate.")
    if kind == "categorical" and distinct > MANY_LEVELS:
        warnings.append(
            f"{distinct} levels: a categorical covariate with this many levels adds as many "
            "terms to the model. Group the levels, or use it as continuous if it is a number."
        )
