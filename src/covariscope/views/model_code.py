"""The chosen model as code: for the recommended and the proposed set, the
model formula and ready-to-run code for Python (statsmodels formula API), R
and Stata, in the study's family, so the analyst can carry the model into
their own analysis script.

The code rebuilds Covariscope's model exactly: the same analytic sample
(complete cases on every candidate column), the same coding (categorical
terms against the same reference, splines with the same knots), the same
estimator (ordinary least squares; logistic regression; log-link Poisson
with the HC0 robust standard error, Zou 2004; Cox regression with Efron's
ties), so the exposure's estimate and standard error match the ones shown.
Text only: nothing here runs a model.
"""

from __future__ import annotations

import keyword
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import PurePath
from typing import Any

from covariscope.analysis.families import family_of
from covariscope.analysis.model_terms import ModelTerm
from covariscope.model.project import Project
from covariscope.study.prepare import outcome_columns
from covariscope.study.result import StudyResult
from covariscope.vocabulary import CONCEPT_TERMS, family_term

__all__ = ["MODEL_SETS", "ModelCode", "Term", "model_code", "model_code_json", "model_code_text"]

#: The sets whose models can be copied, by the key of ``StudyResult.estimates``.
MODEL_SETS: tuple[str, ...] = ("recommended", "proposed")
_SET_TITLE = {
    t.code.removesuffix("_set"): t.label for t in CONCEPT_TERMS if t.code.endswith("_set")
}
_R_NAME = re.compile(r"^(?:[A-Za-z]|\.(?![0-9]))[A-Za-z0-9._]*$")
_R_RESERVED = frozenset(
    [
        "if",
        "else",
        "repeat",
        "while",
        "function",
        "for",
        "next",
        "break",
        "TRUE",
        "FALSE",
        "NULL",
        "Inf",
        "NaN",
        "NA",
        "NA_integer_",
        "NA_real_",
        "NA_character_",
        "in",
    ]
)
_STATA_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]{0,31}$")
#: Stata's reserved words (from memory: the manual's list of names a variable cannot take)
_STATA_RESERVED = frozenset(
    [
        "_all",
        "_b",
        "byte",
        "_coef",
        "_cons",
        "double",
        "float",
        "if",
        "in",
        "int",
        "long",
        "_n",
        "_N",
        "_pi",
        "_pred",
        "_rc",
        "_skip",
        "str",
        "strL",
        "using",
        "with",
    ]
)


@dataclass(frozen=True)
class Term:
    """One model term: its data column and how it enters."""

    column: str
    type: str
    reference: Any = None  # a binary or categorical term's reference, when the project sets one
    levels: tuple[str, ...] = ()  # reference first
    knots: tuple[float, ...] = ()  # a spline's knots, boundaries first and last

    @property
    def factor(self) -> bool:
        return self.type in ("binary", "categorical")


@dataclass(frozen=True)
class ModelCode:
    """One set's model: its formula and code in three languages."""

    key: str
    title: str
    members: tuple[str, ...]
    formula: str
    python: str
    r: str
    stata: str


@dataclass(frozen=True)
class _Model:
    family: str
    data_path: str
    sample: tuple[str, ...]
    exposure: Term
    covariates: tuple[Term, ...]
    outcome: str | None
    time: str | None
    event: str | None
    offset: str | None


# -- names ----------------------------------------------------------------------------


def py_name(column: str) -> str:
    """A column as a patsy formula names it: ``Q("...")`` unless it is an identifier.

    >>> py_name("age"), py_name("age (years)")
    ('age', 'Q("age (years)")')
    """
    if column.isidentifier() and not keyword.iskeyword(column) and column != "Q":
        return column
    return "Q(" + _py_str(column) + ")"


def _py_str(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'


def r_name(column: str) -> str:
    """A column as R names it: backticks unless it is a syntactic name.

    >>> r_name("age"), r_name("age (years)")
    ('age', '`age (years)`')
    """
    if _R_NAME.match(column) and column not in _R_RESERVED:
        return column
    return "`" + column.replace("\\", "\\\\").replace("`", "\\`") + "`"


def stata_name(column: str) -> str:
    """The name Stata gives a column: itself when valid, else the invalid
    characters turned to ``_`` (and a leading ``_`` before a digit), at most
    32 characters.

    >>> stata_name("age"), stata_name("age (years)"), stata_name("2nd dose")
    ('age', 'age__years_', '_2nd_dose')
    """
    if _STATA_NAME.match(column) and column not in _STATA_RESERVED:
        return column
    name = re.sub(r"[^A-Za-z0-9_]", "_", column)
    if not name or name[0].isdigit():
        name = "_" + name
    if name in _STATA_RESERVED:
        name += "_"
    return name[:32]


def _number(text: str) -> float | None:
    try:
        return float(text)
    except ValueError:
        return None


def _literal(value: object) -> str:
    """A reference level as a Python (and R) literal."""
    if isinstance(value, bool):
        return "True" if value else "False"
    if isinstance(value, int | float):
        return repr(value)
    return _py_str(str(value))


def _knot(value: float) -> str:
    return repr(float(value))


# -- terms -----------------------------------------------------------------------------


def _py_term(t: Term) -> str:
    name = py_name(t.column)
    if t.knots:
        inner = ", ".join(_knot(k) for k in t.knots[1:-1])
        return (
            f"cr({name}, knots=({inner},), lower_bound={_knot(t.knots[0])}, "
            f"upper_bound={_knot(t.knots[-1])}, constraints='center')"
        )
    if t.factor:
        if t.reference is not None:
            return f"C({name}, Treatment(reference={_literal(t.reference)}))"
        return f"C({name})"
    return name


def _r_term(t: Term) -> str:
    name = r_name(t.column)
    if t.knots:
        inner = ", ".join(_knot(k) for k in t.knots[1:-1])
        return (
            f"splines::ns({name}, knots = c({inner}), "
            f"Boundary.knots = c({_knot(t.knots[0])}, {_knot(t.knots[-1])}))"
        )
    if t.factor:
        if t.reference is not None:
            ref = _literal(t.reference) if isinstance(t.reference, str) else f'"{t.reference}"'
            return f"relevel(factor({name}), ref = {ref})"
        return f"factor({name})"
    return name


def _string_levels(t: Term) -> bool:
    return any(_number(v) is None for v in t.levels)


def _stata_base(t: Term) -> str:
    """The ``ib(…)`` base of a factor term: its reference's value, or, for a
    string column that ``encode`` numbers alphabetically, the reference's place."""
    reference = str(t.reference) if t.reference is not None else (t.levels[0] if t.levels else "")
    if not reference:
        return "i."
    if _string_levels(t):
        return f"ib({sorted(t.levels).index(reference) + 1})." if reference in t.levels else "i."
    number = _number(reference)
    if number is None or not number.is_integer():
        return "i."
    return f"ib({int(number)})."


def _stata_term(t: Term) -> str:
    name = stata_name(t.column)
    if t.knots:
        return f"{name}_s*"
    if t.factor:
        return _stata_base(t) + (f"{name}_c" if _string_levels(t) else name)
    return name


# -- the model --------------------------------------------------------------------------


def _term(node_column: str, facts: ModelTerm | None, references: Mapping[str, object]) -> Term:
    if facts is None:
        return Term(node_column, "continuous")
    return Term(
        node_column,
        facts.type,
        references.get(node_column),
        facts.levels,
        facts.knots,
    )


def _model(
    result: StudyResult, project: Project, members: tuple[str, ...], data_path: str | None
) -> _Model | None:
    columns = {n.id: n.column for n in project.diagram.nodes}
    x_col, y_col = columns.get(result.exposure), columns.get(result.outcome)
    if x_col is None or result.sample is None:
        return None
    if any(columns.get(m) is None for m in members):
        return None
    refs = dict(project.analysis.reference_levels)
    terms = result.model_terms
    cols = outcome_columns(project, result.family, y_col)
    path = data_path or project.data_path()
    return _Model(
        family=result.family,
        data_path=str(path) if path is not None else (result.data_name or "data.csv"),
        sample=tuple(result.sample.columns),
        exposure=_term(x_col, terms.get(result.exposure), refs),
        covariates=tuple(_term(str(columns[m]), terms.get(m), refs) for m in members),
        outcome=cols["outcome"],
        time=cols["time"],
        event=cols["event"],
        offset=cols["offset"],
    )


def _rhs(m: _Model, term: Callable[[Term], str]) -> list[str]:
    return [term(m.exposure), *(term(t) for t in m.covariates)]


def _formula(m: _Model) -> str:
    """The model in R's formula notation, the one most readers know."""
    rhs = _rhs(m, _r_term)
    if m.offset:
        rhs.append(f"offset({r_name(m.offset)})")
    if family_of(m.family).survival:
        lhs = f"Surv({r_name(m.time or '?')}, {r_name(m.event or '?')})"
    else:
        lhs = r_name(m.outcome or "?")
    return f"{lhs} ~ {' + '.join(rhs)}"


# -- Python ----------------------------------------------------------------------------

_PY_READ = {
    ".csv": "pd.read_csv({p})",
    ".tsv": 'pd.read_csv({p}, sep="\\t")',
    ".tab": 'pd.read_csv({p}, sep="\\t")',
    ".txt": 'pd.read_csv({p}, sep="\\t")',
    ".xlsx": "pd.read_excel({p})",
    ".xls": "pd.read_excel({p})",
    ".parquet": "pd.read_parquet({p})",
    ".dta": "pd.read_stata({p})",
    ".sav": "pd.read_spss({p})",
    ".sas7bdat": "pd.read_sas({p})",
    ".xpt": "pd.read_sas({p})",
}


#: Said under every snippet's title: the code reads the file as it stands.
AS_READ = (
    "reads the file as it stands: first recode any values the data panel says were "
    "cleaned or set aside (missing-value codes, decimal commas, stray text)"
)


def _python(m: _Model, head: str) -> str:
    suffix = PurePath(m.data_path).suffix.lower()
    read = _PY_READ.get(suffix, "pd.read_csv({p})").format(p=_py_str(m.data_path))
    rhs = " + ".join(_py_term_list(m))
    x = _py_term(m.exposure)
    lines = [
        f"# {head}",
        f"# {AS_READ}",
        "import numpy as np",
        "import pandas as pd",
        "import statsmodels.api as sm",
        "import statsmodels.formula.api as smf",
        "",
        f"data = {read}",
        "# the analytic sample: complete cases on every candidate column",
        f"data = data.dropna(subset=[{', '.join(_py_str(c) for c in m.sample)}]).copy()",
    ]
    recipe = family_of(m.family).recipe
    lhs = py_name((m.time if family_of(m.family).survival else m.outcome) or "?")
    formula = repr(f"{lhs} ~ {rhs}")  # single quotes: Q("…") names read as written
    offset = recipe.python_offset.format(column=_py_str(m.offset)) if m.offset else ""
    fit = recipe.python.format(formula=formula, offset=offset, status=_py_str(m.event or "?"))
    lines += [
        f"fit = {fit}",
        "print(fit.summary())",
        "# the exposure's coefficient(s) and standard error(s)",
        f"x = {_py_str(x)}",
        'rows = [i for i, n in enumerate(fit.model.exog_names) if n == x or n.startswith(x + "[")]',
        "estimate, se = np.asarray(fit.params)[rows], np.asarray(fit.bse)[rows]",
        "print(estimate, se)",
    ]
    if family_of(m.family).ratio:
        lines.append("print(np.exp(estimate))  # on the ratio scale")
    return "\n".join(lines) + "\n"


def _py_term_list(m: _Model) -> list[str]:
    return _rhs(m, _py_term)


# -- R -----------------------------------------------------------------------------------

_R_READ = {
    # an empty cell is missing, as pandas (and Covariscope) read it
    ".csv": 'read.csv({p}, check.names = FALSE, na.strings = c("", "NA"))',
    ".tsv": 'read.delim({p}, check.names = FALSE, na.strings = c("", "NA"))',
    ".tab": 'read.delim({p}, check.names = FALSE, na.strings = c("", "NA"))',
    ".txt": 'read.delim({p}, check.names = FALSE, na.strings = c("", "NA"))',
    ".xlsx": "as.data.frame(readxl::read_excel({p}))",
    ".xls": "as.data.frame(readxl::read_excel({p}))",
    ".parquet": "as.data.frame(arrow::read_parquet({p}))",
    ".dta": "as.data.frame(haven::read_dta({p}))",
    ".sav": "as.data.frame(haven::read_sav({p}))",
    ".sas7bdat": "as.data.frame(haven::read_sas({p}))",
    ".xpt": "as.data.frame(haven::read_xpt({p}))",
}


def _r(m: _Model, head: str) -> str:
    suffix = PurePath(m.data_path).suffix.lower()
    read = _R_READ.get(suffix, _R_READ[".csv"]).format(p=_py_str(m.data_path))
    formula = _formula(m)
    x = _py_str(_r_term(m.exposure))
    # the exposure's row(s): its name, or each level's row of a factor
    pick = f"startsWith(rownames(s), {x})" if m.exposure.factor else f"rownames(s) == {x}"
    lines = [
        f"# {head}",
        f"# {AS_READ}",
        f"d <- {read}",
        "# the analytic sample: complete cases on every candidate column",
        f"d <- d[complete.cases(d[, c({', '.join(_py_str(c) for c in m.sample)})]), ]",
    ]
    lines += [line.format(formula=formula) for line in family_of(m.family).recipe.r]
    lines.append(f"s[{pick}, , drop = FALSE]  # the exposure's coefficient(s) and SE")
    if family_of(m.family).ratio:
        lines.append(f"exp(s[{pick}, 1])  # on the ratio scale")
    return "\n".join(lines) + "\n"


# -- Stata --------------------------------------------------------------------------------


def _stata_read(path: str) -> str:
    suffix = PurePath(path).suffix.lower()
    quoted = f'"{path}"'
    if suffix in (".csv", ".tsv", ".tab", ".txt"):
        delim = ' delimiters("\\t")' if suffix != ".csv" else ""
        return f"import delimited using {quoted}, clear case(preserve) varnames(1){delim}"
    if suffix in (".xlsx", ".xls"):
        return f"import excel using {quoted}, firstrow clear"
    if suffix == ".dta":
        return f"use {quoted}, clear"
    if suffix == ".sav":
        return f"import spss using {quoted}, clear"
    if suffix in (".sas7bdat", ".xpt"):
        return f"import sas using {quoted}, clear"
    return (
        f"* convert {quoted} to CSV first; Stata does not read this format\n* import delimited ..."
    )


def _stata(m: _Model, head: str) -> str:
    lines = [f"* {head}", f"* {AS_READ}", _stata_read(m.data_path)]
    renamed = [c for c in m.sample if stata_name(c) != c]
    for c in renamed:
        lines.append(f'* the column "{c}" is named {stata_name(c)} in Stata (check with describe)')
    names = " ".join(stata_name(c) for c in m.sample)
    lines += [
        "* the analytic sample: complete cases on every candidate column",
        f"keep if !missing({', '.join(names.split())})",
    ]
    for t in (m.exposure, *m.covariates):
        if t.factor and _string_levels(t):
            lines.append(f"encode {stata_name(t.column)}, generate({stata_name(t.column)}_c)")
        if t.knots:
            knots = " ".join(_knot(k) for k in t.knots)
            name = stata_name(t.column)
            lines.append(f"mkspline {name}_s = {name}, cubic knots({knots})")
    rhs = " ".join(_stata_term(t) for t in (m.exposure, *m.covariates))
    recipe = family_of(m.family).recipe
    offset = recipe.stata_offset.format(column=stata_name(m.offset)) if m.offset else ""
    fill = {
        "y": stata_name(m.outcome or "?"),
        "rhs": rhs,
        "offset": offset,
        "time": stata_name(m.time or "?"),
        "event": stata_name(m.event or "?"),
    }
    lines += [line.format(**fill) for line in recipe.stata]
    return "\n".join(lines) + "\n"


# -- entry points --------------------------------------------------------------------------


def model_code(
    result: StudyResult, project: Project, data_path: str | None = None
) -> dict[str, ModelCode | None]:
    """The recommended and the proposed set's model as code, by set key; None
    for a set whose model was not fitted (no data, a member without data).

    Parameters
    ----------
    result : StudyResult
        From :func:`covariscope.study.run_study`.
    project : Project
        The project it was computed from (columns bound to nodes, reference
        levels, the family's outcome columns, the data file's path).
    data_path : str, optional
        The data file the study read, when not the project's own.
    """
    out: dict[str, ModelCode | None] = {}
    measure = result.effect_measure
    model_words = family_term(result.family).model
    for key in MODEL_SETS:
        fit = result.estimates.get(key)
        members = tuple(fit.terms) if fit is not None and fit.ok else ()
        m = _model(result, project, members, data_path) if fit is not None and fit.ok else None
        if m is None:
            out[key] = None
            continue
        title = _SET_TITLE.get(key, key)
        names = ", ".join(result.name(n) for n in members) or "none"
        head = f"{title} {{{names}}}: {model_words} ({measure}); written by Covariscope"
        out[key] = ModelCode(
            key, title, members, _formula(m), _python(m, head), _r(m, head), _stata(m, head)
        )
    return out


def model_code_json(codes: Mapping[str, ModelCode | None]) -> dict[str, Any]:
    """The ``model_code`` object of ``check --json``."""
    return {
        key: None
        if c is None
        else {
            "members": list(c.members),
            "formula": c.formula,
            "python": c.python,
            "r": c.r,
            "stata": c.stata,
        }
        for key, c in codes.items()
    }


def model_code_text(codes: Mapping[str, ModelCode | None], language: str = "all") -> str:
    """The text the window puts on the clipboard: every set's formula and code
    in ``language`` ("python", "r", "stata" or "all")."""
    parts: list[str] = []
    for c in codes.values():
        if c is None:
            continue
        if language in ("python", "all"):
            parts.append(c.python)
        if language in ("r", "all"):
            parts.append(c.r)
        if language in ("stata", "all"):
            parts.append(c.stata)
        if language == "formula":
            parts.append(f"{c.title}: {c.formula}\n")
    return "\n".join(parts)
