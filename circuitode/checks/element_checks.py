"""Per-element checks on a built :class:`~circuitode.model.circuit.Circuit`: names, values and magnetic couplings.

Each check looks at elements one by one (or a coupling and the inductors it
names) rather than at the wiring, returns a list of
:class:`~circuitode.errors.Diagnostic` and raises nothing.  The graph checks are
in :mod:`circuitode.checks.nodes` and :mod:`circuitode.checks.loops`;
:func:`~circuitode.checks.topology.diagnose` runs them all.
"""
from __future__ import annotations

import math

import networkx as nx
import numpy as np

from ..model import (
    Capacitor,
    Circuit,
    Coupling,
    CurrentSource,
    Diode,
    Inductor,
    PeriodicSchedule,
    Resistor,
    Switch,
    ThresholdRule,
    TimedSchedule,
    VoltageSource,
)
from ..model.configurations import _list, _seconds, _si
from ..errors import Diagnostic

__all__ = [
    "check_duplicate_names",
    "check_values",
    "check_couplings",
]


def _kind(e) -> str:
    return {
        Resistor: "resistor",
        Capacitor: "capacitor",
        Inductor: "inductor",
        VoltageSource: "voltage source",
        CurrentSource: "current source",
        Switch: "switch",
        Diode: "diode",
        Coupling: "coupling",
    }.get(type(e), type(e).__name__.lower())



def check_duplicate_names(circuit: Circuit) -> list[Diagnostic]:
    """``duplicate-name``: two elements (or couplings) sharing one name.

    ``where`` points at the second use of the name.
    """
    uses: dict[str, list] = {}
    for e in (*circuit.elements, *circuit.couplings):
        uses.setdefault(e.name, []).append(e)
    out = []
    for name, items in uses.items():
        if len(items) > 1:
            kinds = _list([_kind(e) for e in items])
            out.append(
                Diagnostic(
                    "duplicate-name",
                    f"the name {name} is given to {len(items)} elements ({kinds})",
                    (name,),
                    "rename all but one of them; every element needs its own name",
                    where=items[1].where,
                )
            )
    return out


def _positive(value) -> bool:
    return value is not None and math.isfinite(value) and value > 0


def check_values(circuit: Circuit) -> list[Diagnostic]:
    """``bad-value``: non-positive or non-finite R, C, L and switch resistances,
    negative or unordered schedule times, a periodic duty outside (0, 1), a bad
    analysis window.  An off-resistance not above the on-resistance is a warning.
    """
    out = []

    def bad(e, what: str, fix: str, severity: str = "error") -> None:
        out.append(Diagnostic("bad-value", f"{_kind(e)} {e.name}: {what}", (e.name,), fix, severity, e.where))

    quantity = {Resistor: ("resistance", "Ω"), Capacitor: ("capacitance", "F"), Inductor: ("inductance", "H")}
    for e in circuit.elements:
        if type(e) in quantity:
            field, unit = quantity[type(e)]
            value = getattr(e, field)
            if not _positive(value):
                bad(e, f"{field} {_si(value, unit)} must be positive and finite",
                    f"give {e.name} a positive {field}; for a near short or open use a very small or large value")
        initial = getattr(e, "initial_voltage", None) if isinstance(e, Capacitor) else getattr(e, "initial_current", None)
        if initial is not None and not math.isfinite(initial):
            bad(e, f"initial value {initial} is not a finite number", f"give {e.name} a finite initial value")
        if not isinstance(e, Switch):
            continue
        for field in ("on_resistance", "off_resistance"):
            value = getattr(e, field)
            if value is not None and not _positive(value):
                words = field.replace("_", "-")
                bad(e, f"{words} {_si(value, 'Ω')} must be positive and finite",
                    f"give {e.name} a positive {words}, or none for an ideal switch")
        if _positive(e.on_resistance) and _positive(e.off_resistance) and e.off_resistance <= e.on_resistance:
            bad(e, f"off-resistance {_si(e.off_resistance, 'Ω')} is not above its on-resistance {_si(e.on_resistance, 'Ω')}",
                "check the two values: a switch should conduct better when closed", severity="warning")
        c = e.control
        if isinstance(c, TimedSchedule):
            times = [t for t, _ in c.changes]
            if not all(math.isfinite(t) and t >= 0 for t in times):
                bad(e, f"switching times {_list([_seconds(t) for t in times])} must be finite and not negative",
                    "give times from 0 s on; the run starts at t = 0")
            elif any(b <= a for a, b in zip(times, times[1:])):
                bad(e, f"switching times {_list([_seconds(t) for t in times])} must be strictly increasing",
                    "list each change once, in time order")
        elif isinstance(c, PeriodicSchedule):
            if not _positive(c.period):
                bad(e, f"period {_seconds(c.period)} must be positive and finite", "give a positive period")
            if not (0 < c.duty < 1):
                bad(e, f"duty {c.duty:g} must lie strictly between 0 and 1",
                    "give a duty between 0 and 1 (e.g. 0.5); for a switch that never moves use a timed switch")
            if not (math.isfinite(c.start) and c.start >= 0):
                bad(e, f"start {_seconds(c.start)} must be finite and not negative", "start at 0 s or later")
        elif isinstance(c, ThresholdRule) and not math.isfinite(c.level):
            bad(e, f"threshold level {c.level} is not a finite number", "give a finite threshold level")
    a = circuit.analysis
    if a is not None:
        problems = []
        if not _positive(a.until):
            problems.append(f"end time {_seconds(a.until)} must be positive and finite")
        if a.step is not None and not _positive(a.step):
            problems.append(f"step {_seconds(a.step)} must be positive and finite")
        if a.points is not None and a.points < 2:
            problems.append(f"number of points {a.points} must be at least 2")
        for p in problems:
            out.append(Diagnostic("bad-value", f"transient: {p}", (), "correct the transient statement", where=a.where))
    return out



def check_couplings(circuit: Circuit) -> list[Diagnostic]:
    """``bad-coupling``: a coefficient outside (-1, 1), a name that is not an
    inductor, an inductor coupled with itself or a pair coupled twice, and an
    inductance matrix (L on the diagonal, M = k √(L1 L2) off it) that is not
    positive definite, checked per group of coupled inductors with ``eigvalsh``.
    """
    out = []
    inductors = {e.name: e for e in circuit.elements if isinstance(e, Inductor)}
    names = {e.name: e for e in circuit.elements}
    valid: dict[frozenset, object] = {}
    for c in circuit.couplings:
        def bad(msg: str, fix: str) -> None:
            out.append(Diagnostic("bad-coupling", f"coupling {c.name}: {msg}", (c.name, c.first, c.second), fix,
                                  where=c.where))

        problems = len(out)
        for ref in (c.first, c.second):
            if ref not in names:
                bad(f"{ref} is not an element of the circuit", "name two inductors of the circuit")
            elif ref not in inductors:
                bad(f"{ref} is a {_kind(names[ref])}, not an inductor", "couple two inductors")
        if c.first == c.second:
            bad(f"couples {c.first} with itself", "couple two different inductors")
        if not (math.isfinite(c.k) and -1 < c.k < 1):
            bad(f"coefficient k = {c.k:g} lies outside (-1, 1)",
                "give |k| < 1 (e.g. 0.99 for a tightly wound transformer); |k| = 1 makes the inductance matrix singular")
        pair = frozenset((c.first, c.second))
        if pair in valid:
            bad(f"{c.first} and {c.second} are already coupled by {valid[pair].name}",
                "give each pair of inductors one coupling")
        if len(out) == problems:
            valid[pair] = c
    usable = {p: c for p, c in valid.items() if all(_positive(inductors[n].inductance) for n in p)}
    web = nx.Graph()
    web.add_edges_from((c.first, c.second, {"coupling": c}) for c in usable.values())
    order = {e.name: k for k, e in enumerate(circuit.elements)}
    for group in nx.connected_components(web):
        members = sorted(group, key=order.__getitem__)
        index = {n: k for k, n in enumerate(members)}
        L = np.diag([inductors[n].inductance for n in members]).astype(float)
        couplings = [d["coupling"] for _, _, d in web.subgraph(group).edges(data=True)]
        couplings.sort(key=lambda c: c.name)
        for c in couplings:
            a, b = index[c.first], index[c.second]
            L[a, b] = L[b, a] = c.k * math.sqrt(L[a, a] * L[b, b])
        scale = np.sqrt(np.diag(L))
        eig = np.linalg.eigvalsh(L / np.outer(scale, scale))
        if eig[0] <= 1e-12 * eig[-1]:
            cs = [c.name for c in couplings]
            out.append(Diagnostic(
                "bad-coupling",
                f"couplings {_list(cs)} make the inductance matrix of {_list(members)} not positive definite "
                f"(smallest eigenvalue of the normalised matrix {eig[0]:.3g}); such windings would store negative energy",
                tuple(cs) + tuple(members),
                "reduce the coupling coefficients or make their signs consistent with the winding directions",
                where=couplings[0].where,
            ))
    return out
