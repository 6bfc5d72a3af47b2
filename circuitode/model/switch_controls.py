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

__all__ = ["TimedSchedule", "PeriodicSchedule", "ThresholdRule", "HysteresisRule", "DiodeRule"]


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

