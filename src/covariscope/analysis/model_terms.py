"""How each variable entered the comparison models, in the words a model
formula needs: its column type, its levels (reference first) and, for a
spline, its knot positions on the analytic sample.  What the model-as-code
views read, so a script rebuilds exactly the models Covariscope fitted."""

from __future__ import annotations

from dataclasses import dataclass

from covariscope.analysis.design import Design
from covariscope.analysis.spline_basis import knot_positions

__all__ = ["ModelTerm", "model_terms"]


@dataclass(frozen=True)
class ModelTerm:
    """One variable of the models.

    Attributes
    ----------
    node : str
        The diagram node.
    type : str
        Its column type (continuous, count, binary or categorical).
    levels : tuple of str
        A binary or categorical term's levels as text, the reference first;
        empty otherwise.
    knots : tuple of float
        A spline term's knot positions (the boundary knots first and last);
        empty for a term entered linearly.
    """

    node: str
    type: str
    levels: tuple[str, ...] = ()
    knots: tuple[float, ...] = ()


def model_terms(design: Design) -> dict[str, ModelTerm]:
    """The exposure's and every covariate's :class:`ModelTerm`, by node.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> from covariscope.analysis.design import TermSpec, make_design
    >>> rng = np.random.default_rng(0)
    >>> f = pd.DataFrame({"x": rng.normal(size=50), "z": rng.normal(size=50),
    ...                   "g": rng.choice(["a", "b", "c"], 50), "y": rng.normal(size=50)})
    >>> d = make_design(f, exposure=TermSpec("x", "continuous"),
    ...                 covariates={"z": TermSpec("z", "continuous", knots=3),
    ...                             "g": TermSpec("g", "categorical", "b")},
    ...                 outcome="y", family="linear")
    >>> t = model_terms(d)
    >>> t["g"].levels, len(t["z"].knots), t["x"].type
    (('b', 'a', 'c'), 3, 'continuous')
    """
    x = design.exposure_node
    levels = tuple(design.exposure_levels)
    out = {x: ModelTerm(x, _type(design, x, levels), levels)}
    for node, block in design.blocks.items():
        knots: tuple[float, ...] = ()
        if block.raw is not None:
            knots = tuple(float(k) for k in knot_positions(block.raw, block.df + 1))
        out[node] = ModelTerm(node, _type(design, node, block.levels), tuple(block.levels), knots)
    return out


def _type(design: Design, node: str, levels: tuple[str, ...]) -> str:
    """The design's column type; where a design does not record it, a term with
    levels is binary (two) or categorical (more), else continuous."""
    if node in design.types:
        return str(design.types[node])
    if levels:
        return "binary" if len(levels) == 2 else "categorical"
    return "continuous"
