"""A probe written as command-line words ("voltage at out") → a Probe of the model.

The same five phrases as a netlist's ``record`` statement; used by the commands
that take a quantity as an option (``--to``, ``--as``).
"""
from __future__ import annotations

import re

from ..errors import CircuitodeError
from ..model import Circuit, CurrentThrough, NodeVoltage, PowerIn, VoltageAcross, VoltageBetween
from .expressions import did_you_mean

__all__ = ["ProbeWordsError", "probe_from_words"]

_NAME = r"([A-Za-z_][A-Za-z0-9_]*)"
_PHRASES = (
    (re.compile(rf"voltage\s+at\s+{_NAME}$"), lambda m: NodeVoltage(m[1]), "node"),
    (re.compile(rf"voltage\s+between\s+{_NAME}\s+and\s+{_NAME}$"), lambda m: VoltageBetween(m[1], m[2]), "node"),
    (re.compile(rf"voltage\s+across\s+{_NAME}$"), lambda m: VoltageAcross(m[1]), "element"),
    (re.compile(rf"current\s+through\s+{_NAME}$"), lambda m: CurrentThrough(m[1]), "element"),
    (re.compile(rf"power\s+in\s+{_NAME}$"), lambda m: PowerIn(m[1]), "element"),
)


class ProbeWordsError(CircuitodeError):
    """A quantity given on the command line that names no quantity of the circuit."""


def probe_from_words(text: str, circuit: Circuit, option: str = "the quantity"):
    """Read ``text`` ("voltage at out", "current through L1" …) as a probe of ``circuit``.

    Raises
    ------
    ProbeWordsError : the phrase is not one of the five, or names an unknown node or element.
    """
    words = " ".join(text.split())
    for pattern, make, kind in _PHRASES:
        m = pattern.match(words)
        if m is None:
            continue
        names = m.groups()
        known = circuit.nodes if kind == "node" else tuple(e.name for e in circuit.elements)
        for name in names:
            if name not in known:
                raise ProbeWordsError(
                    f"{option} {text!r}: no {kind} named {name!r} in the circuit; {did_you_mean(name, known)}")
        return make(m)
    raise ProbeWordsError(
        f"{option} {text!r} is not a quantity; write one of: 'voltage at NODE', "
        "'voltage between NODE and NODE', 'voltage across ELEMENT', 'current through ELEMENT', "
        "'power in ELEMENT'")
