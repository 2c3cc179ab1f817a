"""The causal diagram: nodes, cause → effect arrows and proxy links.

The diagram is the single source of truth that the canvas projects.  Every
change goes through a method here, which validates it, applies it and tells
the listeners in a fine-grained :class:`DiagramEvent`.  Refused edits raise a
:class:`~covariscope.errors.DiagramError` whose message the user
interface shows as it is, and leave the diagram unchanged.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field, fields, replace
from typing import Any

import networkx as nx

from covariscope.errors import CycleError, DiagramError
from covariscope.vocabulary import Kind, group_key

__all__ = [
    "KINDS",
    "Diagram",
    "DiagramEvent",
    "Node",
    "format_cycle",
]

#: Node kinds: the one exposure, the one outcome, and any number of covariates.
KINDS: tuple[str, ...] = tuple(Kind)

_ID_PATTERN = re.compile(r"^[A-Za-z_][A-Za-z0-9_.\-]*$")


@dataclass(frozen=True)
class Node:
    """One variable of the diagram.

    ``column`` is the dataset column bound to it (None when unbound);
    ``x``/``y`` its position on the canvas; ``note`` the analyst's reasoning.
    """

    id: str
    label: str = ""
    kind: str = "covariate"
    measured: bool = True
    column: str | None = None
    x: float = 0.0
    y: float = 0.0
    note: str = ""

    def __post_init__(self) -> None:
        if not self.label:
            object.__setattr__(self, "label", self.id)


_NODE_FIELDS = tuple(f.name for f in fields(Node))


@dataclass(frozen=True)
class DiagramEvent:
    """What changed.  ``kind`` is one of ``node_added``, ``node_removed``,
    ``node_changed`` (with ``changes``: field → (old, new)), ``arrow_added``,
    ``arrow_removed``, ``proxy_added``, ``proxy_removed`` and ``reset``."""

    kind: str
    node: str | None = None
    pair: tuple[str, str] | None = None
    changes: dict[str, tuple[Any, Any]] = field(default_factory=dict)


def format_cycle(cycle: list[str]) -> str:
    """``["a", "b", "c", "a"]`` → ``"a → b → c → a"``."""
    return " → ".join(cycle)


def _proxy_key(a: str, b: str) -> tuple[str, str]:
    return (a, b) if a <= b else (b, a)


class Diagram:
    """A directed acyclic graph of variables, with proxy links.

    >>> d = Diagram()
    >>> d.add_node(Node("smoking", kind="exposure"))
    >>> d.add_node(Node("cancer", kind="outcome"))
    >>> d.add_arrow("smoking", "cancer")
    >>> d.arrows
    [('smoking', 'cancer')]
    """

    def __init__(self) -> None:
        self._nodes: dict[str, Node] = {}
        self._arrows: list[tuple[str, str]] = []
        self._proxies: list[tuple[str, str]] = []
        self._listeners: list[Callable[[DiagramEvent], None]] = []

    # -- listeners -----------------------------------------------------------------
    def subscribe(self, listener: Callable[[DiagramEvent], None]) -> None:
        self._listeners.append(listener)

    def unsubscribe(self, listener: Callable[[DiagramEvent], None]) -> None:
        if listener in self._listeners:
            self._listeners.remove(listener)

    def _emit(self, event: DiagramEvent) -> None:
        for listener in list(self._listeners):
            listener(event)

    # -- reading -------------------------------------------------------------------
    @property
    def nodes(self) -> list[Node]:
        return list(self._nodes.values())

    @property
    def node_ids(self) -> list[str]:
        return list(self._nodes)

    @property
    def arrows(self) -> list[tuple[str, str]]:
        return list(self._arrows)

    @property
    def proxies(self) -> list[tuple[str, str]]:
        return list(self._proxies)

    def node(self, node_id: str) -> Node:
        try:
            return self._nodes[node_id]
        except KeyError:
            raise DiagramError(f'There is no node "{node_id}" in the diagram.') from None

    def __contains__(self, node_id: object) -> bool:
        return node_id in self._nodes

    def __iter__(self) -> Iterator[Node]:
        return iter(list(self._nodes.values()))

    def __len__(self) -> int:
        return len(self._nodes)

    def has_arrow(self, cause: str, effect: str) -> bool:
        return (cause, effect) in self._arrows

    def has_proxy(self, a: str, b: str) -> bool:
        return _proxy_key(a, b) in self._proxies

    def arrows_of(self, node_id: str) -> list[tuple[int, tuple[str, str]]]:
        """Arrows touching a node, with their positions in the arrow list."""
        return [(i, a) for i, a in enumerate(self._arrows) if node_id in a]

    def proxies_of(self, node_id: str) -> list[tuple[int, tuple[str, str]]]:
        return [(i, p) for i, p in enumerate(self._proxies) if node_id in p]

    def nodes_of_kind(self, kind: str) -> list[Node]:
        return [n for n in self._nodes.values() if n.kind == kind]

    @property
    def exposure(self) -> Node | None:
        found = self.nodes_of_kind("exposure")
        return found[0] if found else None

    @property
    def outcome(self) -> Node | None:
        found = self.nodes_of_kind("outcome")
        return found[0] if found else None

    @property
    def covariates(self) -> list[Node]:
        return self.nodes_of_kind("covariate")

    def require_question(self) -> tuple[str, str]:
        """The (exposure, outcome) ids, or a DiagramError saying what is missing."""
        missing = [k for k in ("exposure", "outcome") if not self.nodes_of_kind(k)]
        if missing:
            what = " and an ".join(missing)
            raise DiagramError(
                f"The diagram has no {what}. Mark one node as the {missing[0]} "
                "(exactly one exposure and one outcome are needed for analysis)."
            )
        exposure, outcome = self.exposure, self.outcome
        assert exposure is not None
        assert outcome is not None
        return exposure.id, outcome.id

    def fresh_id(self, stem: str = "node") -> str:
        """An id not yet used, made from ``stem``."""
        base = re.sub(r"[^A-Za-z0-9_.\-]", "_", stem.strip()) or "node"
        if not re.match(r"[A-Za-z_]", base):
            base = "v_" + base
        candidate, n = base, 2
        while candidate in self._nodes:
            candidate = f"{base}_{n}"
            n += 1
        return candidate

    # -- validation helpers ----------------------------------------------------------
    def _cycle_with(
        self, arrows: Iterable[tuple[str, str]], proxies: Iterable[tuple[str, str]]
    ) -> list[str] | None:
        """The cycle (ids, first repeated last) that these arrows close once
        proxy-linked covariates are merged into one construct, else None."""
        graph = nx.DiGraph()
        graph.add_nodes_from(self._nodes)
        graph.add_edges_from(arrows)
        # the acyclic case (nearly always) is settled by one topological sort,
        # several times faster than a search for a cycle
        if not nx.is_directed_acyclic_graph(graph):
            raw = nx.find_cycle(graph)
            return [e[0] for e in raw] + [raw[0][0]]
        groups = _measure_groups(self._nodes, proxies)
        if not groups:
            return None
        name = {m: group_key(g) for g in groups for m in g}
        merged = nx.DiGraph()
        for a, b in graph.edges:
            ma, mb = name.get(a, a), name.get(b, b)
            if ma != mb:
                merged.add_edge(ma, mb)
        if nx.is_directed_acyclic_graph(merged):
            return None
        raw = nx.find_cycle(merged)
        return [e[0] for e in raw] + [raw[0][0]]

    def _check_id(self, node_id: str) -> None:
        if not isinstance(node_id, str) or not _ID_PATTERN.match(node_id):
            raise DiagramError(
                f'"{node_id}" cannot be a node id: use letters, digits, "_", "-" or ".", '
                "starting with a letter or underscore."
            )

    # -- edits -----------------------------------------------------------------------
    def add_node(self, node: Node, index: int | None = None) -> None:
        self._check_id(node.id)
        if node.id in self._nodes:
            raise DiagramError(f'A node "{node.id}" already exists; choose another id.')
        if node.kind not in KINDS:
            raise DiagramError(f'"{node.kind}" is not a node kind; use one of {", ".join(KINDS)}.')
        if node.kind in ("exposure", "outcome"):
            current = self.nodes_of_kind(node.kind)
            if current:
                raise DiagramError(
                    f'"{current[0].id}" is already the {node.kind}; the diagram has exactly one. '
                    f"Make it a covariate first."
                )
        if index is None or index >= len(self._nodes):
            self._nodes[node.id] = node
        else:
            items = list(self._nodes.items())
            items.insert(index, (node.id, node))
            self._nodes = dict(items)
        self._emit(DiagramEvent("node_added", node=node.id))

    def remove_node(self, node_id: str) -> None:
        """Remove a node; refused while arrows or proxy links still touch it
        (the edit command removes those first, so that undo is exact)."""
        self.node(node_id)
        if self.arrows_of(node_id) or self.proxies_of(node_id):
            raise DiagramError(f'"{node_id}" still has arrows or proxy links; remove them first.')
        del self._nodes[node_id]
        self._emit(DiagramEvent("node_removed", node=node_id))

    def update_node(self, node_id: str, **changes: Any) -> dict[str, tuple[Any, Any]]:
        """Change node fields other than ``id``; returns field → (old, new)."""
        old = self.node(node_id)
        unknown = set(changes) - set(_NODE_FIELDS) | ({"id"} & set(changes))
        if unknown:
            raise DiagramError(f"Cannot change {', '.join(sorted(unknown))} of a node this way.")
        if "kind" in changes:
            kind = changes["kind"]
            if kind not in KINDS:
                raise DiagramError(f'"{kind}" is not a node kind; use one of {", ".join(KINDS)}.')
            if kind in ("exposure", "outcome") and kind != old.kind:
                current = self.nodes_of_kind(kind)
                if current:
                    raise DiagramError(
                        f'"{current[0].id}" is already the {kind}; make it a covariate first.'
                    )
                other = "outcome" if kind == "exposure" else "exposure"
                for a, b in self._proxies:
                    if node_id in (a, b) and self._nodes[b if a == node_id else a].kind == other:
                        raise DiagramError(
                            f'Making "{node_id}" the {kind} would leave a proxy link saying the '
                            "exposure and the outcome measure the same thing. Remove the link first."
                        )
        if "label" in changes and not str(changes["label"]).strip():
            changes["label"] = node_id
        new = replace(old, **changes)
        diff = {
            k: (getattr(old, k), getattr(new, k))
            for k in changes
            if getattr(old, k) != getattr(new, k)
        }
        if not diff:
            return {}
        self._nodes[node_id] = new
        if "kind" in diff and self._proxies:
            # a covariate joins the measure groups only as a covariate
            cycle = self._cycle_with(self._arrows, self._proxies)
            if cycle:
                self._nodes[node_id] = old
                raise CycleError(
                    f'Making "{node_id}" a {new.kind} would close the cycle '
                    f"{format_cycle(cycle)} through its proxy links.",
                    cycle,
                )
        self._emit(DiagramEvent("node_changed", node=node_id, changes=diff))
        return diff

    def add_arrow(self, cause: str, effect: str, index: int | None = None) -> None:
        self.node(cause)
        self.node(effect)
        if cause == effect:
            raise DiagramError(f'An arrow from "{cause}" to itself is not allowed.')
        if (cause, effect) in self._arrows:
            raise DiagramError(f"The arrow {cause} → {effect} is already in the diagram.")
        cycle = self._cycle_with([*self._arrows, (cause, effect)], self._proxies)
        if cycle:
            cycle = _rotate_to(cycle, cause)
            raise CycleError(
                f"The arrow {cause} → {effect} would close the cycle {format_cycle(cycle)}; "
                "a causal diagram cannot have cycles.",
                cycle,
            )
        position = len(self._arrows) if index is None else index
        self._arrows.insert(position, (cause, effect))
        self._emit(DiagramEvent("arrow_added", pair=(cause, effect)))

    def remove_arrow(self, cause: str, effect: str) -> int:
        """Remove an arrow; returns its former position in the arrow list."""
        try:
            index = self._arrows.index((cause, effect))
        except ValueError:
            raise DiagramError(f"There is no arrow {cause} → {effect}.") from None
        del self._arrows[index]
        self._emit(DiagramEvent("arrow_removed", pair=(cause, effect)))
        return index

    def add_proxy(self, a: str, b: str, index: int | None = None) -> None:
        self.node(a)
        self.node(b)
        if a == b:
            raise DiagramError(f'A proxy link from "{a}" to itself is not allowed.')
        key = _proxy_key(a, b)
        if key in self._proxies:
            raise DiagramError(f"{a} and {b} are already linked as proxies.")
        self._check_proxy_ends(a, b)
        cycle = self._cycle_with(self._arrows, [*self._proxies, key])
        if cycle:
            raise CycleError(
                f"Linking {a} and {b} as alternate measures would close the cycle "
                f"{format_cycle(cycle)} once they are treated as one variable.",
                cycle,
            )
        position = len(self._proxies) if index is None else index
        self._proxies.insert(position, key)
        self._emit(DiagramEvent("proxy_added", pair=key))

    def _check_proxy_ends(self, a: str, b: str) -> None:
        if {self._nodes[a].kind, self._nodes[b].kind} == {"exposure", "outcome"}:
            raise DiagramError(
                f"A proxy link between {a} and {b} would say that the exposure and the "
                "outcome measure the same thing, leaving no effect to estimate. Remove the "
                "link; draw an arrow if one causes the other."
            )

    def extend(
        self, arrows: Iterable[tuple[str, str]] = (), proxies: Iterable[tuple[str, str]] = ()
    ) -> None:
        """Add many arrows and proxy links at once, all or none.

        Loading a file this way checks for cycles once, in time linear in
        the size of the diagram, instead of once per arrow.  Raises the
        first :class:`DiagramError` found; the diagram is then unchanged.
        """
        new_arrows = list(arrows)
        new_proxies = [_proxy_key(a, b) for a, b in proxies]
        for a, b in [*new_arrows, *new_proxies]:
            self.node(a)
            self.node(b)
            if a == b:
                raise DiagramError(f'A link from "{a}" to itself is not allowed.')
        for pairs, held in ((new_arrows, self._arrows), (new_proxies, self._proxies)):
            seen = set(held)
            for pair in pairs:
                if pair in seen:
                    raise DiagramError(f"{pair[0]} and {pair[1]} are linked twice.")
                seen.add(pair)
        for a, b in new_proxies:
            self._check_proxy_ends(a, b)
        cycle = self._cycle_with([*self._arrows, *new_arrows], [*self._proxies, *new_proxies])
        if cycle:
            raise CycleError(f"The links close the cycle {format_cycle(cycle)}.", cycle)
        self._arrows.extend(new_arrows)
        self._proxies.extend(new_proxies)
        self._emit(DiagramEvent("reset"))

    def remove_proxy(self, a: str, b: str) -> int:
        key = _proxy_key(a, b)
        try:
            index = self._proxies.index(key)
        except ValueError:
            raise DiagramError(f"{a} and {b} are not linked as proxies.") from None
        del self._proxies[index]
        self._emit(DiagramEvent("proxy_removed", pair=key))
        return index

    def clear(self) -> None:
        self._nodes.clear()
        self._arrows.clear()
        self._proxies.clear()
        self._emit(DiagramEvent("reset"))

    # -- conversion ------------------------------------------------------------------
    def to_networkx(self) -> nx.DiGraph:
        """The diagram as the graph criteria read it: node attributes ``kind``,
        ``measured``, ``label``; graph attribute ``proxies``."""
        graph = nx.DiGraph()
        for n in self._nodes.values():
            graph.add_node(n.id, kind=n.kind, measured=n.measured, label=n.label)
        graph.add_edges_from(self._arrows)
        graph.graph["proxies"] = list(self._proxies)
        return graph

    def to_dict(self) -> dict[str, Any]:
        return {
            "nodes": [
                {
                    "id": n.id,
                    "label": n.label,
                    "kind": n.kind,
                    "measured": n.measured,
                    "column": n.column,
                    "x": n.x,
                    "y": n.y,
                    "note": n.note,
                }
                for n in self._nodes.values()
            ],
            "arrows": [{"from": a, "to": b} for a, b in self._arrows],
            "proxies": [{"a": a, "b": b} for a, b in self._proxies],
        }

    def copy(self) -> Diagram:
        other = Diagram()
        other._nodes = dict(self._nodes)
        other._arrows = list(self._arrows)
        other._proxies = list(self._proxies)
        return other


def _rotate_to(cycle: list[str], start: str) -> list[str]:
    """The same cycle, read from the node (or construct) holding ``start``."""
    ring = cycle[:-1]
    for i, name in enumerate(ring):
        if start in name.split("|"):
            ring = ring[i:] + ring[:i]
            return [*ring, ring[0]]
    return cycle


def _measure_groups(nodes: dict[str, Node], proxies: Iterable[tuple[str, str]]) -> list[set[str]]:
    """Connected components of proxy links between covariates."""
    graph = nx.Graph()
    for a, b in proxies:
        if (
            a in nodes
            and b in nodes
            and nodes[a].kind == "covariate"
            and nodes[b].kind == "covariate"
        ):
            graph.add_edge(a, b)
    return [set(c) for c in nx.connected_components(graph)]
