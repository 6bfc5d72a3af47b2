"""Switch configurations a run can reach, in order of first occurrence.

One job: turn the switches' schedules and threshold rules into the list of
switch-state assignments (:class:`Configuration`) that a run over the analysis
window may meet, with when and why each first occurs.  Timed and periodic
switches are followed through time; threshold switches (and switches whose
schedule is invalid) may be in either state.  The enumeration is capped at
``MAX_CONFIGURATIONS``; :func:`enumerate_configurations` also says what a cap
left out.  The topology checks, the mode analysis and the transient runner all
work per configuration from this list.
"""
from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from typing import Sequence

from ..quantities import format_si
from .circuit import Circuit
from .elements import Switch
from .switch_controls import DiodeRule, PeriodicSchedule, ThresholdRule, TimedSchedule

__all__ = [
    "Configuration",
    "MAX_CONFIGURATIONS",
    "PERIODS_FOLLOWED",
    "SIMULTANEOUS",
    "enumerate_configurations",
    "reachable_configurations",
]

#: Most switch configurations enumerated; beyond it the checks cover a subset (with a warning).
MAX_CONFIGURATIONS = 4096
#: Periodic switches are followed for this many of their longest period after the last timed change.
PERIODS_FOLLOWED = 64


@dataclass(frozen=True)
class Configuration:
    """One reachable assignment of switch states.

    closed : one bool per switch, in ``circuit.switches`` order, True = closed.
    first_time : s, when the run first reaches it; 0 for the start, nan when it
        depends on a threshold switch acting.
    cause : what brings it about, e.g. ``"K_main closes when voltage at link > 43 V"``.
    """

    closed: tuple[bool, ...]
    first_time: float
    cause: str

    def when(self) -> str:
        """Words for when this configuration occurs, to append to a message."""
        if math.isnan(self.first_time):
            return f"if {self.cause}"
        if self.first_time == 0.0 and self.cause == "initial state":
            return "from the start"
        return f"from t = {_seconds(self.first_time)} ({self.cause})"


# The three wording helpers below also word the topology checks' messages.


def _si(value: float, unit: str) -> str:
    """SI value with a prefix, printed by the one module that prints quantities."""
    return format_si(value, unit)


def _seconds(t: float) -> str:
    """A time in s, with an SI prefix."""
    return _si(t, "s")


def _list(words: Sequence[str]) -> str:
    """Words joined as in a sentence: "a", "a and b", "a, b and c"; "nothing" for none."""
    words = list(words)
    if not words:
        return "nothing"
    return words[0] if len(words) == 1 else ", ".join(words[:-1]) + " and " + words[-1]


def _is_free(switch: Switch) -> bool:
    """True when the switch may be in either state at an unknown time (threshold or broken schedule)."""
    c = switch.control
    if isinstance(c, (ThresholdRule, DiodeRule)):
        return True
    if isinstance(c, PeriodicSchedule):
        return not (math.isfinite(c.period) and c.period > 0 and 0 < c.duty < 1 and math.isfinite(c.start))
    return not all(math.isfinite(t) for t, _ in c.changes)


def _threshold_words(switch: Switch, closes: bool) -> str:
    c = switch.control
    verb = "closes" if closes else "opens"
    if isinstance(c, DiodeRule):
        return f"{switch.name} {'conducts' if closes else 'blocks'}"
    if isinstance(c, ThresholdRule):
        label = getattr(c.probe, "label", str(c.probe))
        unit = getattr(c.probe, "unit", "")
        return f"{switch.name} {verb} when {label} {'>' if c.above else '<'} {_si(c.level, unit)}"
    return f"{switch.name} {verb} (its schedule is invalid, so either state is assumed)"


def _horizon(circuit: Circuit, until: float | None, switches: Sequence[Switch]) -> float:
    if until is None and circuit.analysis is not None:
        until = circuit.analysis.until
    horizon = math.inf if until is None or not math.isfinite(until) else float(until)
    periodic = [s.control for s in switches if isinstance(s.control, PeriodicSchedule) and not _is_free(s)]
    if periodic:
        timed = [t for s in switches if isinstance(s.control, TimedSchedule) and not _is_free(s) for t, _ in s.control.changes]
        last = max([0.0, *(t for t in timed if t < horizon), *(p.start for p in periodic)])
        horizon = min(horizon, last + PERIODS_FOLLOWED * max(p.period for p in periodic))
    return horizon


#: Switching instants closer than this (relative) count as one instant: 1 ms + 9 × 1 ms
#: computed in floating point must meet a change written at 10 ms.
SIMULTANEOUS = 1e-12


def _simultaneous(events: list[tuple[float, int, bool]]) -> list[list[tuple[float, int, bool]]]:
    """Sorted events grouped into instants, joining times equal to a relative ``SIMULTANEOUS``."""
    groups: list[list[tuple[float, int, bool]]] = []
    for e in events:
        if groups and math.isclose(e[0], groups[-1][0][0], rel_tol=SIMULTANEOUS, abs_tol=0.0):
            groups[-1].append(e)
        else:
            groups.append([e])
    return groups


def enumerate_configurations(circuit: Circuit, until: float | None = None) -> tuple[list[Configuration], list[str]]:
    """:func:`reachable_configurations`, plus a note for each cap applied.

    Returns
    -------
    configurations : list of Configuration, in order of first occurrence.
    notes : list of str, one sentence per cap that left configurations out; empty when none did.
    """
    switches = circuit.switches
    notes: list[str] = []
    state = [s.initially_closed for s in switches]
    scheduled = [Configuration(tuple(state), 0.0, "initial state")]
    seen = {tuple(state)}
    horizon = _horizon(circuit, until, switches)
    events = sorted(
        (t, i, closed)
        for i, s in enumerate(switches)
        if not _is_free(s)
        for t, closed in s.scheduled_changes(-math.ulp(0.0), horizon)
    )
    for group in _simultaneous(events):
        t = group[0][0]
        words = []
        for _, i, closed in group:
            if state[i] != closed:
                state[i] = closed
                words.append(f"{switches[i].name} {'closes' if closed else 'opens'} at {_seconds(t)}")
        key = tuple(state)
        if words and key not in seen:
            seen.add(key)
            scheduled.append(Configuration(key, float(t), _list(words)))

    free = [i for i, s in enumerate(switches) if _is_free(s)]
    if 2 ** len(free) <= MAX_CONFIGURATIONS:
        flips = [c for r in range(len(free) + 1) for c in itertools.combinations(free, r)]
    else:
        flips = [()] + [(i,) for i in free] + [tuple(free)]
        notes.append(
            f"{len(free)} threshold-controlled switches give {2 ** len(free)} combinations; "
            f"only each one acting alone and all acting together were checked"
        )
    out: list[Configuration] = []
    seen = set()
    for flip in flips:
        for base in scheduled:
            closed = list(base.closed)
            for i in flip:
                closed[i] = not switches[i].initially_closed
            key = tuple(closed)
            if key in seen:
                continue
            if len(out) == MAX_CONFIGURATIONS:
                notes.append(f"only the first {MAX_CONFIGURATIONS} switch configurations were checked")
                return out, notes
            seen.add(key)
            if flip:
                words = [_threshold_words(switches[i], closed[i]) for i in flip]
                if base.cause != "initial state":
                    words.insert(0, base.cause)
                words = _list(words)
                out.append(Configuration(key, math.nan, words))
            else:
                out.append(base)
    return out, notes


def reachable_configurations(circuit: Circuit, until: float | None = None) -> list[Configuration]:
    """Every switch configuration the run can reach, in order of first occurrence.

    Timed and periodic switches follow their schedules over [0, until]
    (``until`` defaults to the circuit's analysis window, else no end);
    periodic switches are followed for at most ``PERIODS_FOLLOWED`` of the longest
    period after the last timed change.  Threshold switches (and switches whose
    schedule is invalid) may be in either state, combined with every scheduled
    configuration; with more than 12 of them only each acting alone and all
    together are taken.  At most ``MAX_CONFIGURATIONS`` are returned.

    Parameters
    ----------
    circuit : the built circuit.
    until : end of the run, s, or None.

    Returns
    -------
    list of Configuration; the first is the state at t = 0.

    Examples
    --------
    >>> from circuitode.model import Circuit, Resistor, Switch, TimedSchedule
    >>> k = Switch("K", "a", "b", TimedSchedule(False, ((1e-3, True),)))
    >>> c = Circuit("demo", "b", (Resistor("R", "a", "b", 1.0), k))
    >>> [(x.closed, x.first_time) for x in reachable_configurations(c)]
    [((False,), 0.0), ((True,), 0.001)]
    """
    return enumerate_configurations(circuit, until)[0]
