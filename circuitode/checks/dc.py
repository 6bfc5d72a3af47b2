"""Why a DC steady state is not unique: words naming the loops and cut sets at fault.

Used by the stages that run after the checks (the transient driver, the
tolerance engine) to explain an equation-stage refusal of the DC initial state.
"""
from __future__ import annotations

from typing import Sequence

from ..errors import CircuitodeError
from ..model import Capacitor, Circuit, CurrentSource, Inductor, Switch
from ..model.configurations import _list
from ._words import _names, _nodes_label
from .graphs import floating_nodes, fundamental_loops, is_open, isolated_groups, switch_states
from .loops import _stiff_edges

__all__ = ["explain_singular_dc"]


def explain_singular_dc(circuit: Circuit, closed: Sequence[bool]) -> str:
    """Words for why the DC steady state at one switch configuration is not unique.

    At DC capacitors carry no current and inductors have no voltage, so the
    steady state is undetermined by a loop of inductors, voltage sources and
    closed ideal switches (the loop current is free), or by a cut set of
    capacitors, current sources and open ideal switches (the voltage across it
    is free).

    Parameters
    ----------
    circuit : the built circuit.
    closed : one bool per switch in ``circuit.switches`` order, True = closed.

    Returns
    -------
    str : one sentence per loop or cut set found, naming the elements, and what to
        change; empty when the wiring explains nothing (the cause is then in the values).
    """
    closed = tuple(bool(c) for c in closed)
    if len(closed) != len(circuit.switches):
        raise CircuitodeError(
            f"explain_singular_dc needs one switch state per switch ({len(circuit.switches)}), got {len(closed)}")
    states = switch_states(circuit, closed)
    ranked = _stiff_edges(circuit, states, Inductor)
    conducting, cut = [], []
    for i, (e, s) in enumerate(zip(circuit.elements, states)):
        if isinstance(e, (Capacitor, CurrentSource)):
            cut.append(i)
        elif not is_open(e, s):
            conducting.append(i)
    lines = []
    for loop in fundamental_loops(circuit, ranked):
        if all(isinstance(circuit.elements[i], Switch) for i in loop):
            continue
        names = _names(circuit, loop)
        lines.append(
            f"{_list(names)} form a loop with no resistance: at DC the current around it is not fixed "
            f"(add a series resistance, e.g. the winding resistance of {names[0]})")
    for nodes, around in isolated_groups(circuit, conducting, cut):
        names = _names(circuit, around)
        label = _nodes_label(nodes)
        through = f" only through {_list(names)}" if names else " by nothing"
        lines.append(
            f"{label} {'is' if len(nodes) == 1 else 'are'} reached{through}, which carry no direct current: "
            f"{'its' if len(nodes) == 1 else 'their'} DC voltage is not fixed (add a resistor from {nodes[0]} to ground, e.g. a bleeder)")
    for part in floating_nodes(circuit, states):
        lines.append(f"node{'s' if len(part) > 1 else ''} {_list(part)} have no path to ground")
    if not lines:
        return ""
    return "the DC steady state is not unique: " + "; ".join(lines) + \
        ". Alternatively start from given initial values instead of the steady state."
