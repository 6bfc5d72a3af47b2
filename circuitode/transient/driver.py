"""The transient driver: segments, switching events and recorded waveforms.

``simulate(circuit)`` splits ``[0, until]`` at every scheduled switch change and
every source breakpoint.  Inside a segment the switch configuration is fixed
and the circuit is ``x' = A x + B u``, which an integrator from
:mod:`circuitode.solvers` steps.  A threshold switch is a
:class:`~circuitode.solvers.LinearEvent` on the watched probe's row of
``C``, ``D``; when it fires the segment ends there, the switch changes (once)
and the run restarts with the states carried over — capacitor voltages and
inductor currents are continuous across every switching instant.

At each switching instant and source breakpoint two rows share the same time:
the values just before and just after, so jumps of currents stay sharp.
Diodes: :mod:`circuitode.transient.commutation`.
"""
from __future__ import annotations

import csv
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from ..model import (AngleSchedule, Circuit, CurrentThrough, NodeVoltage, PeriodicSchedule,
                      PowerIn, Switch, ThresholdRule, VoltageAcross)
from ..model.configurations import reachable_configurations
from ..errors import CircuitodeError, NoSteadyStateError
from ..model.switch_controls import AngleSchedule
from ..quantities import format_value
from ..notebook import WaveformsView
from ..solvers import (LinearEvent, LinearSegment, check_rk4_step, choose_method, get_integrator)
from ..solvers.explicit_guard import check_explicit_work
from ..model import SourceBank
from ..equations.statespace import StateSpaceCache, describe_configuration, initial_state
from ..equations.entry import enter
from .commutation import Commutation, diode_probes
from ..checks.dc import explain_singular_dc
from ..checks.topology import verify
from .carried import carried_by_run
from .settings import DEFAULT_POINTS, _number, _output_grid, _settings, _Settings
from .window_integrals import IntegralTally, window_marks
from ..model.run_settings import check_windows

__all__ = ["Event", "Waveforms", "simulate", "DEFAULT_POINTS", "EVENT_TOL_FRACTION", "recorded_probes"]

#: Threshold instants are located to this fraction of the window (or better).
EVENT_TOL_FRACTION = 1e-12


@dataclass(frozen=True)
class Event:
    """A switch changing state at ``time`` (s); ``reason`` says why (schedule or threshold)."""

    time: float
    switch: str
    closed: bool
    reason: str


@dataclass(frozen=True, eq=False, repr=False)  # repr and to_frame: notebook.WaveformsView
class Waveforms(WaveformsView):
    """Everything a transient run recorded.

    t : (nt,) s, nondecreasing; a switching instant appears twice (before, after).
    signals : label → (nt,) array in ``units[label]``.
    probes : label → the Probe it came from.
    states : (nt, n) capacitor voltages (V) and inductor currents (A),
    named by ``state_names`` with ``state_units``.
    events : switch changes in time order.
    method, method_reason : the integrator used and why.
    counters : work done, summed over segments ("segments", "steps",
    "rhs_evaluations", "expm_calls", …).
    configurations : switch-state tuples used, in order of first use.
    warnings : topology warnings (diagnostics of severity "warning"), as text.
    integrals, extrema, between, fastest_seen_rate, segment_integrals : what the run carries
    beyond its rows (window integrals, located extrema, values between rows, fastest mode
    seen, the integrals per segment for figures over part of the run;
    :mod:`circuitode.transient.carried`).
    """

    t: np.ndarray
    signals: dict[str, np.ndarray]
    units: dict[str, str]
    probes: dict[str, object]
    states: np.ndarray
    state_names: tuple[str, ...]
    state_units: tuple[str, ...]
    events: tuple[Event, ...]
    method: str
    method_reason: str
    counters: dict[str, int]
    configurations: tuple[tuple[bool, ...], ...]
    warnings: tuple[str, ...] = field(default=())
    integrals: dict[str, tuple[float, float]] = field(default_factory=dict)
    extrema: dict[str, object] = field(default_factory=dict)
    fastest_seen_rate: float = 0.0
    between: object = None
    segment_integrals: object = None

    def __getitem__(self, label: str) -> np.ndarray:
        if label in self.signals:
            return self.signals[label]
        if label in self.state_names:
            return self.states[:, self.state_names.index(label)]
        known = ", ".join(self.signals) or "none"
        raise CircuitodeError(f"nothing recorded as {label!r}; recorded: {known}")

    @property
    def labels(self) -> tuple[str, ...]:
        return tuple(self.signals)

    def to_csv(self, path) -> None:
        """Write ``time [s]`` and every signal as plain CSV; the header carries the units."""
        header = ["time [s]"] + [f"{label} [{self.units[label]}]" for label in self.signals]
        data = np.column_stack([self.t] + [self.signals[label] for label in self.signals])
        with open(path, "w", newline="", encoding="utf-8") as handle:
            csv.writer(handle).writerow(header)
            np.savetxt(handle, data, delimiter=",", fmt="%.12g")


# --------------------------------------------------------------------------
# Probes
# --------------------------------------------------------------------------


def recorded_probes(circuit: Circuit, probes: Sequence | None = None) -> list:
    """What a run records: ``probes`` (default ``circuit.records``; when both are empty,
    every node voltage and the current through every element), then every probe a
    requirement or a threshold switch uses; duplicates (same label) dropped."""
    chosen = list(probes) if probes is not None else list(circuit.records)
    if not chosen:
        chosen = [NodeVoltage(n) for n in circuit.nodes if n != circuit.ground]
        chosen += [CurrentThrough(e.name) for e in circuit.elements]
    chosen += [r.probe for r in circuit.requirements]
    chosen += [s.control.probe for s in circuit.switches if isinstance(s.control, ThresholdRule)]
    unique: dict[str, object] = {}
    for p in chosen:
        unique.setdefault(p.label, p)
    return list(unique.values())


def _linear_probes(probes: Sequence) -> list:
    """The linear probes to assemble: each probe, PowerIn replaced by its v and i."""
    out: dict[str, object] = {}
    for p in probes:
        parts = (VoltageAcross(p.element), CurrentThrough(p.element)) if isinstance(p, PowerIn) else (p,)
        for q in parts:
            out.setdefault(q.label, q)
    return list(out.values())


# --------------------------------------------------------------------------
# Timeline
# --------------------------------------------------------------------------


def _schedule(circuit: Circuit, until: float) -> list[tuple[float, int, bool]]:
    """Scheduled switch changes (time s, switch index, closed after) in [0, until), by time."""
    changes = []
    for k, sw in enumerate(circuit.switches):
        for time, closed in sw.scheduled_changes(-np.finfo(float).tiny, until):
            changes.append((max(float(time), 0.0), k, bool(closed)))
    return sorted(changes, key=lambda c: (c[0], c[1]))


def _configurations_to_check(circuit: Circuit, until: float) -> list[tuple[bool, ...]]:
    """Every switch configuration the run may reach (see :mod:`circuitode.model.configurations`)."""
    return [tuple(c.closed) for c in reachable_configurations(circuit, until)]


def _verify(circuit: Circuit, until: float) -> tuple[str, ...]:
    """Run the topology checks (raising on errors); return the warnings as text."""
    return tuple(str(d) for d in verify(circuit, until) if d.severity != "error")


def _initial_state(circuit: Circuit, mode: str, ss0, u_before) -> np.ndarray:
    """:func:`~circuitode.equations.statespace.initial_state`, a refused DC steady state
    worded by the checks (the loops and cut sets at fault, by element)."""
    try:
        return initial_state(circuit, mode, ss0, u_before)
    except NoSteadyStateError as exc:
        raise exc.explained(explain_singular_dc(circuit, exc.closed)) from None


def _eigenvalue_sets(cache: StateSpaceCache, configurations) -> list[tuple[tuple[bool, ...], np.ndarray]]:
    """Eigenvalues of A per configuration; configurations that cannot be assembled are
    left out (they raise, with their own words, if the run ever reaches them), except
    the first (the start), whose error is raised at once."""
    out = []
    for j, conf in enumerate(configurations):
        try:
            ss = cache.get(conf)
        except CircuitodeError:
            if j == 0:
                raise
            continue
        out.append((conf, np.linalg.eigvals(ss.A_free) if ss.n_free else np.zeros(0, dtype=complex)))
    return out


# --------------------------------------------------------------------------
# The driver
# --------------------------------------------------------------------------


def _threshold_reason(sw: Switch, closed: bool) -> str:
    rule = sw.control.move(closed)
    verb = "closes" if rule.closes else "opens"
    return (f"{sw.name} {verb} when {rule.probe.label} {'>' if rule.above else '<'} "
            f"{rule.level:g} {rule.probe.unit}")


def _schedule_reason(sw: Switch) -> str:
    """Why a scheduled switch moved: its schedule, or the angle of the sine it closes on."""
    control = sw.control
    if isinstance(control, AngleSchedule):  # in the language's words: "closes on angle 90 deg of Vmains"
        verb = "closes" if control.changes[0][1] else "opens"
        return f"{sw.name} {verb} on angle {format_value(control.angle, 'rad')} of {control.source}"
    kind = "periodic" if isinstance(control, PeriodicSchedule) else "timed"
    return f"{sw.name} follows its {kind} schedule"


def _pick_integrator(circuit, cache, s: _Settings, start, schedule, n, rtol, atol, insist=False):
    """(integrator, name, reason); for rk4 the step, for rk45/dop853 the least step count
    (unless ``insist``), is first checked against every configuration the run may reach."""
    rk4_step = s.step if s.step is not None else s.until / (s.points - 1)
    if n == 0:
        name, reason = "exact", "exact: the circuit stores no energy (no capacitor or inductor)"
    elif s.method == "auto":
        confs = list(dict.fromkeys([start, *_configurations_to_check(circuit, s.until)]))
        eigenvalues = [e for _, e in _eigenvalue_sets(cache, confs)]
        name, reason = choose_method(eigenvalues, True, s.step)
    else:
        name, reason = s.method, f"{s.method}: chosen by the user"
    integrator = get_integrator(name, step=rk4_step if name == "rk4" else None, rtol=rtol,
                                atol=atol, event_tol=EVENT_TOL_FRACTION * s.until)
    if integrator.fixed_step and n:
        confs = list(dict.fromkeys([start, *_configurations_to_check(circuit, s.until)]))
        for conf, eig in _eigenvalue_sets(cache, confs):
            check_rk4_step(eig, integrator.step, where=describe_configuration(circuit, conf))
    if integrator.adaptive and not integrator.stiff and n and not insist and s.method != "auto":
        confs = list(dict.fromkeys([start, *_configurations_to_check(circuit, s.until)]))
        for conf, eig in _eigenvalue_sets(cache, confs):
            check_explicit_work(name, eig, s.until, where=describe_configuration(circuit, conf))
    return integrator, name, reason


def simulate(circuit: Circuit, *, method: str | None = None, step: float | None = None,
             until: float | None = None, points: int | None = None, initial: str | None = None,
             rtol: float = 1e-6, atol: float = 1e-9, probes: Sequence | None = None,
             insist: bool = False) -> Waveforms:
    """Simulate the transient of ``circuit`` from t = 0 to ``until``.

    Parameters
    ----------
    circuit : a built Circuit.  Keyword arguments override ``circuit.analysis``.
    method : "auto", "exact", "rk4", "rk45", "dop853", "radau" or "bdf".
    step : s, output step (and the fixed step of rk4).  Without it, ``points``
        evenly spaced outputs (default 2001); rk4 then steps at that spacing.
    until : s, end of the window.
    initial : "rest", "given" or "steady" (DC state of the configuration at t = 0⁻).
    rtol, atol : error tolerances of the adaptive and implicit methods.
    probes : what to record instead of ``circuit.records`` (requirement and
        threshold probes are always added).
    insist : run rk45 or dop853 even when a stiff circuit makes them hopeless.

    Returns
    -------
    Waveforms

    Raises
    ------
    CircuitodeError (exit code 2) for bad settings, TopologyError for a circuit
    that cannot be simulated, UnstableStepError (exit code 3) for an rk4 step
    outside the stability region of any reachable configuration, or an rk45/dop853
    run a stiff circuit makes hopeless (see :mod:`circuitode.solvers.explicit_guard`).

    Examples
    --------
    >>> from circuitode.model import Capacitor, Circuit, NodeVoltage, Resistor, VoltageSource
    >>> from circuitode.model import Dc
    >>> rc = Circuit("rc", "gnd", (VoltageSource("V1", "in", "gnd", Dc(10.0)),
    ...                            Resistor("R1", "in", "out", 1e3),
    ...                            Capacitor("C1", "out", "gnd", 1e-6)),
    ...              records=(NodeVoltage("out"),))
    >>> w = simulate(rc, until=1e-3, points=11, initial="rest")
    >>> round(float(w["voltage at out"][-1]), 4)     # 10 V (1 − 1/e) after one RC
    6.3212
    >>> w.method
    'exact'
    """
    s = _settings(circuit, method, step, until, points, initial)
    rtol, atol = _number(rtol, "rtol"), _number(atol, "atol")
    if probes is not None and not all(hasattr(p, "label") and hasattr(p, "unit") for p in probes):
        raise CircuitodeError("probes must be probe objects such as NodeVoltage('out') or "
                              "CurrentThrough('R1'), not text")
    from .sparse_driver import simulate_sparse, sparse_choice  # large circuits: sparse path
    sparse = sparse_choice(circuit, s.method)
    if sparse is not None:
        return simulate_sparse(circuit, s, *sparse, probes=probes, rtol=rtol, atol=atol)
    warnings = _verify(circuit, s.until)
    wanted = recorded_probes(circuit, probes)
    linear = _linear_probes(wanted + diode_probes(circuit))  # diode rows for their events
    row_of = {p.label: j for j, p in enumerate(linear)}
    for sw in circuit.switches:
        if isinstance(sw.control, ThresholdRule) and isinstance(sw.control.probe, PowerIn):
            raise CircuitodeError(
                f"switch {sw.name} watches {sw.control.probe.label}, which is not linear; "
                "watch a voltage or a current instead")
    cache = StateSpaceCache(circuit, linear)
    bank = SourceBank.of(circuit)
    schedule = _schedule(circuit, s.until)
    start = tuple(sw.initially_closed for sw in circuit.switches)
    grid = _output_grid(s)
    ss0 = cache.get(start)
    n = ss0.n_states

    integrator, name, reason = _pick_integrator(circuit, cache, s, start, schedule, n, rtol, atol, insist)

    # -- initial state ---------------------------------------------------
    u_before = bank.values(np.array([-np.finfo(float).tiny]))[0] if bank.m else np.zeros(0)
    x = np.asarray(_initial_state(circuit, s.initial, ss0, u_before), dtype=float)
    x = enter(circuit, ss0, x, 0.0, f"the {s.initial} initial state {describe_configuration(circuit, start)}")

    check_windows(circuit.requirements, s.until)
    run = _Run(circuit, cache, bank, grid, s.until, integrator)
    run.tally = IntegralTally(wanted, row_of)
    run.diodes = Commutation(circuit, cache, bank, s.until)
    run.go(x, start, schedule)
    return run.waveforms(wanted, row_of, name, reason, warnings)


class _Run:
    """One run's mutable bookkeeping: recorded rows, events, counters."""

    def __init__(self, circuit, cache, bank, grid, until, integrator):
        self.circuit, self.cache, self.bank = circuit, cache, bank
        self.grid, self.until, self.integrator = grid, until, integrator
        self.chunks: list[tuple[np.ndarray, np.ndarray, np.ndarray, tuple[bool, ...]]] = []
        self.events: list[Event] = []
        self.counters: dict[str, int] = {"segments": 0}
        self.used: dict[tuple[bool, ...], None] = {}
        self.next_grid = 0  # index of the first grid time not yet recorded
        self.slack = 1e-12 * until
        self.marks = window_marks(circuit.requirements, until)

    # rows ---------------------------------------------------------------
    def record(self, t, x, u, closed):
        t = np.atleast_1d(np.asarray(t, dtype=float))
        if t.size:
            self.chunks.append((t, np.atleast_2d(x), np.atleast_2d(u), closed))

    def switch(self, t, x, u_before, u_after, closed, k, state, reason, more=()):
        """Record the rows just before and after a switch changes (with ``more`` changes
        (k, state, reason) at the same instant); return the new states."""
        after = list(closed)
        for j, st, why in ((k, state, reason), *more):
            after[j] = st
            self.events.append(Event(float(t), self.circuit.switches[j].name, st, why))
        after = tuple(after)
        self.record([t], x[None, :], u_before[None, :], closed)
        self.record([t], x[None, :], u_after[None, :], after)
        self.used.setdefault(after, None)
        # a grid time at this instant is covered by the two rows
        while self.next_grid < self.grid.size and self.grid[self.next_grid] <= t + self.slack:
            self.next_grid += 1
        return after

    # loop ---------------------------------------------------------------
    def go(self, x, closed, schedule):
        circuit, until = self.circuit, self.until
        stops = np.unique(np.concatenate([
            self.bank.breakpoints(0.0, until) if self.bank.m else np.zeros(0),
            np.array([c[0] for c in schedule if c[0] > 0], dtype=float), self.marks, [until]]))
        pending = [k for k, sw in enumerate(circuit.switches) if isinstance(sw.control, ThresholdRule)]
        self.corners = self.bank.breakpoints(0.0, until) if self.bank.m else np.zeros(0)
        queue = list(schedule)
        t = 0.0
        while True:
            # scheduled changes due now (all of one instant before the entry check)
            acted = []
            while queue and queue[0][0] <= t + self.slack:
                _, k, state = queue.pop(0)
                if closed[k] != state:
                    acted.append((k, state, _schedule_reason(circuit.switches[k])))
            closed, x = self.diodes.step_in(self, t, x, closed, acted)  # and the diodes settle
            if t >= until - self.slack:
                break
            t_next = float(stops[np.searchsorted(stops, t + self.slack, side="right")])
            ss = self.cache.get(closed)
            self.used.setdefault(closed, None)
            segment = LinearSegment(ss.A, ss.B, self.bank, t, t_next, x)
            u_start = segment.input_values(np.array([t]))
            watch = [(k, self._event(ss, circuit.switches[k], closed[k])) for k in pending]
            watch += self.diodes.events(ss, closed, x, u_start[0]) if self.diodes.active else []
            # a threshold already met at the start acts at once
            fired = [k for k, ev in watch[:len(pending)] if self._strictly_met(ev, x, u_start)]
            if fired:
                closed, x = self._act(t, x, closed, fired[0], pending)
                continue
            last = t_next >= until - self.slack
            upto = np.searchsorted(self.grid, t_next + (self.slack if last else -self.slack),
                                   side="right" if last else "left")
            t_out = self.grid[self.next_grid:upto]
            result = self.integrator.solve(segment, t_out, [ev for _, ev in watch],
                                           integrals=self.tally.request(ss.C, ss.D))
            self.tally.add(result.integrals, t, t_next if result.event_time is None else float(result.event_time))
            self.counters["segments"] += 1
            for key, value in result.counters.items():
                self.counters[key] = self.counters.get(key, 0) + int(value)
            self.record(result.t, result.x, segment.input_values(result.t), closed)
            self.next_grid += result.t.size
            x = np.asarray(result.x_end, dtype=float)
            if result.event_time is None:
                t = t_next
                self.corner(t, x, closed, queue)
                continue
            if result.event_index >= len(pending):  # a diode: settled at the loop's top
                t, self.diodes.fired = float(result.event_time), True
                continue
            t, (closed, x) = float(result.event_time), self._act(
                float(result.event_time), x, closed, pending[result.event_index], pending)

    def corner(self, t, x, closed, queue):
        """Rows just before and after a source breakpoint at ``t`` (s), one row at the end of a
        requirement's window, unless a switch acts then."""
        def near(instants):
            return instants.size and np.min(np.abs(instants - t)) <= self.slack
        if not (near(self.corners) or near(self.marks)) or any(
                c[0] <= t + self.slack and closed[c[1]] != c[2] for c in queue):
            return
        u_b, u_a = self._inputs_around(t)
        if near(self.corners):
            self.record([t, t], np.stack([x, x]), np.stack([u_b, u_a]), closed)
        else:
            self.record([t], x[None, :], self.bank.values(np.array([t])), closed)
        while self.next_grid < self.grid.size and self.grid[self.next_grid] <= t + self.slack:
            self.next_grid += 1

    def _inputs_around(self, t):
        if not self.bank.m:
            return np.zeros(0), np.zeros(0)
        eps = 64 * np.finfo(float).eps * self.until  # past the sources' corner snapping
        u = self.bank.values(np.array([max(t - eps, -np.finfo(float).tiny), t + eps]))
        return u[0], u[1]
    def _act(self, t, x, closed, k, pending):
        """Threshold switch k acts at t (once, or each time for one with hysteresis)."""
        sw = self.circuit.switches[k]
        if not sw.control.repeats:
            pending.remove(k)
        return self.diodes.step_in(self, t, x, closed, [(k, not closed[k], _threshold_reason(sw, closed[k]))])

    @staticmethod
    def _event(ss, sw: Switch, closed: bool) -> LinearEvent:
        rule = sw.control.move(closed)
        row = ss.output_labels.index(rule.probe.label)
        return LinearEvent(ss.C[row], ss.D[row], rule.level, rising=rule.above)

    @staticmethod
    def _strictly_met(event: LinearEvent, x, u) -> bool:
        g = float(event.value(x[None, :], u)[0])
        return g > 0 if event.rising else g < 0

    # output -------------------------------------------------------------
    def waveforms(self, wanted, row_of, name, reason, warnings) -> Waveforms:
        circuit = self.circuit
        n = len(circuit.state_names)
        if self.chunks:
            t = np.concatenate([c[0] for c in self.chunks])
            states = np.concatenate([c[1] for c in self.chunks]).reshape(t.size, n)
        else:
            t, states = np.zeros(0), np.zeros((0, n))
        outputs = np.empty((t.size, len(row_of)))
        start = 0
        for tc, xc, uc, closed in self.chunks:
            ss = self.cache.get(closed)
            y = xc.reshape(tc.size, n) @ ss.C.T
            if ss.n_inputs:
                y = y + uc.reshape(tc.size, -1) @ ss.D.T
            outputs[start:start + tc.size] = y
            start += tc.size
        signals, units, probes = {}, {}, {}
        for p in wanted:
            if isinstance(p, PowerIn):
                v = outputs[:, row_of[VoltageAcross(p.element).label]]
                i = outputs[:, row_of[CurrentThrough(p.element).label]]
                signals[p.label] = v * i
            else:
                signals[p.label] = outputs[:, row_of[p.label]].copy()
            units[p.label] = p.unit
            probes[p.label] = p
        return Waveforms(
            t=t, signals=signals, units=units, probes=probes, states=states,
            state_names=tuple(circuit.state_names), state_units=tuple(circuit.state_units),
            events=tuple(self.events), method=name, method_reason=reason,
            counters=dict(self.counters), configurations=tuple(self.used), warnings=warnings,
            **carried_by_run(t, states, [ss for c in self.chunks for ss in [self.cache.get(c[3])] * c[0].size],
                             [self.cache.get(c) for c in self.used], signals, probes, row_of, self.tally,
                             self.bank, self.integrator.event_tol))
