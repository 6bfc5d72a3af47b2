"""What moves a switch: timed and periodic schedules, threshold and hysteresis rules, a diode's bias.

A :class:`~circuitode.model.elements.Switch` holds one of these as its
``control``.  Schedules give instants in s known before the run; rules watch a
:mod:`probe <circuitode.model.probes>` against a level in SI units and act
when the run crosses it; :class:`DiodeRule` marks a diode, moved by its own
voltage and current.  None of them computes anything: the configurations
module and the transient driver read them.
"""
from __future__ import annotations

from dataclasses import dataclass

from .probes import Probe

__all__ = ["TimedSchedule", "AngleSchedule", "PeriodicSchedule", "ThresholdRule", "HysteresisRule", "DiodeRule"]


@dataclass(frozen=True)
class TimedSchedule:
    """A switch moved at given instants.

    initially_closed : state for t < first change.
    changes : ((time s, closed after), ...) sorted by time.
    """

    initially_closed: bool
    changes: tuple[tuple[float, bool], ...]


@dataclass(frozen=True)
class AngleSchedule(TimedSchedule):
    """A switch that moves once, at a given angle of a sine source (point-on-wave closing).

    The instant is the first ``t ≥ earliest`` (s) at which the source's phase
    ``2π f (t − delay) + phase`` equals ``angle`` (rad) modulo 2π; ``changes`` holds it,
    so everything that reads a timed schedule reads this one.  source : the sine
    source's name; frequency Hz, phase rad and delay s are the source's.  Build one
    with :meth:`make`; :meth:`instants` gives the instants of many angles at once.
    """

    source: str = ""
    angle: float = 0.0
    earliest: float = 0.0
    frequency: float = 1.0
    phase: float = 0.0
    delay: float = 0.0

    @classmethod
    def make(cls, closes: bool, source: str, angle: float, earliest: float, frequency: float,
             phase: float, delay: float) -> "AngleSchedule":
        """The schedule with its one change placed at the angle's instant."""
        proto = cls(not closes, (), source, float(angle), float(earliest), float(frequency), float(phase),
                    float(delay))
        return cls(not closes, ((float(proto.instants(angle)), closes),), source, float(angle),
                   float(earliest), float(frequency), float(phase), float(delay))

    def instants(self, angle):
        """Instants (s, same shape as ``angle`` in rad) of the first moment at or after
        ``max(earliest, delay)`` where the source's phase equals each angle."""
        import numpy as np

        period = 1.0 / self.frequency
        start = max(self.earliest, self.delay)
        # phase at `start`, and how far (in turns) each angle lies ahead of it
        now = 2.0 * np.pi * self.frequency * (start - self.delay) + self.phase
        ahead = np.mod((np.asarray(angle, dtype=float) - now) / (2.0 * np.pi), 1.0)
        ahead = np.where(ahead > 1.0 - 1e-12, 0.0, ahead)  # an angle met at `start` itself
        return start + ahead * period

    def with_angle(self, angle: float) -> "AngleSchedule":
        """The same schedule at another angle (rad)."""
        return AngleSchedule.make(self.changes[0][1], self.source, angle, self.earliest, self.frequency,
                                  self.phase, self.delay)


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

