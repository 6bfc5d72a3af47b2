"""Topology checks: graph diagnostics on a built :class:`~circuitode.model.circuit.Circuit`, before any solve.

Each check is one function that returns a list of
:class:`~circuitode.errors.Diagnostic` and raises nothing; :func:`diagnose` runs
them all and :func:`verify` raises the :class:`~circuitode.errors.TopologyError`
subclass named by the first error.

Switches make the graph change with time, so the loop and cut-set checks run
on every switch configuration the run can reach
(:func:`circuitode.model.configurations.reachable_configurations`, re-exported here).
An ideal switch (no on-resistance) is a short when closed; one with no
off-resistance is an open when open.  A switch with a resistance in that state
is simply a resistor.

The per-element checks (names, values, couplings) live in
:mod:`circuitode.checks.element_checks` and are re-exported here.

Every ``check_*`` function takes the circuit (and, for the switched checks,
optionally the configurations to examine, by default all reachable ones) and
returns a list of Diagnostic; ``elements`` names the elements involved (loops,
cut sets and floating parts in file order; a coupling fault starts with the
coupling; a node fault ends with the node) and ``where`` is the first one's
place in the netlist (for a duplicate name: the second use).

Decisions
---------
* Floating parts: a part of the circuit with no conducting path to ground in
  some reachable configuration (for instance the DC link behind two open ideal
  contactors) leaves its node voltages undetermined, so modified nodal
  analysis is singular whatever the part contains -- resistors only as much as
  capacitors.  It is reported as an error, with the time it first floats.
* Shorted sources: any loop made only of voltage sources and closed ideal
  switches (a source across a short, two sources in parallel, a source whose
  terminals are one node) is ``shorted-source``; a loop that also holds a
  capacitor is ``capacitor-loop``.  Two equal sources in parallel are still an
  error: the split of current between them is undetermined.
* A loop made only of closed ideal switches is harmless for the voltages and is
  reported as a warning (``switch-loop``): the current in each switch of the
  loop is undetermined.
* A node touched by only one element terminal is an error
  (``unconnected-node``): it is almost always a misspelt node name.
"""
from __future__ import annotations

from typing import Iterable, Sequence

import networkx as nx

from ..model import (
    Capacitor,
    Circuit,
    CurrentSource,
    Diode,
    Inductor,
    Switch,
    VoltageSource,
)
from ..model.configurations import (  # the configurations are re-exported: older imports take them from here
    MAX_CONFIGURATIONS,
    Configuration,
    _list,
    enumerate_configurations,
    reachable_configurations,
)
from .element_checks import (  # the per-element checks are re-exported: older imports take them from here
    _kind,
    check_couplings,
    check_duplicate_names,
    check_values,
)
from ..errors import (
    BadCouplingError,
    BadValueError,
    CapacitorLoopError,
    CircuitodeError,
    Diagnostic,
    DuplicateNameError,
    FloatingPartError,
    InductorCutsetError,
    NoGroundError,
    ShortedSourceError,
    TopologyError,
    UnconnectedNodeError,
)
from .graphs import (
    conducting_graph,
    floating_nodes,
    fundamental_loops,
    has_ground,
    is_open,
    is_short,
    isolated_groups,
    node_users,
    switch_indices,
    switch_states,
)

__all__ = [
    "Configuration",
    "MAX_CONFIGURATIONS",
    "reachable_configurations",
    "check_duplicate_names",
    "check_values",
    "check_ground",
    "check_unconnected_nodes",
    "check_floating_parts",
    "check_shorted_sources",
    "check_capacitor_loops",
    "check_inductor_cutsets",
    "check_couplings",
    "diagnose",
    "verify",
    "explain_singular_dc",
]

_ERROR_CLASSES: dict[str, type[TopologyError]] = {
    cls.code: cls
    for cls in (
        NoGroundError,
        UnconnectedNodeError,
        FloatingPartError,
        CapacitorLoopError,
        InductorCutsetError,
        ShortedSourceError,
        BadCouplingError,
        BadValueError,
        DuplicateNameError,
    )
}


# --------------------------------------------------------------------------
# Helpers: configurations to examine, element names in messages
# --------------------------------------------------------------------------


def _configurations(circuit: Circuit, configurations: Sequence[Configuration] | None) -> Sequence[Configuration]:
    return reachable_configurations(circuit) if configurations is None else configurations


def _distinct(configurations: Iterable[Configuration], relevant: Sequence[int]) -> list[Configuration]:
    """First configuration for each distinct state of the relevant switches."""
    seen: set[tuple[bool, ...]] = set()
    out = []
    for cfg in configurations:
        key = tuple(cfg.closed[i] for i in relevant)
        if key not in seen:
            seen.add(key)
            out.append(cfg)
    return out


def _names(circuit: Circuit, indices: Iterable[int]) -> tuple[str, ...]:
    return tuple(circuit.elements[i].name for i in indices)


def _where(circuit: Circuit, indices: Sequence[int]):
    return circuit.elements[indices[0]].where if indices else None


def _switches_in(circuit: Circuit, indices: Iterable[int]) -> list[str]:
    return [circuit.elements[i].name for i in indices if isinstance(circuit.elements[i], Switch)]


# --------------------------------------------------------------------------
# Checks: ground and nodes
# --------------------------------------------------------------------------


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


def _nodes_label(nodes: Sequence[str]) -> str:
    return f"node{'s' if len(nodes) > 1 else ''} {_list(nodes)}"


# --------------------------------------------------------------------------
# Checks: loops of capacitors and voltage sources, cut sets of inductors
# --------------------------------------------------------------------------


def _stiff_edges(circuit: Circuit, states: Sequence[bool | None], state_kind: type) -> list[tuple[int, int]]:
    """(rank, element index) of every branch that fixes a voltage without resistance:
    closed ideal switches (rank 0), voltage sources (1) and ``state_kind`` elements (2),
    ranked so that loops are reported through the fewest stored-energy elements."""
    ranked = []
    for i, (e, s) in enumerate(zip(circuit.elements, states)):
        if is_short(e, s):
            ranked.append((0, i))
        elif isinstance(e, VoltageSource):
            ranked.append((1, i))
        elif isinstance(e, state_kind):
            ranked.append((2, i))
    return ranked


def _stiff_loops(circuit: Circuit, configurations: Sequence[Configuration], state_kind: type):
    """Loops of ``state_kind`` elements, voltage sources and closed ideal switches.

    Yields (loop element indices, configuration) once per distinct loop, in the
    configuration where it first appears.
    """
    relevant = switch_indices(circuit, lambda s: s.on_resistance is None)
    seen = set()
    for cfg in _distinct(configurations, relevant):
        ranked = _stiff_edges(circuit, switch_states(circuit, cfg.closed), state_kind)
        for loop in fundamental_loops(circuit, ranked):
            key = frozenset(loop)
            if key not in seen:
                seen.add(key)
                yield sorted(loop), cfg


def _loop_phrase(circuit: Circuit, loop: Sequence[int], cfg: Configuration) -> str:
    switches = _switches_in(circuit, loop)
    return "" if not switches else f" {cfg.when()}"


def check_shorted_sources(circuit: Circuit, configurations: Sequence[Configuration] | None = None) -> list[Diagnostic]:
    """``shorted-source``: a loop of voltage sources and closed ideal switches only.

    Covers a source whose terminals are one node, a source shorted by a closed
    ideal switch, and sources in parallel (even equal ones: the current shared
    between them is undetermined).  A loop of closed ideal switches alone is a
    ``switch-loop`` warning.
    """
    configurations = _configurations(circuit, configurations)
    out = []
    for loop, cfg in _stiff_loops(circuit, configurations, VoltageSource):
        elements = [circuit.elements[i] for i in loop]
        sources = [e.name for e in elements if isinstance(e, VoltageSource)]
        switches = [e.name for e in elements if isinstance(e, Switch)]
        when = _loop_phrase(circuit, loop, cfg)
        if not sources:
            out.append(Diagnostic(
                "switch-loop",
                f"closed ideal switches {_list(switches)} form a loop{when}; the current in each is undetermined",
                tuple(switches), f"give {switches[0]} an on-resistance if you record its current", "warning",
                _where(circuit, loop)))
            continue
        if len(loop) == 1:
            e = elements[0]
            msg = f"voltage source {e.name} has both terminals on node {e.first}"
            fix = f"connect the terminals of {e.name} to two different nodes"
        elif len(sources) == 1:
            msg = f"voltage source {sources[0]} is shorted by closed switch{'es' if len(switches) > 1 else ''} {_list(switches)}{when}"
            fix = (f"give {_list(switches)} an on-resistance, or put the internal resistance of "
                   f"{sources[0]} in series with it")
        else:
            via = f" through closed switch{'es' if len(switches) > 1 else ''} {_list(switches)}" if switches else ""
            msg = (f"voltage sources {_list(sources)} form a loop{via}{when}: unless they agree at every instant "
                   f"the loop breaks Kirchhoff's voltage law, and even then the current between them is undetermined")
            fix = f"put a series resistance (e.g. the internal resistance of {sources[-1]}) in the loop, or remove one source"
        out.append(Diagnostic("shorted-source", msg, _names(circuit, loop), fix, where=_where(circuit, loop)))
    return out


def check_capacitor_loops(circuit: Circuit, configurations: Sequence[Configuration] | None = None) -> list[Diagnostic]:
    """``capacitor-loop``: a loop of capacitors, voltage sources and closed ideal switches
    with at least one capacitor, in any reachable configuration.

    Such a loop ties the capacitor voltages together (one fewer free state) and,
    when a switch closes it onto unequal voltages, moves charge in zero time.  A
    loop of capacitors closed by closed ideal switches only (no voltage source)
    is no error: its voltages are tied in that configuration, and closing it onto
    unequal voltages is refused at that instant, with the charge and energy, by
    the transient run.
    Each diagnostic names the loop's elements and, for a switched loop, when it
    first closes.
    """
    configurations = _configurations(circuit, configurations)
    out = []
    for loop, cfg in _stiff_loops(circuit, configurations, Capacitor):
        elements = [circuit.elements[i] for i in loop]
        caps = [e.name for e in elements if isinstance(e, Capacitor)]
        if not caps:
            continue
        sources = [e.name for e in elements if isinstance(e, VoltageSource)]
        switches = [e.name for e in elements if isinstance(e, Switch)]
        if switches and not sources:
            # closed ideal switches paralleling capacitors tie their voltages (one state
            # fewer); equal voltages on closing are checked at the event, with numbers
            continue
        if len(loop) == 1:
            msg = f"capacitor {caps[0]} has both terminals on node {elements[0].first}"
            fix = f"connect the terminals of {caps[0]} to two different nodes"
        else:
            with_ = []
            if sources:
                with_.append(f"voltage source{'s' if len(sources) > 1 else ''} {_list(sources)}")
            if switches:
                with_.append(f"closed switch{'es' if len(switches) > 1 else ''} {_list(switches)}")
            extra = f" (with {', '.join(with_)})" if with_ else ""
            msg = (f"capacitor{'s' if len(caps) > 1 else ''} {_list(caps)}{extra} {'form' if len(caps) > 1 else 'forms'} a loop with no resistance"
                   f"{_loop_phrase(circuit, loop, cfg)}; "
                   f"the capacitor voltages are tied together and any difference is equalised in zero time")
            fix = f"add a series resistance (e.g. the ESR of {caps[0]})"
            if sources:
                fix += f" or the internal resistance of {sources[0]}"
            if switches:
                fix += f", or give switch{'es' if len(switches) > 1 else ''} {_list(switches)} an on-resistance"
        out.append(Diagnostic("capacitor-loop", msg, _names(circuit, loop), fix, where=_where(circuit, loop)))
    return out


def check_inductor_cutsets(circuit: Circuit, configurations: Sequence[Configuration] | None = None) -> list[Diagnostic]:
    """``inductor-cutset``: nodes joined to the rest only through inductors and current
    sources (open ideal switches being no path), in any reachable configuration.

    The inductor currents of such a cut set are tied by Kirchhoff's current law.
    When an open ideal switch makes the cut set (and no current source is in it),
    it is no error: the inductors' net current is held at zero in that
    configuration (one state fewer, see :mod:`circuitode.equations.constraints`),
    and a switch opening while they carry current is refused at that instant,
    with its numbers, by the transient run.  A lone dangling node is left to
    ``check_unconnected_nodes``.
    """
    configurations = _configurations(circuit, configurations)
    terminals: dict[str, int] = {}
    for e in circuit.elements:
        terminals[e.first] = terminals.get(e.first, 0) + 1
        terminals[e.second] = terminals.get(e.second, 0) + 1
    relevant = switch_indices(circuit, lambda s: s.off_resistance is None)
    out, seen = [], set()
    for cfg in _distinct(configurations, relevant):
        states = switch_states(circuit, cfg.closed)
        conducting, cut = [], []
        for i, (e, s) in enumerate(zip(circuit.elements, states)):
            if isinstance(e, (Inductor, CurrentSource)):
                cut.append(i)
            elif not is_open(e, s):
                conducting.append(i)
        for nodes, around in isolated_groups(circuit, conducting, cut):
            if len(nodes) == 1 and terminals.get(nodes[0], 0) == 1:
                continue
            opened = [i for i in node_users(circuit, nodes) if is_open(circuit.elements[i], states[i])]
            if opened and not any(isinstance(circuit.elements[i], CurrentSource) for i in around):
                # inductors behind an open ideal switch: their current is held (at 0), one
                # state fewer; opening while they carry current is refused at the event
                continue
            key = (frozenset(nodes), frozenset(around))
            if key in seen:
                continue
            seen.add(key)
            label = _nodes_label(nodes)
            inductors = [circuit.elements[i].name for i in around if isinstance(circuit.elements[i], Inductor)]
            sources = [circuit.elements[i].name for i in around if isinstance(circuit.elements[i], CurrentSource)]
            through = []
            if inductors:
                through.append(f"inductor{'s' if len(inductors) > 1 else ''} {_list(inductors)}")
            if sources:
                through.append(f"current source{'s' if len(sources) > 1 else ''} {_list(sources)}")
            if opened:
                names = _list(_names(circuit, opened))
                msg = (f"{label} {'is' if len(nodes) == 1 else 'are'} joined to the rest only through "
                       f"{_list(through)} while {names} {'is' if len(opened) == 1 else 'are'} open, {cfg.when()}; "
                       + ("interrupting an inductor current would need an infinite voltage" if inductors else
                          "a current source cannot drive into an open circuit"))
                fix = (f"give switch{'es' if len(opened) > 1 else ''} {names} an off-resistance or add a parallel "
                       f"resistor / snubber across {'them' if len(opened) > 1 else 'it'}")
            else:
                msg = (f"{label} {'is' if len(nodes) == 1 else 'are'} joined to the rest only through "
                       f"{_list(through)}; their currents are tied by Kirchhoff's current law")
                fix = (f"add a resistor from {nodes[0]} to another node (e.g. a damping resistor across "
                       f"{(inductors or sources)[0]})")
                if len(inductors) > 1 and not sources:
                    fix += ", or merge the series inductors into one"
            involved = sorted(set(around) | set(opened))
            out.append(Diagnostic("inductor-cutset", msg, _names(circuit, involved), fix,
                                  where=_where(circuit, involved)))
    return out


# --------------------------------------------------------------------------
# Checks: magnetic couplings
# --------------------------------------------------------------------------


# --------------------------------------------------------------------------
# Driver
# --------------------------------------------------------------------------


def diagnose(circuit: Circuit, until: float | None = None) -> list[Diagnostic]:
    """Run every check and return every finding, errors and warnings.

    Order: names, values, ground, nodes, floating parts, shorted sources,
    capacitor loops, inductor cut sets, couplings; then a warning if the
    switch configurations had to be capped.

    Parameters
    ----------
    circuit : the built circuit.
    until : end of the run, s; defaults to the analysis window.

    Returns
    -------
    list of Diagnostic (severity "error" or "warning").

    Examples
    --------
    >>> from circuitode.model import Capacitor, Circuit, Resistor, VoltageSource
    >>> from circuitode.model import Dc
    >>> c = Circuit("demo", "gnd", (VoltageSource("V1", "in", "gnd", Dc(5.0)),
    ...                             Capacitor("C1", "in", "gnd", 1e-6)))
    >>> [(d.code, d.elements) for d in diagnose(c)]
    [('capacitor-loop', ('V1', 'C1'))]
    """
    configurations, notes = enumerate_configurations(circuit, until)
    out = check_duplicate_names(circuit) + check_values(circuit) + check_ground(circuit)
    out += check_unconnected_nodes(circuit)
    out += check_floating_parts(circuit, configurations)
    out += check_shorted_sources(circuit, configurations)
    out += check_capacitor_loops(circuit, configurations)
    out += check_inductor_cutsets(circuit, configurations)
    out += check_couplings(circuit)
    out += [Diagnostic("configurations-capped", note, (), "the remaining configurations were not checked", "warning")
            for note in notes]
    return out


def verify(circuit: Circuit, until: float | None = None) -> list[Diagnostic]:
    """Raise if the circuit cannot be simulated; otherwise return the warnings.

    Raises
    ------
    TopologyError
        The subclass matching the first error's code (e.g. CapacitorLoopError),
        carrying every error diagnostic in ``diagnostics``.

    Examples
    --------
    >>> from circuitode.model import Circuit, Resistor
    >>> c = Circuit("demo", None, (Resistor("R1", "a", "b", 1.0), Resistor("R2", "a", "b", 2.0)))
    >>> verify(c)
    Traceback (most recent call last):
    ...
    circuitode.errors.NoGroundError: error [no-ground]: no ground (reference) node is declared
      fix: add `ground NAME` naming the reference node (for example one of a, b)
    """
    found = diagnose(circuit, until)
    errors = [d for d in found if d.severity == "error"]
    if errors:
        raise _ERROR_CLASSES.get(errors[0].code, TopologyError)(errors)
    return found


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
