"""Diode states during a run: events that end a conduction or start one, and the one
consistent configuration at an instant.

An ideal diode (:class:`~circuitode.model.elements.Diode`) is a switch that moves on
its own: blocking, it turns on when its voltage rises through its drop; conducting,
it turns off when its current falls through zero.  Both are
:class:`~circuitode.solvers.LinearEvent` on rows of the configuration's ``C``,
``D`` (the voltage across and the current through each diode are always
assembled), located like threshold events.

At an instant (the start, a scheduled switch change, a source corner, an
event) :func:`Commutation.settle` looks for the configuration in which every
conducting diode has current ≥ 0 and every blocking one voltage ≤ its drop, and
which the state may enter (no inductor current cut, see
:mod:`circuitode.equations.entry`).  A quantity within the band
``DIODE_TIE × scale`` of its limit (scale = the largest state or input
magnitude, at least 1) is a tie, decided by its slope: a conducting diode whose
current is 0 stays on unless it falls, a blocking one whose voltage sits at the
drop stays off unless it rises.  (An event is detected past the band but located at
the limit itself — the current's zero, the voltage's drop — by the exact method.)
A conducting diode whose current is 0 and does
not change is *idle*: in series with a blocking one its current is structurally
0 (the first diode of a bridge to turn on, which anchors the floating DC side).  Events fire ``DIODE_BAND × scale`` past the limit, which keeps rounding
noise on a current that is structurally zero (a diode in series with a
blocking one) from firing.

Search: keep the present configuration when it is consistent; otherwise
enumerate every combination of the diodes that are inconsistent (then, if none
fits, of all diodes, up to :data:`MAX_ENUMERATED`) and take the consistent one
with the fewest idle diodes, then the fewest changes.  Candidates equally ranked
that give every diode the same current differ only in which idle diode anchors
a floating part (the two diodes of a bridge arm that stop together): they are
equivalent and the first in file order is kept.  No consistent configuration,
or several that differ in a current, is refused with the diodes and the
instant named.

Chattering: more than :data:`CHATTER_EVENTS` diode events within
:data:`CHATTER_WINDOW` of the window stop the run, naming the diode and the
instant, instead of crawling.
"""
from __future__ import annotations

import itertools
from collections import Counter, deque

import numpy as np

from ..equations.entry import enter, entry_violations
from ..errors import CircuitodeError, IntegrationError
from ..model import Circuit, CurrentThrough, Diode, VoltageAcross
from ..solvers import LinearEvent

__all__ = ["DIODE_BAND", "DIODE_TIE", "CHATTER_EVENTS", "CHATTER_WINDOW", "MAX_ENUMERATED", "Commutation", "diode_probes"]

#: Relative band beyond a diode's limits (drop, zero current) at which its events fire.
DIODE_BAND = 1e-11
#: Relative band around a diode's limits inside which the settling search calls it a tie
#: and decides by the slope; wider than the event band and than the error of a located
#: instant (slope × located time), so an event always lands inside it.
DIODE_TIE = 1e-7
#: More diode events than this within CHATTER_WINDOW × the window is chattering.
CHATTER_EVENTS = 40
CHATTER_WINDOW = 1e-9
#: At most this many diodes are enumerated together (2^MAX_ENUMERATED configurations).
MAX_ENUMERATED = 10


def diode_probes(circuit: Circuit) -> list:
    """The voltage across and the current through every diode (rows the events watch)."""
    return [p for d in circuit.diodes for p in (VoltageAcross(d.name), CurrentThrough(d.name))]


class Commutation:
    """Diode bookkeeping of one run.

    circuit : the circuit.  cache : its StateSpaceCache (rows include :func:`diode_probes`).
    bank : its SourceBank.  until : s, end of the window.
    """

    def __init__(self, circuit: Circuit, cache, bank, until: float):
        self.circuit, self.cache, self.bank, self.until = circuit, cache, bank, until
        self.index = [k for k, s in enumerate(circuit.switches) if isinstance(s, Diode)]
        self.recent: deque = deque()
        self.fired = False  # a diode event ended the last segment
        self.idle_diodes: set[int] = set()  # conducting with no current, in the last configuration judged

    @property
    def active(self) -> bool:
        return bool(self.index)

    def inputs_around(self, t: float) -> tuple[np.ndarray, np.ndarray]:
        """Inputs just before and just after instant t (m,) each."""
        if not self.bank.m:
            return np.zeros(0), np.zeros(0)
        eps = 64 * np.finfo(float).eps * self.until  # past the sources' corner snapping
        u = self.bank.values(np.array([max(t - eps, -np.finfo(float).tiny), t + eps]))
        return u[0], u[1]

    # quantities ---------------------------------------------------------
    def _inputs(self, t: float) -> tuple[np.ndarray, np.ndarray]:
        """u just after t and du/dt (finite difference over 1e-9 of the window)."""
        if not self.bank.m:
            return np.zeros(0), np.zeros(0)
        eps = 64 * np.finfo(float).eps * self.until
        h = 1e-9 * self.until
        u = self.bank.values(np.array([t + eps, t + eps + h]))
        return u[0], (u[1] - u[0]) / h

    @staticmethod
    def _band(x: np.ndarray, u: np.ndarray) -> float:
        return DIODE_BAND * max(1.0, float(np.max(np.abs(x), initial=0.0)), float(np.max(np.abs(u), initial=0.0)))

    def _rows(self, ss, name: str) -> tuple[int, int]:
        labels = ss.output_labels
        return labels.index(VoltageAcross(name).label), labels.index(CurrentThrough(name).label)

    def events(self, ss, closed, x, u) -> list[tuple[int, LinearEvent]]:
        """(switch index, event) per diode: its current falling through 0 while it
        conducts, its voltage rising through its drop while it blocks (with the band)."""
        band = self._band(x, u)
        out = []
        for k in self.index:
            d = self.circuit.switches[k]
            v_row, i_row = self._rows(ss, d.name)
            if closed[k]:
                out.append((k, LinearEvent(ss.C[i_row], ss.D[i_row], -band, rising=False, located_at=0.0)))
            else:
                out.append((k, LinearEvent(ss.C[v_row], ss.D[v_row], d.drop + band, rising=True,
                                           located_at=float(d.drop))))
        return out

    # consistency ----------------------------------------------------------
    def _failing(self, closed, x, u, udot, band) -> list[int] | None:
        """Diodes inconsistent in configuration ``closed`` (None: it cannot be entered)."""
        try:
            ss = self.cache.get(closed)
        except CircuitodeError:
            return None
        if ss.basis is not None and entry_violations(self.circuit, ss, x, atol=4 * band)[0]:
            return None
        y = ss.C @ x + (ss.D @ u if u.size else 0.0)
        rate = ss.A @ x + (ss.B @ u if u.size else 0.0)
        ydot = ss.C @ rate + (ss.D @ udot if u.size else 0.0)
        tie = band * DIODE_TIE / DIODE_BAND
        failing, idle = [], 0
        self.idle_diodes = set()
        rows = [self._rows(ss, self.circuit.switches[k].name) for k in self.index]
        slope_tol = 1e-9 * max(1.0, float(np.max(np.abs(ydot[[r for pair in rows for r in pair]]), initial=0.0)))
        for k, (v_row, i_row) in zip(self.index, rows):
            d = self.circuit.switches[k]
            if closed[k]:  # i ≥ 0, and not falling at i = 0
                g, slope = y[i_row], ydot[i_row]
                if abs(g) < tie and abs(slope) <= slope_tol:
                    idle += 1
                    self.idle_diodes.add(k)
            else:  # drop − v ≥ 0, and v not rising at v = drop
                g, slope = d.drop - y[v_row], -ydot[v_row]
            if g <= -tie or (abs(g) < tie and slope < -slope_tol):
                failing.append(k)
        self.idle = idle
        self.currents = np.array([y[i_row] for _, i_row in rows])
        return failing

    def settle(self, t: float, x: np.ndarray, closed: tuple[bool, ...]) -> tuple[tuple[bool, ...], list[int]]:
        """The consistent configuration at instant t from ``closed``; returns it and the
        switch indices of the diodes that changed.

        Raises
        ------
        CircuitodeError : no consistent configuration, or several equally near.
        """
        if not self.active:
            return closed, []
        u, udot = self._inputs(t)
        band = self._band(x, u)
        failing = self._failing(closed, x, u, udot, band)
        if failing == []:
            return closed, []
        groups = [failing] if failing else []
        if len(self.index) <= MAX_ENUMERATED and sorted(failing or []) != self.index:
            groups.append(self.index)
        fits: list[tuple[tuple[bool, ...], int, np.ndarray]] = []
        for group in groups:
            if len(group) > MAX_ENUMERATED:
                continue
            for flips in itertools.product((False, True), repeat=len(group)):
                trial = list(closed)
                for k, flip in zip(group, flips):
                    trial[k] = closed[k] != flip
                trial = tuple(trial)
                if trial != closed and trial not in [f[0] for f in fits] and \
                        self._failing(trial, x, u, udot, band) == []:
                    fits.append((trial, self.idle, self.currents))
            if fits:
                break
        when = f"at t = {_seconds(t)}"
        names = lambda conf: [self.circuit.switches[k].name for k in self.index if conf[k] != closed[k]]
        if not fits:
            raise CircuitodeError(
                f"{when} no combination of diode states is consistent (every conducting diode with "
                f"current ≥ 0, every blocking one with voltage ≤ its drop); diodes concerned: "
                f"{', '.join(self.circuit.switches[k].name for k in (failing or self.index))}. "
                "Check for diodes in anti-parallel with no resistance, or give them an on-resistance")
        rank = lambda fit: (fit[1], len(names(fit[0])))  # fewest idle conducting diodes, then changes
        best = min(rank(f) for f in fits)
        tied = [f for f in fits if rank(f) == best]
        nearest = [f[0] for f in tied]
        if len(nearest) > 1 and all(np.allclose(f[2], tied[0][2], rtol=0, atol=band) for f in tied):
            # they differ only in which idle diode anchors a part that blocking diodes cut
            # off (every diode current the same): equivalent, keep the first in file order
            nearest = nearest[:1]
        if len(nearest) > 1:
            options = "; ".join("changing " + ", ".join(names(c)) for c in nearest)
            raise CircuitodeError(
                f"{when} several combinations of diode states are consistent ({options}), so the "
                "ideal model cannot decide; give the diodes distinct drops or on-resistances")
        chosen = nearest[0]
        self._failing(chosen, x, u, udot, band)  # note its idle diodes for the event words
        return chosen, [k for k in self.index if chosen[k] != closed[k]]

    def step_in(self, run, t: float, x: np.ndarray, closed: tuple[bool, ...], acted) -> tuple:
        """At instant t: apply the scheduled changes ``acted`` [(switch index, state, reason)],
        settle the diodes, record one pair of rows with every event (``run.switch``) and put
        the state on the new configuration's constraint.  Returns (closed, x)."""
        if not self.active:  # one pair of rows per switch, as before diodes existed
            for k, state, why in acted:
                u_b, u_a = self.inputs_around(t)
                closed = run.switch(t, x, u_b, u_a, closed, k, state, why)
            if acted:
                x = enter(self.circuit, self.cache.get(closed), x, t, " and ".join(
                    why if why.startswith(f"{self.circuit.switches[k].name} {'closes' if st else 'opens'} ")
                    else f"{self.circuit.switches[k].name} {'closes' if st else 'opens'} ({why})"
                    for k, st, why in acted))
            return closed, x
        trial = list(closed)
        for k, state, _ in acted:
            trial[k] = state
        new, changed = self.settle(t, x, tuple(trial))
        if changed or self.fired:
            self.note(t, changed)
        self.fired = False
        changes = list(acted) + [(k, new[k], reason(self.circuit, k, new[k], k in self.idle_diodes))
                                 for k in changed]
        if not changes:
            return closed, x
        u_b, u_a = self.inputs_around(t)
        closed = run.switch(t, x, u_b, u_a, closed, *changes[0], more=changes[1:])
        band = self._band(x, u_a)
        x = enter(self.circuit, self.cache.get(closed), x, t, "; ".join(c[2] for c in changes),
                  atol=band * DIODE_TIE / DIODE_BAND)
        return closed, x

    def note(self, t: float, changed: list[int]) -> None:
        """Count diode events; stop a chattering run with the diode and the instant."""
        window = CHATTER_WINDOW * self.until
        for k in changed or [None]:
            self.recent.append((t, k))
        while self.recent and self.recent[0][0] < t - window:
            self.recent.popleft()
        if len(self.recent) > CHATTER_EVENTS:
            worst = Counter(k for _, k in self.recent if k is not None).most_common(1)
            name = self.circuit.switches[worst[0][0]].name if worst else "a diode"
            raise IntegrationError(
                f"diode {name} chatters at t = {_seconds(t)}: {len(self.recent)} diode events within "
                f"{_seconds(window)}; the ideal model switches back and forth there. Give the diode "
                "an on-resistance or an off-resistance, or add a small snubber across it")


def reason(circuit: Circuit, k: int, conducting: bool, idle: bool = False) -> str:
    """Words for a diode event."""
    d = circuit.switches[k]
    if conducting and idle:
        return f"{d.name} starts conducting, no current yet (the other diodes block its path)"
    if conducting:
        return f"{d.name} starts conducting (forward voltage reached {_volts(d.drop)})"
    return f"{d.name} stops conducting (current fell to 0 A)"


def _seconds(t: float) -> str:
    from ..quantities import format_si

    return format_si(t, "s")


def _volts(v: float) -> str:
    from ..quantities import format_si

    return format_si(v, "V")
