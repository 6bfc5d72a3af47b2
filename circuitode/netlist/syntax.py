"""The netlist's syntax tree: frozen dataclasses that remember where each part was written.

:mod:`.parse` produces them from text; :mod:`.build` turns them into a
:class:`~circuitode.model.circuit.Circuit`.  Values stay unevaluated here: a
:class:`Valued` holds an expression tree (see :mod:`.expressions`) and an
optional tolerance.  Every ``where`` is a :class:`~circuitode.errors.Where`.
"""
from __future__ import annotations

from dataclasses import dataclass, field

from ..errors import Where
from . import expressions as ex

__all__ = [
    "Tolerance",
    "Valued",
    "Field",
    "WaveformSpec",
    "ProbeSpec",
    "TimedSpec",
    "AngleSpec",
    "ToggleSpec",
    "ThresholdSpec",
    "TitleStmt",
    "IncludeStmt",
    "ParamStmt",
    "GroundStmt",
    "ElementStmt",
    "CouplingStmt",
    "SourceStmt",
    "SwitchStmt",
    "DiodeStmt",
    "TransientStmt",
    "RecordStmt",
    "RequireStmt",
    "WindowSpec",
    "Statement",
    "Netlist",
]



@dataclass(frozen=True)
class Tolerance:
    """``± 5 % uniform``: relative as a fraction (0.05), distribution "normal" or "uniform"."""

    relative: float
    distribution: str
    where: Where


@dataclass(frozen=True)
class Valued:
    """A written value: an expression, an optional tolerance, and where it starts."""

    expr: ex.Expression
    tolerance: Tolerance | None
    where: Where


@dataclass(frozen=True)
class Field:
    """A named field such as ``amplitude 325 V`` of a waveform or a toggling switch."""

    name: str
    value: Valued
    where: Where


@dataclass(frozen=True)
class WaveformSpec:
    """kind : "constant", "points" or the written kind word.  fields : named fields.  points : (time, value) pairs."""

    kind: str
    fields: tuple[Field, ...]
    points: tuple[tuple[Valued, Valued], ...]
    where: Where


@dataclass(frozen=True)
class ProbeSpec:
    """kind : "at", "between", "across", "through" or "power".  names with their places."""

    kind: str
    names: tuple[str, ...]
    wheres: tuple[Where, ...]
    where: Where


@dataclass(frozen=True)
class TimedSpec:
    """``closes at 1 ms opens at 4 ms``: (closes?, time, where) per move."""

    moves: tuple[tuple[bool, Valued, Where], ...]


@dataclass(frozen=True)
class AngleSpec:
    """``closes on angle 90 deg of Vmains from 5 ms``: the move, the angle, the sine
    source's name and place, the earliest instant (None when not written)."""

    closes: bool
    angle: Valued
    source: str
    source_where: Where
    earliest: Valued | None
    where: Where


@dataclass(frozen=True)
class ToggleSpec:
    """``toggles period 20 us duty 40 % start 0 s``."""

    fields: tuple[Field, ...]
    where: Where


@dataclass(frozen=True)
class ThresholdSpec:
    """``closes when voltage at link > 43 V``; with ``back`` (a second ThresholdSpec, the
    opposite move) a switch with hysteresis that acts each time."""

    closes: bool
    probe: ProbeSpec
    comparison: str
    level: Valued
    back: "ThresholdSpec | None" = None
    where: Where | None = None


@dataclass(frozen=True)
class TitleStmt:
    title: str
    where: Where


@dataclass(frozen=True)
class IncludeStmt:
    path: str
    where: Where


@dataclass(frozen=True)
class ParamStmt:
    name: str
    value: Valued
    where: Where


@dataclass(frozen=True)
class GroundStmt:
    node: str
    where: Where


@dataclass(frozen=True)
class ElementStmt:
    """resistor, capacitor or inductor."""

    kind: str
    name: str
    first: str
    second: str
    value: Valued
    initial: Valued | None
    where: Where


@dataclass(frozen=True)
class CouplingStmt:
    name: str
    first: str
    second: str
    k: Valued
    wheres: tuple[Where, Where]
    where: Where


@dataclass(frozen=True)
class SourceStmt:
    """kind : "voltage_source" or "current_source"."""

    kind: str
    name: str
    first: str
    second: str
    waveform: WaveformSpec
    where: Where


@dataclass(frozen=True)
class SwitchStmt:
    name: str
    first: str
    second: str
    control: TimedSpec | AngleSpec | ToggleSpec | ThresholdSpec
    on: Valued | None
    off: Valued | None
    where: Where


@dataclass(frozen=True)
class DiodeStmt:
    """``diode NAME anode -- cathode [drop V] [on Ω] [off Ω]``."""

    name: str
    first: str
    second: str
    drop: Valued | None
    on: Valued | None
    off: Valued | None
    where: Where


@dataclass(frozen=True)
class TransientStmt:
    """settings : (word, Valued or str, where), word in until/step/points/method/initial."""

    settings: tuple[tuple[str, object, Where], ...]
    where: Where


@dataclass(frozen=True)
class RecordStmt:
    probes: tuple[ProbeSpec, ...]
    where: Where


@dataclass(frozen=True)
class WindowSpec:
    """The part of the run a figure is taken over: ``from … to …``, ``after …``, ``before …``.

    start, stop : the written instants (None for the start or end of the run).
    """

    start: Valued | None
    stop: Valued | None
    where: Where


@dataclass(frozen=True)
class RequireStmt:
    """figure : the written figure words, normalised to single spaces ("settling time").
    window : the part of the run it is taken over, or None for the whole run."""

    figure: str
    probe: ProbeSpec
    comparison: str
    limit: Valued
    where: Where
    window: WindowSpec | None = None


Statement = (
    TitleStmt | IncludeStmt | ParamStmt | GroundStmt | ElementStmt | CouplingStmt | SourceStmt | SwitchStmt
    | DiodeStmt | TransientStmt | RecordStmt | RequireStmt
)


@dataclass(frozen=True)
class Netlist:
    """One parsed file: its name, its lines and its statements in order (includes not expanded)."""

    file: str
    statements: tuple[Statement, ...]
    lines: tuple[str, ...] = field(default=(), repr=False)
