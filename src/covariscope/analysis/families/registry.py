"""The model families, in the order every list of them shows.

Adding a family: write its module beside this one (a :class:`ModelFamily`
and, for a GLM, its :class:`GlmLink`), give it its words in
:mod:`covariscope.vocabulary` (a :class:`~covariscope.vocabulary.Family`
member and its :class:`~covariscope.vocabulary.FamilyTerm`) and add it here.
"""

from __future__ import annotations

from covariscope.analysis.families.base import ModelFamily
from covariscope.analysis.families.cox import COX
from covariscope.analysis.families.linear import LINEAR
from covariscope.analysis.families.logistic import LOGISTIC
from covariscope.analysis.families.risk_ratio import RISK_RATIO

__all__ = ["FAMILIES"]

#: Every model family, in the vocabulary's order.
FAMILIES: tuple[ModelFamily, ...] = (LINEAR, LOGISTIC, RISK_RATIO, COX)
