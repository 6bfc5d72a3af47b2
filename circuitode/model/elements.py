"""The circuit's parts: resistors, capacitors, inductors, sources, switches, diodes and couplings.

Each element is a frozen dataclass with its name, its two nodes and its value
as an SI float (Ω, F, H; sources hold a waveform, switches a control from
:mod:`circuitode.model.switch_controls`), plus where the netlist wrote it.
Reference directions: a two-terminal element's voltage is
``v(first) - v(second)`` and its current flows from ``first`` through the
element to ``second``.  :data:`TwoTerminal` and :data:`Element` name the kinds.
"""
from __future__ import annotations

from dataclasses import dataclass, field

from ..errors import Where
from .aperiodic import Dc
from .sources import Waveform
from .switch_controls import DiodeRule, PeriodicSchedule, ThresholdRule, TimedSchedule

__all__ = [
    "Resistor",
    "Capacitor",
    "Inductor",
    "VoltageSource",
    "CurrentSource",
    "Switch",
    "Diode",
    "Coupling",
    "TwoTerminal",
    "Element",
]


@dataclass(frozen=True)
class Resistor:
    name: str
    first: str
    second: str
    resistance: float  # Ω, > 0
    where: Where | None = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class Capacitor:
    name: str
    first: str
    second: str
    capacitance: float  # F, > 0
    initial_voltage: float | None = None  # V, used when the analysis starts from given values
    where: Where | None = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class Inductor:
    name: str
    first: str
    second: str
    inductance: float  # H, > 0
    initial_current: float | None = None  # A
    where: Where | None = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class VoltageSource:
    """Imposes ``v(first) - v(second) = waveform(t)``."""

    name: str
    first: str
    second: str
    waveform: Waveform
    where: Where | None = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class CurrentSource:
    """Drives ``waveform(t)`` amperes from ``first`` through the source to ``second``."""

    name: str
    first: str
    second: str
    waveform: Waveform
    where: Where | None = field(default=None, compare=False, repr=False)



@dataclass(frozen=True)
class Switch:
    """A two-terminal switch. With no on/off resistance it is ideal (short / open)."""

    name: str
    first: str
    second: str
    control: TimedSchedule | PeriodicSchedule | ThresholdRule
    on_resistance: float | None = None  # Ω; None means an ideal short
    off_resistance: float | None = None  # Ω; None means an ideal open
    where: Where | None = field(default=None, compare=False, repr=False)

    @property
    def initially_closed(self) -> bool:
        c = self.control
        if isinstance(c, TimedSchedule):
            return c.initially_closed
        if isinstance(c, PeriodicSchedule):
            return c.start <= 0.0
        if isinstance(c, DiodeRule):
            return False  # blocking until the run finds it forward biased (at t = 0 too)
        return not c.closes

    def scheduled_changes(self, t0: float, t1: float) -> list[tuple[float, bool]]:
        """Timed changes (time s, closed after) with t0 < time < t1; none for threshold rules."""
        c = self.control
        if isinstance(c, TimedSchedule):
            return [(t, s) for t, s in c.changes if t0 < t < t1]
        if isinstance(c, PeriodicSchedule):
            import math

            out: list[tuple[float, bool]] = []
            k = max(math.floor((t0 - c.start) / c.period) - 1, 0)
            while True:
                on = c.start + k * c.period
                off = on + c.duty * c.period
                if on >= t1:
                    break
                for t, s in ((on, True), (off, False)):
                    if t0 < t < t1:
                        out.append((t, s))
                k += 1
            return out
        return []


@dataclass(frozen=True)
class Diode(Switch):
    """An ideal piecewise-linear diode from ``first`` (anode) to ``second`` (cathode).

    Conducting ("closed"): a constant ``drop`` (V) in series with ``on_resistance``
    (Ω; None: the drop alone).  Blocking ("open"): ``off_resistance`` (Ω) or, with
    None, an open circuit.  It turns on when its voltage exceeds the drop, off when
    its current falls to zero (events of the run).  The drop is a constant input of
    the state space (``waveform``), after the sources."""

    control: DiodeRule = DiodeRule()
    drop: float = 0.0  # V, ≥ 0

    @property
    def waveform(self) -> Dc:
        """The drop as a constant input, V."""
        return Dc(float(self.drop))


@dataclass(frozen=True)
class Coupling:
    """Magnetic coupling of two inductors: M = k √(L1 L2), |k| < 1."""

    name: str
    first: str  # inductor name
    second: str  # inductor name
    k: float
    where: Where | None = field(default=None, compare=False, repr=False)


TwoTerminal = Resistor | Capacitor | Inductor | VoltageSource | CurrentSource | Switch | Diode
Element = TwoTerminal | Coupling
