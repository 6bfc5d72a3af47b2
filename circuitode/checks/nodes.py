"""Node checks: a usable ground, nodes reached by one terminal only, and parts with no path to ground.

Each ``check_*`` function returns a list of :class:`~circuitode.errors.Diagnostic`
and raises nothing; :func:`circuitode.checks.topology.diagnose` runs them.

Decisions
---------
* Floating parts: a part of the circuit with no conducting path to ground in
  some reachable configuration (for instance the DC link behind two open ideal
  contactors) leaves its node voltages undetermined, so modified nodal
  analysis is singular whatever the part contains -- resistors only as much as
  capacitors.  It is reported as an error, with the time it first floats.
* A node touched by only one element terminal is an error
  (``unconnected-node``): it is almost always a misspelt node name.
"""
from __future__ import annotations

from typing import Sequence

import networkx as nx

from ..errors import Diagnostic
from ..model import Capacitor, Circuit, Diode, VoltageSource
from ..model.configurations import Configuration, _list
from ._words import _configurations, _distinct, _names, _nodes_label, _where
from .element_checks import _kind
from .graphs import conducting_graph, has_ground, is_open, node_users, switch_indices, switch_states

__all__ = ["check_ground", "check_unconnected_nodes", "check_floating_parts"]


def check_ground(circuit: Circuit) -> list[Diagnostic]:
    """``no-ground``: no ground declared, or the ground node is on no element."""
    fix = "add `ground NAME` naming the reference node"
    if not circuit.elements:
        return [Diagnostic("no-ground", "the circuit has no elements", (), "add elements between nodes, and a ground")]
    others = [n for n in circuit.nodes if n != circuit.ground]
    hint = f" (for example one of {', '.join(others[:5])})" if others else ""
    if circuit.ground is None:
        return [Diagnostic("no-ground", "no ground (reference) node is declared", (), fix + hint)]
    if not has_ground(circuit):
        return [Diagnostic("no-ground", f"the ground node {circuit.ground} is not a terminal of any element",
                           (circuit.ground,), fix + hint)]
    return []


def check_unconnected_nodes(circuit: Circuit) -> list[Diagnostic]:
    """``unconnected-node``: a node touched by a single element terminal (an error), and
    an element with both terminals on one node (a warning; for voltage sources and
    capacitors the loop checks report it as an error instead).
    """
    import difflib

    out = []
    terminals: dict[str, list[int]] = {}
    for i, e in enumerate(circuit.elements):
        terminals.setdefault(e.first, []).append(i)
        terminals.setdefault(e.second, []).append(i)
    for node, users in terminals.items():
        if len(users) != 1:
            continue
        e = circuit.elements[users[0]]
        guess = difflib.get_close_matches(node, [n for n in terminals if n != node], n=1)
        hint = f" (did you mean {guess[0]}?)" if guess else ""
        out.append(Diagnostic(
            "unconnected-node",
            f"node {node} is reached only by {_kind(e)} {e.name}; nothing else connects to it",
            (e.name, node),
            f"connect {node} to the rest of the circuit{hint} or remove {e.name}",
            where=e.where,
        ))
    for e in circuit.elements:
        if e.first == e.second and not isinstance(e, (VoltageSource, Capacitor)):
            out.append(Diagnostic(
                "unconnected-node",
                f"{_kind(e)} {e.name} has both terminals on node {e.first}, so it does nothing",
                (e.name, e.first),
                f"connect the second terminal of {e.name} to the node you meant, or remove it",
                "warning",
                e.where,
            ))
    return out


def check_floating_parts(circuit: Circuit, configurations: Sequence[Configuration] | None = None) -> list[Diagnostic]:
    """``floating-part``: nodes with no path to ground in some reachable configuration.

    Open ideal switches are no path.  Every floating part is an error, whatever it
    holds: its node voltages are undetermined, so the nodal equations are singular.
    Nothing is reported when there is no usable ground (``check_ground`` covers it).
    """
    if not has_ground(circuit):
        return []
    configurations = _configurations(circuit, configurations)
    relevant = switch_indices(circuit, lambda s: s.off_resistance is None)
    always = nx.Graph()
    always.add_nodes_from(circuit.nodes)
    always.add_edges_from((e.first, e.second) for e in circuit.elements)
    out = []
    islands = set()
    for part in nx.connected_components(always):
        if circuit.ground in part:
            continue
        islands |= part
        nodes = [n for n in circuit.nodes if n in part]
        inside = node_users(circuit, nodes)
        out.append(Diagnostic(
            "floating-part",
            f"{_nodes_label(nodes)} (with {_list(_names(circuit, inside))}) "
            f"{'has' if len(nodes) == 1 else 'have'} no connection to ground at all",
            _names(circuit, inside),
            "connect the part to ground, directly or through a large resistor (e.g. 1 GΩ); "
            "a part coupled to the rest only magnetically needs this too",
            where=_where(circuit, inside),
        ))
    seen: set[frozenset] = set()
    for cfg in _distinct(configurations, relevant):
        states = switch_states(circuit, cfg.closed)
        for part in nx.connected_components(conducting_graph(circuit, states)):
            if circuit.ground in part or part & islands or frozenset(part) in seen:
                continue
            nodes = [n for n in circuit.nodes if n in part]
            users = node_users(circuit, nodes)
            inside = [i for i in users if not is_open(circuit.elements[i], states[i])]
            cut_off = [i for i in users if is_open(circuit.elements[i], states[i])]
            if cut_off and all(isinstance(circuit.elements[i], Diode) for i in cut_off):
                continue  # behind blocking diodes only: its common potential is set by the
                # minimum-norm rule (equations.constraints); a diode turning on fixes it again
            seen.add(frozenset(part))
            switches = _list(_names(circuit, cut_off))
            with_ = f" (with {_list(_names(circuit, inside))})" if inside else ""
            msg = (f"{_nodes_label(nodes)}{with_} {'loses' if len(nodes) == 1 else 'lose'} every path to ground "
                   f"while {switches} {'is' if len(cut_off) == 1 else 'are'} open, {cfg.when()}")
            fix = f"give {switches} an off-resistance (e.g. 100 MΩ) or tie the part to ground through a large resistor"
            involved = sorted(inside + cut_off)
            out.append(Diagnostic("floating-part", msg, _names(circuit, involved), fix, where=_where(circuit, involved)))
    return out
