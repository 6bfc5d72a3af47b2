"""The companion network of one switch configuration, and whether it has a unique solution.

For fixed switch states every capacitor becomes a voltage source of its state
value, every inductor a current source of its state value, every closed ideal
switch a 0 V source, every open ideal switch disappears, and a switch with a
resistance in its present state is a resistor.  This module lays out that
network's modified-nodal-analysis unknowns (:class:`Layout`) and checks, on the
graph alone, that the MNA matrix is nonsingular: with positive conductances it
is exactly when the voltage-defined branches form no loop and every node
reaches ground through voltage-defined or conducting branches.  The same check
on the DC network (capacitors open, inductors shorted) tells whether a DC
steady state exists.  Problems are put in words that name the elements and say
what to add.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

from ..model import Capacitor, Circuit, CurrentSource, Diode, Inductor, Resistor, Switch
from ..errors import CircuitodeError, SingularSystemError

__all__ = [
    "StateSpaceRequestError",
    "Layout",
    "build_layout",
    "check_structure",
    "check_closed",
    "describe_configuration",
]


class StateSpaceRequestError(CircuitodeError, ValueError):
    """A request this stage cannot serve: an unknown element or node in a probe, a
    probe that is not linear in (x, u), switch states of the wrong length, an
    unknown initial-state mode or a malformed batch of values."""


def check_closed(circuit: Circuit, closed: Sequence[bool]) -> tuple[bool, ...]:
    """``closed`` as a tuple of bools, one per switch in ``circuit.switches`` order."""
    closed = tuple(bool(c) for c in closed)
    if len(closed) != len(circuit.switches):
        raise StateSpaceRequestError(
            f"{len(closed)} switch states given for {len(circuit.switches)} switches "
            f"({', '.join(s.name for s in circuit.switches) or 'none'}); give one per switch, in order")
    return closed


@dataclass
class Layout:
    """Index bookkeeping of the companion network (independent of element values).

    Node indices: 0 … nn-1 for non-ground nodes, -1 for ground.  Branch unknowns
    (capacitors, voltage sources, closed ideal switches) follow at nn + j.
    """

    node: dict[str, int]
    conductors: list[tuple[str, str, int, int]]  # (element name, value field, a, b)
    branches: list[tuple[str, int, int]]  # (element name, a, b)
    branch_of: dict[str, int]  # element name → unknown index
    #: loops of capacitors closed by closed ideal switches (element names, loop order):
    #: each ties the capacitor voltages around it (one constraint, see ``constraints``)
    tied_loops: list[list[str]] = field(default_factory=list)
    #: node groups cut off by open ideal switches and reached only through inductors:
    #: (nodes, inductor names around them, open switch names); each holds their net current
    held_groups: list[tuple[list[str], list[str], list[str]]] = field(default_factory=list)

    #: node groups cut off on every side by blocking ideal diodes, holding no inductor
    #: current: their common potential is left to the minimum-norm rule (see constraints)
    cut_off_groups: list[list[str]] = field(default_factory=list)

    @property
    def n_constraints(self) -> int:
        """How many independent homogeneous constraints the configuration puts on the states."""
        return len(self.tied_loops) + len(self.held_groups)

    @property
    def n_null(self) -> int:
        """Dimension of the MNA matrix's null space: constraints plus cut-off groups."""
        return self.n_constraints + len(self.cut_off_groups)

    @property
    def nn(self) -> int:
        return len(self.node)

    @property
    def size(self) -> int:
        return self.nn + len(self.branches)


def describe_configuration(circuit: Circuit, closed: Sequence[bool]) -> str:
    """Words for a switch configuration, e.g. ``"with K1 closed, K2 open"``."""
    switches = circuit.switches
    if not switches:
        return "in its only configuration (it has no switches)"
    words = [f"{s.name} {('conducting' if c else 'blocking') if isinstance(s, Diode) else ('closed' if c else 'open')}"
             for s, c in zip(switches, closed)]
    return "with " + ", ".join(words)


class _Forest:
    """Union-find over node names: which nodes are already joined by the branches seen so far."""

    def __init__(self, nodes: Sequence[str]):
        self.parent = {n: n for n in nodes}

    def find(self, n: str) -> str:
        root = n
        while self.parent[root] != root:
            root = self.parent[root]
        while self.parent[n] != root:
            self.parent[n], n = root, self.parent[n]
        return root

    def join(self, a: str, b: str) -> bool:
        """Join; False when a and b were already joined (the edge closes a loop)."""
        ra, rb = self.find(a), self.find(b)
        if ra == rb:
            return False
        self.parent[ra] = rb
        return True


def _loop_through(edges: Sequence[tuple[str, str, str]], closing: tuple[str, str, str]) -> list[str]:
    """Names of the elements on the loop that ``closing`` makes with the forest ``edges``."""
    import networkx as nx

    g = nx.MultiGraph()
    for name, a, b in edges:
        g.add_edge(a, b, key=name)
    name, a, b = closing
    if a == b:
        return [name]
    path = nx.shortest_path(g, a, b)
    return [next(iter(g[u][v])) for u, v in zip(path, path[1:])] + [name]


def check_structure(circuit: Circuit, closed: Sequence[bool], dc: bool) -> tuple[list, list, list[str]]:
    """Check that a resistive network with positive conductances has a unique solution.

    Voltage-defined branches must form no loop, and every node must reach ground
    through voltage-defined or conducting branches (a standard property of modified
    nodal analysis with positive conductances).  ``dc`` selects the network: False
    → the companion network (capacitors as voltage sources, inductors as current
    sources); True → the DC network (capacitors open, inductors shorts).

    Returns (voltage branches kept, conductors, problems in words); a loop made only
    of closed ideal switches is harmless, and its closing switch is dropped.
    """
    kept, conductors, problems, _, _, _ = _structure(circuit, closed, dc, constrained=False)
    return kept, conductors, problems


def _structure(circuit: Circuit, closed: Sequence[bool], dc: bool, constrained: bool):
    """:func:`check_structure`, and with ``constrained`` (companion network only) the
    singular configurations whose constraints on the states are homogeneous are
    accepted and listed instead of refused: loops of capacitors closed by closed
    ideal switches (no voltage source in them), and node groups cut off by open ideal
    switches that reach ground only through inductors.

    Returns (kept, conductors, problems, tied loops, held groups); see :class:`Layout`.
    """
    nodes = list(circuit.nodes)
    forest = _Forest(nodes)
    kept: list[tuple[str, str, str]] = []
    conductors: list[tuple[str, str, str, str]] = []
    problems: list[str] = []
    tied: list[list[str]] = []
    states = dict(zip((s.name for s in circuit.switches), closed))
    accept = constrained and not dc
    for e in circuit.elements:
        edge = (e.name, e.first, e.second)
        if isinstance(e, Resistor):
            conductors.append((e.name, "resistance", e.first, e.second))
            continue
        if isinstance(e, Switch):
            on = states[e.name]
            field_ = "on_resistance" if on else "off_resistance"
            if getattr(e, field_) is not None:
                conductors.append((e.name, field_, e.first, e.second))
                continue
            if not on:
                continue
        elif isinstance(e, CurrentSource) or (isinstance(e, Capacitor) and dc):
            continue
        elif isinstance(e, Inductor) and not dc:
            continue
        if forest.join(e.first, e.second):
            kept.append(edge)
            continue
        loop = _loop_through(kept, edge)
        kinds = {type(circuit.element(n)) for n in loop}
        if kinds <= {Switch}:
            continue  # only ideal switches: voltages are fine, this one's current is taken as 0
        if accept and kinds == {Capacitor, Switch}:
            kept.append(edge)  # the loop's capacitor voltages are tied: one constraint
            tied.append(loop)
            continue
        problems.append(_loop_words(circuit, loop, kinds, dc))
    for name, _, a, b in conductors:
        forest.join(a, b)
    ground = circuit.ground
    floating = [n for n in nodes if ground is None or forest.find(n) != forest.find(ground)]
    held: list[tuple[list[str], list[str], list[str]]] = []
    cut_off: list[list[str]] = []
    if accept and ground is not None and floating:
        floating, held, cut_off = _held_groups(circuit, states, forest, floating)
    if ground is None:
        problems.append("the circuit has no ground node; declare one so node voltages have a reference")
    elif floating:
        problems.append(_floating_words(floating, dc))
    return kept, conductors, problems, tied, held, cut_off


def _held_groups(circuit: Circuit, states: dict, forest: _Forest, floating: list[str]):
    """Split the floating nodes into groups held by inductors behind open ideal switches
    (each a constraint: the net inductor current into the group is 0) and the rest.

    Returns (nodes still floating, [(group nodes, inductors around, open switches)],
    [nodes of a group cut off only by blocking ideal diodes]).
    """
    through = _Forest(list(circuit.nodes))
    for n in circuit.nodes:
        through.join(n, forest.find(n))
    for e in circuit.inductors:
        through.join(e.first, e.second)
    groups: dict[str, list[str]] = {}
    for n in floating:
        groups.setdefault(forest.find(n), []).append(n)
    ground = through.find(circuit.ground)
    still, held, cut_off = [], [], []
    for members in groups.values():
        inside = set(members)
        opened = [s.name for s in circuit.switches
                  if not states[s.name] and s.off_resistance is None and (s.first in inside or s.second in inside)]
        around = [l.name for l in circuit.inductors if (l.first in inside) != (l.second in inside)]
        if opened and around and through.find(members[0]) == ground:
            held.append((members, around, opened))
        elif opened and not around and all(isinstance(circuit.element(s), Diode) for s in opened):
            cut_off.append(members)
        else:
            still.extend(members)
    order = {n: k for k, n in enumerate(circuit.nodes)}
    return sorted(still, key=order.__getitem__), held, cut_off


def _loop_words(circuit: Circuit, loop: list[str], kinds: set, dc: bool) -> str:
    names = ", ".join(loop)
    if dc and Inductor in kinds:
        return (
            f"in DC steady state the loop {names} is made only of inductors, voltage sources "
            "and closed switches, so its DC current is undetermined (or infinite); "
            "add a series resistance to one of them, or start from rest or given values"
        )
    if Capacitor in kinds:
        return (
            f"the loop {names} is made only of capacitors, voltage sources and closed ideal "
            "switches, so the capacitor voltages are not independent; add a series "
            "resistance in the loop (for a switch: an on-resistance)"
        )
    return (
        f"the loop {names} is made only of voltage sources and closed ideal switches "
        "(a shorted or paralleled source); add a series resistance (for a switch: an on-resistance)"
    )


def _floating_words(floating: list[str], dc: bool) -> str:
    shown = 8
    nodes = ", ".join(floating[:shown]) + (f" and {len(floating) - shown} more" if len(floating) > shown else "")
    if dc:
        return (
            f"in DC steady state node(s) {nodes} have no path to ground except through "
            "capacitors, current sources or open switches, so their DC voltages are "
            "undetermined; add a resistor from them to ground, or start from rest or given values"
        )
    return (
        f"node(s) {nodes} have no path to ground except through inductors, current sources "
        "or open ideal switches (a floating part or an inductor/current-source cut set); "
        "add a resistor from them to ground (for a switch: an off-resistance)"
    )


def build_layout(circuit: Circuit, closed: tuple[bool, ...]) -> Layout:
    """Number the unknowns of the companion network, or raise SingularSystemError in words."""
    kept, conductors, problems, tied, held, cut_off = _structure(circuit, closed, dc=False, constrained=True)
    if problems:
        raise SingularSystemError(
            f"the circuit {describe_configuration(circuit, closed)} has no unique solution: " + "; ".join(problems),
            closed=closed, reasons=problems)
    ground = circuit.ground
    node = {n: i for i, n in enumerate(n for n in circuit.nodes if n != ground)}
    index = dict(node, **{ground: -1})
    branches = [(name, index[a], index[b]) for name, a, b in kept]
    return Layout(
        node=node,
        conductors=[(name, f, index[a], index[b]) for name, f, a, b in conductors],
        branches=branches,
        branch_of={name: len(node) + j for j, (name, _, _) in enumerate(branches)},
        tied_loops=tied,
        held_groups=held,
        cut_off_groups=cut_off,
    )

