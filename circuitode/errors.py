"""One exception tree for everything circuitode reports to its user.

Every error a user can cause derives from :class:`CircuitodeError` and carries
an ``exit_code`` (2 bad input, 3 numerical failure, 4 the environment: disk
full, permission denied, folder locked, scheduler unreachable) so the command
line never has to inspect classes.  Messages say what is wrong *and* what to change.
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
    "NoSteadyStateError",
    "ImpulsiveSwitchingError",
    "IntegrationError",
    "UnstableStepError",
    "EXCERPT_CHARS",
    "EnvironmentFault",
    "environment_fault",
]


#: an error shows at most this many characters of a line
EXCERPT_CHARS = 120


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
        column = max(self.column - 1, 0)
        if len(shown) > EXCERPT_CHARS:  # never echo a long line whole (it may be megabytes)
            start = min(max(column - EXCERPT_CHARS // 2, 0), max(len(shown) - EXCERPT_CHARS, 0))
            cut = shown[start:start + EXCERPT_CHARS]
            shown = ("…" if start else "") + cut + ("…" if start + EXCERPT_CHARS < len(shown) else "")
            column = column - start + (1 if start else 0)
        return f"    {shown}\n    {' ' * column}^"


class CircuitodeError(Exception):
    """Base of every error circuitode reports to a user. Exit code 2 unless overridden.

    ``kept`` names a folder where what was computed before the failure was kept
    (None when nothing was).
    """

    exit_code = 2
    kept: str | None = None


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
        message = self.message if len(self.message) <= 3 * EXCERPT_CHARS else self.message[:3 * EXCERPT_CHARS] + "…"
        head = f"{self.where}: error: {message}" if self.where else f"error: {message}"
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
    The equation stage says what it knows; a caller that runs after the checks
    may add their words.

    closed : the switch states of the configuration at fault (one bool per
        switch, in ``circuit.switches`` order), when known.
    reasons : the raising stage's own words, one per problem found, when known.
    """

    def __init__(self, message: str, *, closed=None, reasons=()):
        super().__init__(message)
        self.closed = None if closed is None else tuple(bool(c) for c in closed)
        self.reasons = tuple(reasons)


class NoSteadyStateError(SingularSystemError):
    """The DC steady state at the start of a run is not unique, so it cannot be the initial state.

    configuration : words for the switch states (e.g. "with K1 closed").
    closed, reasons : as :class:`SingularSystemError`; ``reasons`` are the
        equation stage's words (the nodes with no DC path, the loops it found).
    """

    def __init__(self, configuration: str, closed, reasons):
        self.configuration = configuration
        message = (f"cannot start from the DC steady state of the circuit {configuration}: "
                   + ("; ".join(reasons) or "the state matrix A is singular"))
        super().__init__(message, closed=closed, reasons=reasons)

    def __reduce__(self):  # the message is built from the fields: rebuild from them
        return type(self), (self.configuration, self.closed, self.reasons)

    def explained(self, words: str) -> "NoSteadyStateError":
        """The same refusal worded by ``words`` (the checks' account of the loops and
        cut sets at fault) instead of the equation stage's own; itself when ``words`` is empty."""
        return self if not words else NoSteadyStateError(self.configuration, self.closed, (words,))


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


class EnvironmentFault(CircuitodeError):
    """The machine, not the input: disk full, permission denied, folder locked,
    scheduler unreachable or not a scheduler.  The message names the path or
    address and what to do."""

    exit_code = 4


_ERRNO_ADVICE = {
    "ENOSPC": "the disk is full; free space there or choose another --out folder",
    "EDQUOT": "the disk quota is used up; free space there or choose another --out folder",
    "EACCES": "permission denied; choose a folder you may write to (--out) or change its permissions",
    "EPERM": "operation not permitted; choose a folder you may write to (--out) or change its permissions",
    "EROFS": "the file system is read-only; choose another --out folder",
    "ENOTDIR": "a part of the path is a file, not a folder; choose another --out folder",
    "EISDIR": "a folder stands where a file should be written; choose another --out folder",
    "EMFILE": "too many open files; close other programs or raise the limit (ulimit -n)",
    "ENAMETOOLONG": "the path is too long; choose a shorter --out folder",
}


def environment_fault(exc: OSError, doing: str = "") -> EnvironmentFault:
    """An :class:`EnvironmentFault` worded from an ``OSError``: what failed, on which path,
    and what to do."""
    import errno

    name = errno.errorcode.get(exc.errno or 0, "")
    path = exc.filename if exc.filename is not None else ""
    reason = exc.strerror or type(exc).__name__
    advice = _ERRNO_ADVICE.get(name, "check the path and the free space, then run again")
    what = f"cannot {doing}" if doing else "a file operation failed"
    where = f" {path}" if path else ""
    return EnvironmentFault(f"error: {what}{where}: {reason}\n  what to do: {advice}")
