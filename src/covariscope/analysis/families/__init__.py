"""Model families: one object per family, looked up by its code.

Each family is the ``FAMILY`` of the module named by its code
(:mod:`~covariscope.analysis.families.linear`, ``logistic``, ``risk_ratio``,
``cox``); the registry lists them in the vocabulary's order.

>>> family_of("logistic").ratio, family_of("linear").least_squares
(True, True)
>>> [f.code.value for f in FAMILIES]
['linear', 'logistic', 'risk_ratio', 'cox']
"""

from __future__ import annotations

from types import MappingProxyType

from covariscope.analysis.families.base import (
    EXTREME_MU,
    CodeRecipe,
    Fitter,
    GlmLink,
    ModelFamily,
    OutcomeField,
    Scratch,
)
from covariscope.analysis.families.registry import FAMILIES
from covariscope.errors import DataError

__all__ = [
    "EXTREME_MU",
    "FAMILIES",
    "FAMILY_CODES",
    "CodeRecipe",
    "Fitter",
    "GlmLink",
    "ModelFamily",
    "OutcomeField",
    "Scratch",
    "family_of",
]

_BY_CODE = MappingProxyType({f.code.value: f for f in FAMILIES})

#: The families' codes, as project files and ``check --json`` write them.
FAMILY_CODES: tuple[str, ...] = tuple(_BY_CODE)


def family_of(code: str) -> ModelFamily:
    """The family with this code; :class:`DataError` names the known codes."""
    try:
        return _BY_CODE[code]
    except KeyError:
        raise DataError(
            f"Unknown model family {code!r}; use one of {', '.join(FAMILY_CODES)}."
        ) from None
