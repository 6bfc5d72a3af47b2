"""The circuit model: elements with resolved SI values, nodes, graph, analysis settings.

A :class:`Circuit` is what the netlist builder produces and what every later
stage reads.  All numbers are SI floats (Ω, F, H, V, A, s, Hz, rad).  Component
tolerances are kept aside in ``spreads``; ``recipes`` say how each element value
that depends on a spread parameter is recomputed from sampled parameters.

Reference directions: a two-terminal element's voltage is
``v(first) - v(second)`` and its current flows from ``first`` through the
element to ``second``.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import TYPE_CHECKING, Any, Mapping, Protocol

if TYPE_CHECKING:
    import networkx as nx

from ..errors import Where
from .sources import Dc, Waveform

__all__ = [
    "Resistor",
    "Capacitor",
    "Inductor",
    "VoltageSource",
    "CurrentSource",
    "Switch",
    "Diode",
    "DiodeRule",
    "Coupling",
    "TimedSchedule",
    "PeriodicSchedule",
    "ThresholdRule",
    "HysteresisRule",
    "NodeVoltage",
    "VoltageBetween",
    "VoltageAcross",
    "CurrentThrough",
    "PowerIn",
    "Analysis",
    "Requirement",
    "Spread",
    "Circuit",
    "FIGURES",
    "INITIAL_STATES",
]

# --------------------------------------------------------------------------
# Elements
# --------------------------------------------------------------------------


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
class TimedSchedule:
    """A switch moved at given instants.

    initially_closed : state for t < first change.
    changes : ((time s, closed after), ...) sorted by time.
    """

    initially_closed: bool
    changes: tuple[tuple[float, bool], ...]


@dataclass(frozen=True)
class PeriodicSchedule:
    """A switch toggled periodically: closed on [start + kT, start + kT + duty·T), open otherwise.

    period T in s, duty in (0, 1), start in s (open before it).
    """

    period: float
    duty: float
    start: float = 0.0


@dataclass(frozen=True)
class ThresholdRule:
    """A switch that acts once, when a probed quantity crosses a level.

    closes : True for "closes when …" (open until then), False for "opens when …".
    probe : what is watched (a linear probe, not PowerIn).
    above : True for ``>`` (acts when the quantity rises through ``level``), False for ``<``.
    level : SI value.
    """

    closes: bool
    probe: "Probe"
    above: bool
    level: float

    repeats = False  # acts once (a HysteresisRule acts each time)

    def move(self, closed: bool) -> "ThresholdRule":
        """The rule for the switch's next move from state ``closed`` (itself: it acts once)."""
        return self


@dataclass(frozen=True)
class HysteresisRule(ThresholdRule):
    """A threshold switch with hysteresis, acting each time (``closes when v > 43 V, opens
    when v < 40 V``): the first clause (also the starting state) as in ThresholdRule;
    ``back_above``, ``back_level`` the clause that moves it back, on the same probe."""

    back_above: bool = False
    back_level: float = 0.0
    repeats = True

    def move(self, closed: bool) -> ThresholdRule:
        """The clause that moves a switch now in state ``closed``."""
        if closed != self.closes:
            return ThresholdRule(self.closes, self.probe, self.above, self.level)
        return ThresholdRule(not self.closes, self.probe, self.back_above, self.back_level)


@dataclass(frozen=True)
class DiodeRule:
    """The control of a diode: it conducts while forward biased (see :class:`Diode`)."""


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

# --------------------------------------------------------------------------
# Probes: what can be recorded, watched or limited
# --------------------------------------------------------------------------


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

# --------------------------------------------------------------------------
# Analysis settings and limits
# --------------------------------------------------------------------------

INITIAL_STATES = ("rest", "given", "steady")

#: Canonical figure names a requirement may limit (see measure.py).
FIGURES = (
    "peak",
    "minimum",
    "final",
    "overshoot",
    "undershoot",
    "rise_time",
    "settling_time",
    "rms",
    "mean",
    "i2t",
    "energy",
    "max_slope",
    "damping_ratio",
    "damped_frequency",
)


@dataclass(frozen=True)
class Analysis:
    """The transient window.

    until : end time, s.  step : output (and fixed-step) step, s, or None.
    points : number of output points when no step is given.
    method : integrator name ("auto", "rk4", "rk45", "dop853", "radau", "bdf", "exact").
    initial : "rest" (all states zero), "given" (stated initial values, zero elsewhere),
    "steady" (DC steady state of the configuration at t = 0⁻).
    """

    until: float
    step: float | None = None
    points: int | None = None
    method: str = "auto"
    initial: str = "given"
    where: Where | None = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class Requirement:
    """A limit a figure of a probed quantity must meet, e.g. peak current through R1 < 2 A.

    figure : one of FIGURES.  comparison : "<", "<=", ">", ">=".  limit : SI value
    in the figure's unit (% for overshoot/undershoot, s for times, A²s for i2t, J for energy).
    """

    figure: str
    probe: Probe
    comparison: str
    limit: float
    where: Where | None = field(default=None, compare=False, repr=False)

    @property
    def label(self) -> str:
        return f"{self.figure.replace('_', ' ')} of {self.probe.label} {self.comparison} {self.limit:g}"


@dataclass(frozen=True)
class Spread:
    """A component tolerance (never called rtol/atol here).

    name : the parameter it belongs to (a `param` name, or the element name for an
    inline tolerance).  nominal : SI value.  relative : fraction (0.05 for ± 5 %).
    distribution : "normal" (σ = relative/3, truncated at ±relative) or "uniform".
    """

    name: str
    nominal: float
    relative: float
    distribution: str = "normal"
    where: Where | None = field(default=None, compare=False, repr=False)


class Recipe(Protocol):
    """An expression over parameter names; evaluates on floats or numpy arrays alike."""

    names: frozenset[str]

    def evaluate(self, env: Mapping[str, Any]) -> Any: ...


Element = TwoTerminal | Coupling

# --------------------------------------------------------------------------
# The circuit
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class Circuit:
    """A built, numeric circuit.

    elements : two-terminal elements in file order.  couplings : inductor couplings.
    ground : the reference node's name.  parameters : nominal value of every `param`
    and of every inline-toleranced value (by element name).  spreads : tolerances by
    parameter name.  recipes : (element name, field) → expression over parameter
    names, for each element value that depends on a spread; field is a dataclass
    field name such as "resistance", or "waveform.amplitude" for a source field.
    parameter_units : unit of each `param` in evaluation order ("" plain number,
    None when its expression gives no unit of the language).
    """

    title: str
    ground: str | None
    elements: tuple[TwoTerminal, ...]
    couplings: tuple[Coupling, ...] = ()
    analysis: Analysis | None = None
    records: tuple[Probe, ...] = ()
    requirements: tuple[Requirement, ...] = ()
    parameters: Mapping[str, float] = field(default_factory=dict)
    spreads: Mapping[str, Spread] = field(default_factory=dict)
    recipes: Mapping[tuple[str, str], Recipe] = field(default_factory=dict)
    source_file: str | None = None
    parameter_units: Mapping[str, str | None] = field(default_factory=dict)

    # -- lookups ---------------------------------------------------------
    @cached_property
    def by_name(self) -> dict[str, Element]:
        table: dict[str, Element] = {}
        for e in (*self.elements, *self.couplings):
            table.setdefault(e.name, e)
        return table

    def element(self, name: str) -> Element:
        return self.by_name[name]

    @cached_property
    def nodes(self) -> tuple[str, ...]:
        """Node names, ground first (if declared), then in order of first appearance."""
        seen: dict[str, None] = {}
        if self.ground is not None:
            seen[self.ground] = None
        for e in self.elements:
            seen.setdefault(e.first, None)
            seen.setdefault(e.second, None)
        return tuple(seen)

    @cached_property
    def graph(self) -> nx.MultiGraph:
        """Nodes are node names; one edge per two-terminal element, key = element name,
        attribute ``element`` holds the element."""
        import networkx as nx  # loads slowly; only the graph checks need it

        g = nx.MultiGraph()
        g.add_nodes_from(self.nodes)
        for e in self.elements:
            g.add_edge(e.first, e.second, key=e.name, element=e)
        return g

    def of_kind(self, kind: type) -> tuple:
        return tuple(e for e in self.elements if isinstance(e, kind))

    @property
    def capacitors(self) -> tuple[Capacitor, ...]:
        return self.of_kind(Capacitor)

    @property
    def inductors(self) -> tuple[Inductor, ...]:
        return self.of_kind(Inductor)

    @property
    def switches(self) -> tuple[Switch, ...]:
        return self.of_kind(Switch)

    @property
    def sources(self) -> tuple[VoltageSource | CurrentSource, ...]:
        return tuple(e for e in self.elements if isinstance(e, (VoltageSource, CurrentSource)))

    diodes = property(lambda self: self.of_kind(Diode), doc="The diodes, in file order.")

    @property
    def inputs(self) -> tuple:
        """The state space's inputs in order: the sources, then each diode's drop."""
        return self.sources + self.diodes

    @cached_property
    def state_names(self) -> tuple[str, ...]:
        """State variables in order: every capacitor voltage, then every inductor current."""
        return tuple(f"voltage across {c.name}" for c in self.capacitors) + tuple(
            f"current through {l.name}" for l in self.inductors
        )

    @cached_property
    def state_units(self) -> tuple[str, ...]:
        return ("V",) * len(self.capacitors) + ("A",) * len(self.inductors)
