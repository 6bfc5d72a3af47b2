"""Entering a switch configuration: does the state satisfy the configuration's constraints?

A configuration that ties states (:mod:`circuitode.equations.constraints`)
keeps the full state vector on its constraint only if the state entering it
already satisfies it.  Capacitor voltages and inductor currents are continuous
through every switching instant, so a state that does not would need an
impulse:

* inductors behind an open ideal switch (a *held* node group) must carry no net
  current: an ideal switch cannot interrupt an inductor current (it would need
  an infinite voltage);
* capacitors paralleled by closed ideal switches (a *tied* loop) must agree:
  joining capacitors at different voltages moves the charge
  ``q = C_s ΔV`` in zero time and loses ``½ C_s ΔV²``, with
  ``C_s = 1 / Σ 1/C_i`` around the loop (``C₁C₂/(C₁+C₂)`` for two), whatever
  the stray resistance that limits the real current.

A contactor that closes, a switch that opens at zero current, or equal voltages
pass.  A state within :data:`ENTRY_TOLERANCE` of the constraint (rounding) is
projected onto it.  Otherwise the entry is refused with the instant, the
element, the current or voltage difference, and what to add.
"""
from __future__ import annotations

import numpy as np

from ..errors import ImpulsiveSwitchingError
from ..model import Capacitor, Circuit, Inductor
from .statespace import StateSpace

__all__ = ["ENTRY_TOLERANCE", "enter", "batch_entry", "entry_violations"]

#: A held net current or tied loop voltage counts as zero below this fraction of the
#: largest inductor current (at least 1 A) or capacitor voltage (at least 1 V).
ENTRY_TOLERANCE = 1e-9


def _held_current(circuit: Circuit, group, x: np.ndarray) -> tuple[np.ndarray, list[tuple[str, np.ndarray]]]:
    """Net current (A) leaving a held node group through its inductors, (…,), and each inductor's."""
    nodes, inductors, _ = group
    inside = set(nodes)
    nc = len(circuit.capacitors)
    position = {l.name: nc + i for i, l in enumerate(circuit.inductors)}
    net = np.zeros(x.shape[:-1])
    each = []
    for name in inductors:
        l = circuit.element(name)
        sign = 1.0 if l.first in inside else -1.0
        net = net + sign * x[..., position[name]]
        each.append((name, x[..., position[name]]))
    return net, each


def _loop_voltage(circuit: Circuit, loop, x: np.ndarray) -> tuple[np.ndarray, list[str], float]:
    """Sum of capacitor voltages around a tied loop (V, (…,)), its capacitors, and C_s (F)."""
    position = {c.name: i for i, c in enumerate(circuit.capacitors)}
    closing = circuit.element(loop[-1])
    node = closing.first
    total = np.zeros(x.shape[:-1])
    caps = []
    for name in list(loop[:-1]) + [loop[-1]]:
        e = circuit.element(name)
        if name == loop[-1]:
            sign = -1.0  # back from the path's end to where the closing element starts
        elif e.first == node:
            sign, node = 1.0, e.second
        else:
            sign, node = -1.0, e.first
        if isinstance(e, Capacitor):
            total = total + sign * x[..., position[name]]
            caps.append(name)
    series = 1.0 / sum(1.0 / circuit.element(c).capacitance for c in caps)
    return total, caps, series


def _scales(circuit: Circuit, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    nc = len(circuit.capacitors)
    v = np.max(np.abs(x[..., :nc]), axis=-1, initial=0.0)
    i = np.max(np.abs(x[..., nc:]), axis=-1, initial=0.0)
    return np.maximum(v, 1.0), np.maximum(i, 1.0)


def entry_violations(circuit: Circuit, ss: StateSpace, x: np.ndarray, atol: float = 0.0) -> tuple[np.ndarray, list]:
    """Which states violate the constraints of configuration ``ss``.

    x : (n,) or (N, n) full state (V, A).  atol : a larger tolerance (V or A) where the
    instant itself is known only to a band (a diode event).

    Returns
    -------
    bad : bool, () or (N,).
    found : list of (kind, item, value array) per constraint, kind "held" or "tied".
    """
    x = np.asarray(x, dtype=float)
    bad = np.zeros(x.shape[:-1], dtype=bool)
    found = []
    if ss.basis is None:
        return bad, found
    v_scale, i_scale = _scales(circuit, x)
    for group in ss.held_groups:
        net, _ = _held_current(circuit, group, x)
        wrong = np.abs(net) > np.maximum(ENTRY_TOLERANCE * i_scale, atol)
        bad |= wrong
        found.append(("held", group, net, wrong))
    for loop in ss.tied_loops:
        total, _, _ = _loop_voltage(circuit, loop, x)
        wrong = np.abs(total) > np.maximum(ENTRY_TOLERANCE * v_scale, atol)
        bad |= wrong
        found.append(("tied", loop, total, wrong))
    return bad, found


def _words(circuit: Circuit, kind: str, item, x: np.ndarray, when: str, cause: str) -> tuple[str, str, float]:
    """(message, element, value) for one violated constraint of a single state x."""
    from ..quantities import format_si  # the one place quantities are printed

    if kind == "held":
        nodes, inductors, switches = item
        net, each = _held_current(circuit, item, x)
        carrying = [f"{name} carries {format_si(float(i), 'A')}" for name, i in each if abs(float(i)) > 0]
        sw = " and ".join(switches)
        message = (
            f"{when}, {cause}: {'; '.join(carrying) or 'the inductors carry current'} "
            f"and ideal switch {sw} would interrupt it: an ideal switch cannot break an inductor "
            f"current (it would need an infinite voltage; {format_si(abs(float(net)), 'A')} cut). "
            f"Add a freewheel path across {inductors[0]} (e.g. a resistor), an RC snubber across "
            f"{sw}, or give {sw} an off-resistance (e.g. `off 100 MΩ`)")
        carried = next((float(i) for _, i in each if abs(float(i)) > 0), float(net))
        return message, switches[0], carried
    total, caps, series = _loop_voltage(circuit, item, x)
    dv = float(total)
    switches = [n for n in item if not isinstance(circuit.element(n), (Capacitor, Inductor))]
    sw = " and ".join(switches)
    message = (
        f"{when}, {cause}: closed ideal switch {sw} parallels capacitors {' and '.join(caps)} "
        f"at voltages that differ by {format_si(abs(dv), 'V')}; the charge "
        f"{format_si(abs(series * dv), 'C')} would move in zero time, an impulse of current that "
        f"only the stray resistance limits, and the ideal circuit would lose "
        f"{format_si(0.5 * series * dv * dv, 'J')} (½·C₁C₂/(C₁+C₂)·ΔV²). "
        f"Give {sw} an on-resistance, or add a series resistance (e.g. the ESR of {caps[0]})")
    return message, switches[0] if switches else caps[0], dv


def enter(circuit: Circuit, ss: StateSpace, x: np.ndarray, time: float, cause: str,
          atol: float = 0.0) -> np.ndarray:
    """The state entering configuration ``ss`` at ``time``, projected onto its constraint.

    x : (n,) full state.  cause : what brings the configuration about, e.g.
    ``"K opens on its schedule"``.

    Raises
    ------
    ImpulsiveSwitchingError : the state violates a constraint (see the module text).
    """
    from ..quantities import format_si

    x = np.asarray(x, dtype=float)
    if ss.basis is None:
        return x
    bad, found = entry_violations(circuit, ss, x, atol)
    if bad:
        kind, item, _, _ = next(f for f in found if f[3])
        message, element, value = _words(circuit, kind, item, x, f"at t = {format_si(time, 's')}", cause)
        raise ImpulsiveSwitchingError(message, time=time, element=element, value=value)
    return ss.project(x)


def batch_entry(circuit: Circuit, ss: StateSpace, x: np.ndarray, time, cause: str, atol=0.0):
    """:func:`enter` for a batch: x (N, n), time s (scalar or (N,)), atol V or A (scalar
    or (N,)) → (projected x, bad (N,), message per bad sample)."""
    from ..quantities import format_si

    x = np.asarray(x, dtype=float)
    if ss.basis is None:
        return x, np.zeros(x.shape[0], dtype=bool), {}
    bad, found = entry_violations(circuit, ss, x, atol)
    times = np.broadcast_to(np.asarray(time, dtype=float), (x.shape[0],))
    messages = {}
    for i in np.flatnonzero(bad):
        kind, item, _, _ = next(f for f in found if f[3][i])
        when = f"at t = {format_si(float(times[i]), 's')}"
        messages[int(i)] = _words(circuit, kind, item, x[i], when, cause)[0]
    return ss.project(x), bad, messages
