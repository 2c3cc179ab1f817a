"""The model families, in the vocabulary's order.

Each family lives in the module of this package named by its code (the
vocabulary's :class:`~covariscope.vocabulary.Family` value), which exports it
as ``FAMILY``; the registry reads them in the order of ``Family``.  Adding a
family is therefore its words in :mod:`covariscope.vocabulary` (a ``Family``
member and its :class:`~covariscope.vocabulary.FamilyTerm`) and its own
module here — nothing else lists the families.
"""

from __future__ import annotations

from importlib import import_module

from covariscope.analysis.families.base import ModelFamily
from covariscope.vocabulary import Family

__all__ = ["FAMILIES"]


def _load(code: Family) -> ModelFamily:
    """The family of ``code`` from its module (``ImportError`` when it is missing or mislabelled)."""
    module = import_module(f"{__package__}.{code.value}")
    family = getattr(module, "FAMILY", None)
    if not isinstance(family, ModelFamily) or family.code is not code:
        raise ImportError(
            f"{module.__name__} must export FAMILY, the ModelFamily of the code {code.value!r}."
        )
    return family


#: Every model family, in the vocabulary's order.
FAMILIES: tuple[ModelFamily, ...] = tuple(_load(code) for code in Family)
