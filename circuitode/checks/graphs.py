"""Graph queries on a circuit's wiring, for the topology checks.

One job: answer questions about the graph of nodes and elements in one switch
configuration -- which elements are shorts or opens, the fundamental loops of a
set of elements, the node groups reached only through a given kind of element,
the parts with no path to ground.  Answers are element indices (positions in
``circuit.elements``) and node names; no verdicts and no messages, which are
the job of :mod:`circuitode.checks.nodes`, :mod:`circuitode.checks.loops` and :mod:`circuitode.checks.dc`.
"""
from __future__ import annotations

from typing import Sequence

import networkx as nx

from ..model import Circuit, Switch

__all__ = [
    "is_short",
    "is_open",
    "switch_states",
    "switch_indices",
    "node_users",
    "has_ground",
    "conducting_graph",
    "fundamental_loops",
    "isolated_groups",
    "floating_nodes",
]

def is_short(e, closed: bool | None) -> bool:
    """True for an ideal switch (no on-resistance) that is closed: a short."""
    return isinstance(e, Switch) and closed and e.on_resistance is None


def is_open(e, closed: bool | None) -> bool:
    """True for an ideal switch (no off-resistance) that is open: no path at all."""
    return isinstance(e, Switch) and not closed and e.off_resistance is None


def switch_states(circuit: Circuit, closed: Sequence[bool]) -> list[bool | None]:
    """Per element: the switch's state, or None for an element that is not a switch."""
    states: list[bool | None] = []
    it = iter(closed)
    for e in circuit.elements:
        states.append(next(it) if isinstance(e, Switch) else None)
    return states


def switch_indices(circuit: Circuit, pick) -> list[int]:
    """Positions, within circuit.switches, of the switches for which ``pick(switch)`` is true."""
    return [k for k, s in enumerate(circuit.switches) if pick(s)]


def node_users(circuit: Circuit, nodes: Sequence[str]) -> list[int]:
    """Indices of the elements with a terminal on any of ``nodes``."""
    wanted = set(nodes)
    return [i for i, e in enumerate(circuit.elements) if e.first in wanted or e.second in wanted]


def has_ground(circuit: Circuit) -> bool:
    """True when a ground is declared and some element has a terminal on it."""
    return circuit.ground is not None and any(circuit.ground in (e.first, e.second) for e in circuit.elements)


def conducting_graph(circuit: Circuit, states: Sequence[bool | None]) -> nx.Graph:
    """Every node, joined by each element that is not an open ideal switch in ``states``."""
    g = nx.Graph()
    g.add_nodes_from(circuit.nodes)
    g.add_edges_from((e.first, e.second) for e, s in zip(circuit.elements, states) if not is_open(e, s))
    return g


def fundamental_loops(circuit: Circuit, ranked: Sequence[tuple[int, int]]) -> list[list[int]]:
    """Fundamental loops of the graph of the given edges.

    ranked : (rank, element index); edges enter a spanning forest in rank order,
    so the loop closed by an edge passes only through edges of equal or lower rank.
    Each loop starts with the edge that closes it.  Parallel edges and self-loops count.
    """
    forest = nx.Graph()
    joined = nx.utils.UnionFind()
    loops = []
    for _, i in sorted(ranked):
        e = circuit.elements[i]
        if joined[e.first] == joined[e.second]:
            if e.first == e.second:
                loops.append([i])
            else:
                path = nx.shortest_path(forest, e.first, e.second)
                loops.append([i] + [forest.edges[a, b]["index"] for a, b in zip(path, path[1:])])
        else:
            joined.union(e.first, e.second)
            forest.add_edge(e.first, e.second, index=i)
    return loops


def isolated_groups(circuit: Circuit, conducting: Sequence[int], cut: Sequence[int]) -> list[tuple[list[str], list[int]]]:
    """Node groups joined to the rest of their part only through ``cut`` edges.

    conducting, cut : element indices; other elements are treated as absent.
    Returns (nodes of the group, indices of the cut edges around it); the group
    holding ground (else the largest) in each part is the reference and is not listed.
    """
    order = {n: k for k, n in enumerate(circuit.nodes)}
    inner = nx.Graph()
    inner.add_nodes_from(circuit.nodes)
    inner.add_edges_from((circuit.elements[i].first, circuit.elements[i].second) for i in conducting)
    group_of = {}
    groups = []
    for g, comp in enumerate(nx.connected_components(inner)):
        groups.append(sorted(comp, key=order.__getitem__))
        for n in comp:
            group_of[n] = g
    outer = nx.Graph()
    outer.add_nodes_from(range(len(groups)))
    around: dict[int, list[int]] = {g: [] for g in range(len(groups))}
    for i in cut:
        a, b = group_of[circuit.elements[i].first], group_of[circuit.elements[i].second]
        if a != b:
            outer.add_edge(a, b)
            around[a].append(i)
            around[b].append(i)
    found = []
    for part in nx.connected_components(outer):
        if len(part) < 2:
            continue
        ref = next((g for g in part if circuit.ground in groups[g]), None)
        if ref is None:
            ref = max(sorted(part), key=lambda g: len(groups[g]))
        for g in sorted(part, key=lambda g: order[groups[g][0]]):
            if g != ref:
                found.append((groups[g], around[g]))
    return found


def floating_nodes(circuit: Circuit, states: Sequence[bool | None]) -> list[list[str]]:
    """Node groups (in ``circuit.nodes`` order) with no path to ground; none without a usable ground."""
    if not has_ground(circuit):
        return []
    g = conducting_graph(circuit, states)
    return [[n for n in circuit.nodes if n in part] for part in nx.connected_components(g) if circuit.ground not in part]
