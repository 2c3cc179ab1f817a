"""A wider design of the same rows, grown in place from a narrower one.

Binding one more covariate to a least-squares study adds its columns to the
design.  Rebuilding the design would copy (and so read) every column already
coded; instead the new columns are written into the room a
:class:`~covariscope.analysis.design.ColumnStore` keeps after the last
design's columns, and the wider design is again a prefix of the store.  Its
outcome column then sits before the new covariate columns
(:attr:`Design.outcome_index`), which only the least-squares fits, reading
the design through its cross-product matrix by column position, allow; the
other families keep the outcome last and build their designs whole.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import replace

import numpy as np

from covariscope.analysis.design import Block, CodedTerm, Design, constant_message
from covariscope.analysis.families import family_of

__all__ = ["can_grow", "grow_design"]


def can_grow(design: Design, k: int) -> bool:
    """True when ``design`` may grow by ``k`` columns in place: a least-squares
    design of rows in memory whose store has room right after it (nothing
    has grown from it yet)."""
    store = design.store
    return (
        store is not None
        and design.rows is None
        and family_of(design.family).least_squares
        and design.values.shape[1] + k <= store.capacity
    )


def grow_design(
    design: Design,
    order: Sequence[str],
    added: Mapping[str, tuple[str, CodedTerm]],
    key: str,
) -> Design | None:
    """``design`` with the terms ``added`` (node → (column, coded term)) written
    after its columns; None when it cannot grow (see :func:`can_grow`, or
    another design grew from it first).

    ``order`` is every covariate node of the wider design in the order its
    blocks are to appear (the order a design built whole would give them), so
    that every model lists its terms as it would have.  Only the new columns
    are read (for the constant check) and written.

    Examples
    --------
    >>> import pandas as pd
    >>> from covariscope.analysis.design import DesignBuilder, Outcomes
    >>> b = DesignBuilder(3, width=2, outcome=True, spare=2)
    >>> b.add_exposure(CodedTerm(("x",), np.array([[0.0], [1.0], [1.0]])))
    >>> b.add("z", "z", CodedTerm(("z",), np.array([[1.0], [2.0], [4.0]])))
    >>> d = b.build(family="linear", exposure_node="x", outcomes=Outcomes(y=np.array([1.0, 2.0, 3.0])), key="k")
    >>> w = grow_design(d, ["w", "z"], {"w": ("w", CodedTerm(("w",), np.array([[5.0], [3.0], [2.0]])))}, "k2")
    >>> w.column_names, w.outcome_index, w.blocks["w"].index, list(w.blocks)
    (('x', 'z', '', 'w'), 2, (3,), ['w', 'z'])
    >>> bool(np.shares_memory(w.values, d.values)), w.y.tolist()
    (True, [1.0, 2.0, 3.0])
    """
    k = sum(term.values.shape[1] for _, term in added.values())
    start = int(design.values.shape[1])
    store = design.store
    if store is None or not can_grow(design, k) or not store.take(start, k):
        return None
    array = store.array
    values = array[:, : start + k]
    blocks = dict(design.blocks)
    at = start
    for node, (_, term) in added.items():
        width = term.values.shape[1]
        values[:, at : at + width] = term.values
        blocks[node] = Block(
            node,
            term.names,
            values[:, at : at + width],
            tuple(range(at, at + width)),
            term.levels,
            term.raw,
        )
        at += width
    constant = [node for node in added if _is_constant(blocks[node].values)]
    return replace(
        design,
        values=values,
        blocks={node: _rebased(blocks[node], values) for node in order},
        key=key,
        messages=(
            *design.messages,
            *(
                f"{constant_message(node, added[node][0])} The models that hold it are not fitted."
                for node in constant
            ),
        ),
        column_names=_names(design, added),
        constant=(*design.constant, *constant),
        outcome_at=design.outcome_index if design.y is not None else None,
    )


def _rebased(block: Block, values: np.ndarray) -> Block:
    """The block as a view of the wider ``values`` (the same numbers)."""
    first, last = block.index[0], block.index[-1]
    return replace(block, values=values[:, first : last + 1])


def _names(design: Design, added: Mapping[str, tuple[str, CodedTerm]]) -> tuple[str, ...]:
    names = list(design.column_names)
    if design.y is not None and len(names) == design.outcome_index:
        names.append("")  # the outcome's column, by position
    for _, term in added.values():
        names.extend(term.names)
    return tuple(names)


def _is_constant(values: np.ndarray) -> bool:
    return bool(len(values)) and any(
        bool(np.all(values[:, j] == values[0, j])) for j in range(values.shape[1])
    )
