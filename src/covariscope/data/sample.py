"""The analytic sample: complete cases on every column the models use.

Every compared model (crude, each covariate added, full, each dropped, each
set) must see the same rows, or differences between estimates would mix
confounding with a change of sample; so rows are kept only when complete on
outcome, exposure and every bound measured covariate at once.
"""

from __future__ import annotations

import difflib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from covariscope.errors import DataError

__all__ = [
    "AnalyticSample",
    "CompleteCases",
    "analytic_sample",
    "check_known",
    "complete_cases",
    "no_rows_error",
    "summary_text",
    "with_complete_columns",
]


@dataclass(frozen=True, eq=False)
class CompleteCases:
    """Which rows are complete on the chosen columns, and what was lost, without a copy.

    The same counts as :class:`AnalyticSample`, with the rows as a boolean
    mask (``keep``) over the file's rows instead of a copy of the frame.
    """

    keep: np.ndarray
    rows: int
    used: int
    columns: tuple[str, ...]
    missing_by_column: dict[str, int] = field(default_factory=dict)
    lost_by_column: dict[str, int] = field(default_factory=dict)
    lost_to_several: int = 0
    message: str = ""

    @property
    def dropped(self) -> int:
        """Rows left out."""
        return self.rows - self.used

    @property
    def complete(self) -> bool:
        """Every row is kept."""
        return self.used == self.rows

    @property
    def nbytes(self) -> int:
        return int(self.keep.nbytes)

    def rows_of(self, frame: pd.DataFrame) -> pd.DataFrame:
        """The kept rows of ``frame``'s chosen columns (a copy; for plots)."""
        return frame.loc[self.keep, list(self.columns)]


def complete_cases(missing: Mapping[str, np.ndarray], rows: int) -> CompleteCases:
    """Complete cases from one missing-value mask per chosen column.

    Each mask is read once; no column's values are.  The caller keeps the
    masks, so a column added to the choice costs one pass over that column.

    Raises
    ------
    DataError
        No row is complete (naming the columns responsible).

    Examples
    --------
    >>> cc = complete_cases({"y": np.array([False, False, True]), "x": np.array([False, True, True])}, 3)
    >>> cc.keep.tolist(), cc.used, cc.lost_by_column, cc.lost_to_several
    ([True, False, False], 1, {'y': 0, 'x': 1}, 1)
    """
    chosen = tuple(missing)
    if not chosen:
        return CompleteCases(
            np.ones(rows, dtype=bool), rows, rows, chosen, message=summary_text(rows, rows)
        )
    per_row = np.zeros(rows, dtype=np.int32)
    for mask in missing.values():
        per_row += mask
    keep = per_row == 0
    missing_by_column = {c: int(np.count_nonzero(m)) for c, m in missing.items()}
    alone = per_row == 1
    lost_by_column = {c: int(np.count_nonzero(m & alone)) for c, m in missing.items()}
    lost_to_several = int(np.count_nonzero(per_row > 1))
    used = int(np.count_nonzero(keep))
    if used == 0:
        raise no_rows_error(rows, missing_by_column)
    return CompleteCases(
        keep=keep,
        rows=rows,
        used=used,
        columns=chosen,
        missing_by_column=missing_by_column,
        lost_by_column=lost_by_column,
        lost_to_several=lost_to_several,
        message=summary_text(rows, used, lost_by_column, lost_to_several, len(chosen)),
    )


def with_complete_columns(sample: CompleteCases, columns: Sequence[str]) -> CompleteCases:
    """The complete cases on ``columns`` — those of ``sample``, some added or
    left out, where each one added or left out misses no value — without a
    pass over any row: a column that misses nothing drops no row, so the
    rows kept and every other count stay.

    Examples
    --------
    >>> cc = complete_cases({"y": np.array([False, True]), "x": np.array([False, False])}, 2)
    >>> wider = with_complete_columns(cc, ["y", "x", "z"])
    >>> wider.keep is cc.keep, wider.missing_by_column, wider.lost_by_column
    (True, {'y': 1, 'x': 0, 'z': 0}, {'y': 1, 'x': 0, 'z': 0})
    """
    chosen = tuple(dict.fromkeys(columns))
    lost = {c: sample.lost_by_column.get(c, 0) for c in chosen}
    return CompleteCases(
        keep=sample.keep,
        rows=sample.rows,
        used=sample.used,
        columns=chosen,
        missing_by_column={c: sample.missing_by_column.get(c, 0) for c in chosen},
        lost_by_column=lost,
        lost_to_several=sample.lost_to_several,
        message=summary_text(sample.rows, sample.used, lost, sample.lost_to_several, len(chosen)),
    )


@dataclass(frozen=True, eq=False)
class AnalyticSample:
    """Complete cases on the chosen columns.

    Attributes
    ----------
    frame : pandas.DataFrame
        The complete rows, only the chosen columns, original index kept (so
        a row can be traced back to the file).
    rows : int
        Rows in the file.
    used : int
        Rows in the sample.
    columns : tuple of str
        The chosen columns, in order, without repeats.
    missing_by_column : dict
        Column -> rows missing that column in the whole file.
    lost_by_column : dict
        Column -> rows lost *only* because of that column: missing there and
        complete on every other chosen column, i.e. the rows that dropping
        the column would win back.
    lost_to_several : int
        Rows missing two or more chosen columns. Together with
        ``lost_by_column`` it adds up to ``rows - used``.
    message : str
        A plain summary for the user.
    frame_is_sample : bool
        True when ``frame`` holds a random sample of the complete rows, not all
        of them (a source that reads the file where it lies); the counts above
        are still exact.
    """

    frame: pd.DataFrame
    rows: int
    used: int
    columns: tuple[str, ...]
    missing_by_column: dict[str, int] = field(default_factory=dict)
    lost_by_column: dict[str, int] = field(default_factory=dict)
    lost_to_several: int = 0
    message: str = ""
    frame_is_sample: bool = False

    @property
    def dropped(self) -> int:
        """Rows left out."""
        return self.rows - self.used

    def rows_of(self, frame: pd.DataFrame) -> pd.DataFrame:
        """The sample's rows (``frame`` is not needed: they are held here)."""
        return self.frame


def analytic_sample(frame: pd.DataFrame, columns: Sequence[str]) -> AnalyticSample:
    """Keep the rows complete on ``columns`` and say what was lost, and why.

    Parameters
    ----------
    frame : pandas.DataFrame
        The loaded data.
    columns : sequence of str
        Outcome, exposure and every bound measured covariate (and any other
        column the models read, such as a time, event or offset column).

    Raises
    ------
    DataError
        A column is not in the data (closest names suggested), or no row
        is complete (naming the columns responsible).

    Examples
    --------
    >>> frame = pd.DataFrame({"y": [1.0, 2.0, None, 4.0], "x": [0, 1, 1, None]})
    >>> s = analytic_sample(frame, ["y", "x"])
    >>> s.rows, s.used, s.missing_by_column, s.lost_by_column
    (4, 2, {'y': 1, 'x': 1}, {'y': 1, 'x': 1})
    """
    chosen = tuple(dict.fromkeys(str(c) for c in columns))
    check_known([str(c) for c in frame.columns], chosen)
    rows = len(frame)
    if not chosen:
        return AnalyticSample(
            frame.iloc[:, :0], rows, rows, chosen, message=summary_text(rows, rows)
        )
    missing = frame.loc[:, list(chosen)].isna().to_numpy()
    per_row = missing.sum(axis=1)
    keep = per_row == 0
    missing_by_column = {c: int(n) for c, n in zip(chosen, missing.sum(axis=0), strict=True)}
    alone = missing[per_row == 1].sum(axis=0)
    lost_by_column = {c: int(n) for c, n in zip(chosen, alone, strict=True)}
    lost_to_several = int(np.count_nonzero(per_row > 1))
    used = int(np.count_nonzero(keep))
    if used == 0:
        raise no_rows_error(rows, missing_by_column)
    message = summary_text(rows, used, lost_by_column, lost_to_several, len(chosen))
    return AnalyticSample(
        frame=frame.loc[keep, list(chosen)],
        rows=rows,
        used=used,
        columns=chosen,
        missing_by_column=missing_by_column,
        lost_by_column=lost_by_column,
        lost_to_several=lost_to_several,
        message=message,
    )


def check_known(names: Sequence[str], chosen: Sequence[str]) -> None:
    """Raise :class:`DataError` naming the chosen columns that are not in ``names``."""
    unknown = [c for c in chosen if c not in names]
    if not unknown:
        return
    hints = []
    for name in unknown:
        close = difflib.get_close_matches(name, names, n=1)
        hints.append(f"{name!r}" + (f" (did you mean {close[0]!r}?)" if close else ""))
    raise DataError(
        f"Not in the data: {', '.join(hints)}. Bind the node to an existing column, or load "
        "the data file that has it."
    )


def no_rows_error(rows: int, missing_by_column: dict[str, int]) -> DataError:
    """The plain message for an analytic sample without rows."""
    if rows == 0:
        return DataError("The data have no rows, so there is no analytic sample. Load a data file.")
    empty = [c for c, n in missing_by_column.items() if n == rows]
    if empty:
        return DataError(
            f"No row is complete: {', '.join(map(repr, empty))} "
            f"{'is' if len(empty) == 1 else 'are'} missing in every row. Unbind "
            f"{'it' if len(empty) == 1 else 'them'}, or bind another column."
        )
    worst = sorted(missing_by_column.items(), key=lambda kv: -kv[1])
    listing = ", ".join(f"{c!r} ({n} missing)" for c, n in worst if n)
    return DataError(
        f"No row is complete on all chosen columns: every one of the {rows} rows misses at "
        f"least one of {listing}. Leave out the covariates with the most missing values."
    )


def summary_text(
    rows: int,
    used: int,
    lost: dict[str, int] | None = None,
    several: int = 0,
    count: int = 0,
    names: Mapping[str, str] | None = None,
) -> str:
    """The plain summary of an analytic sample: rows used, dropped, and why;
    ``names`` (column → label) names the columns as people know them."""
    if used == rows:
        return f"All {rows:,} rows are complete and used."
    dropped = rows - used
    share = 100.0 * dropped / rows
    parts = [
        f"{(names or {}).get(c, c)} missing in {n:,}"
        for c, n in sorted((lost or {}).items(), key=lambda kv: -kv[1])
        if n
    ]
    if several:
        parts.append(f"{several:,} missing more than one")
    return (
        f"{used:,} of {rows:,} rows used (complete on all {count} columns); "
        f"{dropped:,} dropped ({share:.1f}%): " + "; ".join(parts) + "."
    )
