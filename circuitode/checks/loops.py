"""Switched loop and cut-set checks: shorted sources, capacitor loops, inductor cut sets.

Switches make the graph change with time, so these checks run on every switch
configuration the run can reach
(:func:`circuitode.model.configurations.reachable_configurations`).  An ideal
switch (no on-resistance) is a short when closed; one with no off-resistance
is an open when open.  A switch with a resistance in that state is simply a
resistor.  Each ``check_*`` function takes the circuit and, optionally, the
configurations to examine (by default all reachable ones), returns a list of
:class:`~circuitode.errors.Diagnostic` and raises nothing.

Decisions
---------
* Shorted sources: any loop made only of voltage sources and closed ideal
  switches (a source across a short, two sources in parallel, a source whose
  terminals are one node) is ``shorted-source``; a loop that also holds a
  capacitor is ``capacitor-loop``.  Two equal sources in parallel are still an
  error: the split of current between them is undetermined.
* A loop made only of closed ideal switches is harmless for the voltages and is
  reported as a warning (``switch-loop``): the current in each switch of the
  loop is undetermined.
"""
from __future__ import annotations

from typing import Sequence

from ..errors import Diagnostic
from ..model import Capacitor, Circuit, CurrentSource, Inductor, Switch, VoltageSource
from ..model.configurations import Configuration, _list
from ._words import _configurations, _distinct, _names, _nodes_label, _switches_in, _where
from .graphs import fundamental_loops, is_open, is_short, isolated_groups, node_users, switch_indices, switch_states

__all__ = ["check_shorted_sources", "check_capacitor_loops", "check_inductor_cutsets"]


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
