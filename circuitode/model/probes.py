"""What can be recorded, watched or limited: node voltages, element voltages and currents, power.

A probe is a small frozen dataclass naming nodes or an element; its ``label``
is the words a report prints ("current through R1") and ``unit`` its SI unit
(V, A or W).  :data:`Probe` names every kind.  Probes say what to look at;
the equations stage turns them into output rows.
"""
from __future__ import annotations

from dataclasses import dataclass

__all__ = ["NodeVoltage", "VoltageBetween", "VoltageAcross", "CurrentThrough", "PowerIn", "Probe"]


@dataclass(frozen=True)
class NodeVoltage:
    node: str
    unit = "V"

    @property
    def label(self) -> str:
        return f"voltage at {self.node}"


@dataclass(frozen=True)
class VoltageBetween:
    first: str
    second: str
    unit = "V"

    @property
    def label(self) -> str:
        return f"voltage between {self.first} and {self.second}"


@dataclass(frozen=True)
class VoltageAcross:
    """The element's own voltage v(first) - v(second)."""

    element: str
    unit = "V"

    @property
    def label(self) -> str:
        return f"voltage across {self.element}"


@dataclass(frozen=True)
class CurrentThrough:
    element: str
    unit = "A"

    @property
    def label(self) -> str:
        return f"current through {self.element}"


@dataclass(frozen=True)
class PowerIn:
    """Power absorbed by an element, v·i with the element's reference directions (W)."""

    element: str
    unit = "W"

    @property
    def label(self) -> str:
        return f"power in {self.element}"


Probe = NodeVoltage | VoltageBetween | VoltageAcross | CurrentThrough | PowerIn
