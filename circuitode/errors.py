"""One exception tree for everything circuitode reports to its user.

Every error a user can cause derives from :class:`CircuitodeError` and carries
an ``exit_code`` (2 bad input, 3 numerical failure) so the command line never
has to inspect classes.  Messages say what is wrong *and* what to change.
"""
from __future__ import annotations

from dataclasses import dataclass

__all__ = [
    "Where",
    "CircuitodeError",
    "NetlistError",
    "Diagnostic",
    "TopologyError",
    "NoGroundError",
    "UnconnectedNodeError",
    "FloatingPartError",
    "CapacitorLoopError",
    "InductorCutsetError",
    "ShortedSourceError",
    "BadCouplingError",
    "BadValueError",
    "DuplicateNameError",
    "SingularSystemError",
    "ImpulsiveSwitchingError",
    "IntegrationError",
    "UnstableStepError",
]


@dataclass(frozen=True)
class Where:
    """A place in a netlist file: 1-based line and column, plus the line's text."""

    file: str
    line: int
    column: int
    text: str = ""

    def __str__(self) -> str:
        return f"{self.file}:{self.line}:{self.column}"

    def excerpt(self) -> str:
        """The offending line with a caret under the column (two lines)."""
        if not self.text:
            return ""
        shown = self.text.rstrip("\n").expandtabs(1)
        return f"    {shown}\n    {' ' * max(self.column - 1, 0)}^"


class CircuitodeError(Exception):
    """Base of every error circuitode reports to a user. Exit code 2 unless overridden."""

    exit_code = 2


class NetlistError(CircuitodeError):
    """A mistake in netlist text: located, quoted and explained.

    Parameters
    ----------
    message : what is wrong, in plain words.
    where : the place in the file, if known.
    hint : what to write instead.
    """

    def __init__(self, message: str, where: Where | None = None, hint: str | None = None):
        self.message = message
        self.where = where
        self.hint = hint
        super().__init__(self.__str__())

    def __str__(self) -> str:
        head = f"{self.where}: error: {self.message}" if self.where else f"error: {self.message}"
        parts = [head]
        if self.where is not None and self.where.text:
            parts.append(self.where.excerpt())
        if self.hint:
            parts.append(f"  hint: {self.hint}")
        return "\n".join(parts)


@dataclass(frozen=True)
class Diagnostic:
    """One finding of the topology checks.

    code : stable identifier, e.g. ``"capacitor-loop"``.
    message : what is wrong.
    elements : names of the elements (or nodes) involved.
    fix : what to add or change.
    severity : ``"error"`` (the circuit cannot be simulated) or ``"warning"``.
    where : place of the first element involved, when known.
    """

    code: str
    message: str
    elements: tuple[str, ...] = ()
    fix: str = ""
    severity: str = "error"
    where: Where | None = None

    def __str__(self) -> str:
        loc = f"{self.where}: " if self.where else ""
        text = f"{loc}{self.severity} [{self.code}]: {self.message}"
        if self.where is not None and self.where.text:
            text += "\n" + self.where.excerpt()
        if self.fix:
            text += f"\n  fix: {self.fix}"
        return text


class TopologyError(CircuitodeError):
    """The circuit's graph cannot be simulated. Holds every error diagnostic found.

    The subclass names the first fault; ``diagnostics`` lists all of them.
    """

    code = "topology"

    def __init__(self, diagnostics: tuple[Diagnostic, ...] | list[Diagnostic]):
        self.diagnostics = tuple(diagnostics)
        super().__init__("\n".join(str(d) for d in self.diagnostics))


class NoGroundError(TopologyError):
    code = "no-ground"


class UnconnectedNodeError(TopologyError):
    code = "unconnected-node"


class FloatingPartError(TopologyError):
    code = "floating-part"


class CapacitorLoopError(TopologyError):
    code = "capacitor-loop"


class InductorCutsetError(TopologyError):
    code = "inductor-cutset"


class ShortedSourceError(TopologyError):
    code = "shorted-source"


class BadCouplingError(TopologyError):
    code = "bad-coupling"


class BadValueError(TopologyError):
    code = "bad-value"


class DuplicateNameError(TopologyError):
    code = "duplicate-name"


class SingularSystemError(CircuitodeError):
    """A linear system that should have one solution has none or many.

    Raised with words about the circuit (which loop or cut set) wherever possible.
    """


class ImpulsiveSwitchingError(CircuitodeError):
    """A switch would move a state in zero time: open an ideal switch on an inductor
    current, or parallel capacitors at different voltages through an ideal switch.

    time : s, the instant.  element : the switch (or what acted).  value : the current
    interrupted (A) or the voltage difference closed on (V).
    """

    def __init__(self, message: str, time: float | None = None, element: str | None = None,
                 value: float | None = None):
        self.time, self.element, self.value = time, element, value
        super().__init__(message)


class IntegrationError(CircuitodeError):
    """The numerical integration failed; the message says what to change."""

    exit_code = 3


class UnstableStepError(IntegrationError):
    """A fixed step lies outside the explicit method's stability region."""

    def __init__(self, message: str, largest_stable_step: float | None = None):
        self.largest_stable_step = largest_stable_step
        super().__init__(message)
