"""Switch configurations a run can reach (circuitode.model.configurations).

These are definition checks: the expected configurations follow from the switch
schedules and threshold rules as circuit.py defines them (a timed switch holds
each listed state from its time on; a periodic switch is closed for the first
``duty`` of each period from ``start``; a threshold switch may act at any time).
The cap of 2^12 combinations is the project's own documented limit
(``MAX_CONFIGURATIONS``).
"""
from __future__ import annotations

import math

from hypothesis import given, settings, strategies as st

from circuitode.model import (
    Analysis,
    Capacitor,
    Circuit,
    NodeVoltage,
    PeriodicSchedule,
    Resistor,
    Switch,
    ThresholdRule,
    TimedSchedule,
    VoltageSource,
)
from circuitode.model.configurations import MAX_CONFIGURATIONS, reachable_configurations
from circuitode.model import Dc
from circuitode.checks.topology import diagnose, verify


def circuit(*elements, ground="gnd", until=None):
    analysis = Analysis(until=until) if until is not None else None
    return Circuit("test", ground, tuple(elements), (), analysis)


def closes_at(t):
    return TimedSchedule(False, ((t, True),))


SOURCE = VoltageSource("V1", "in", "gnd", Dc(48.0))


def test_timed_configurations_in_order():
    c = circuit(
        SOURCE,
        Switch("K1", "in", "a", TimedSchedule(False, ((1e-3, True), (3e-3, False))), on_resistance=1.0),
        Switch("K2", "a", "gnd", closes_at(2e-3), on_resistance=1.0),
    )
    got = [(x.closed, x.first_time) for x in reachable_configurations(c)]
    assert got == [((False, False), 0.0), ((True, False), 1e-3), ((True, True), 2e-3), ((False, True), 3e-3)]
    assert len(reachable_configurations(c, until=2.5e-3)) == 3


def test_threshold_switch_may_go_either_way():
    probe = NodeVoltage("link")
    c = circuit(
        SOURCE,
        Switch("K_pre", "in", "b", closes_at(1e-3)),
        Resistor("R1", "b", "link", 33.0),
        Switch("K_main", "in", "link", ThresholdRule(True, probe, True, 43.0), on_resistance=2e-3),
        Capacitor("C1", "link", "gnd", 1.5e-3),
    )
    got = reachable_configurations(c)
    assert [x.closed for x in got] == [(False, False), (True, False), (False, True), (True, True)]
    assert [x.first_time for x in got[:2]] == [0.0, 1e-3] and all(math.isnan(x.first_time) for x in got[2:])
    assert got[2].cause == "K_main closes when voltage at link > 43 V"
    assert verify(c) == []


def test_periodic_switch_and_the_configuration_cap():
    pwm = Switch("S", "in", "a", PeriodicSchedule(10e-6, 0.3, start=1e-3), on_resistance=1.0)
    c = circuit(SOURCE, pwm, Resistor("R", "a", "gnd", 1.0), until=60e-3)
    got = reachable_configurations(c)
    assert [(x.closed, x.first_time) for x in got] == [((False,), 0.0), ((True,), 1e-3)]
    many = [Switch(f"T{k}", "in", "gnd", ThresholdRule(False, NodeVoltage("in"), True, 1.0), off_resistance=1.0,
                   on_resistance=1.0) for k in range(13)]
    capped = circuit(SOURCE, Resistor("R", "in", "gnd", 1.0), *many)
    assert len(reachable_configurations(capped)) == 1 + 13 + 1
    assert any(d.code == "configurations-capped" for d in diagnose(capped))
    full = circuit(SOURCE, Resistor("R", "in", "gnd", 1.0), *many[:12])
    assert len(reachable_configurations(full)) == 2 ** 12 == MAX_CONFIGURATIONS
    assert not any(d.code == "configurations-capped" for d in diagnose(full))
    # 12 threshold switches and one timed switch: 2^13 reachable, only the first 4096 kept
    timed = Switch("K", "in", "gnd", closes_at(1e-3), on_resistance=1.0, off_resistance=1.0)
    over = circuit(SOURCE, Resistor("R", "in", "gnd", 1.0), *many[:12], timed)
    assert len(reachable_configurations(over)) == MAX_CONFIGURATIONS
    assert any(d.code == "configurations-capped" for d in diagnose(over))


def _state_at(control, t):
    """A switch's state at time t straight from the schedule definitions in circuit.py."""
    if isinstance(control, TimedSchedule):
        closed = control.initially_closed
        for when, after in control.changes:
            if when <= t:
                closed = after
        return closed
    return t >= control.start and ((t - control.start) % control.period) < control.duty * control.period


schedules = st.one_of(
    st.builds(
        lambda first, times: TimedSchedule(first, tuple((1e-3 * t, k % 2 == (0 if first else 1)) for k, t in enumerate(times))),
        st.booleans(),
        st.lists(st.integers(1, 19), unique=True, max_size=4).map(sorted),
    ),
    st.builds(lambda period, duty, start: PeriodicSchedule(1e-3 * period, duty, 1e-3 * start),
              st.integers(1, 6), st.sampled_from([0.25, 0.5, 0.75]), st.integers(0, 8)),
)


@settings(max_examples=40, deadline=None)
@given(st.lists(schedules, min_size=1, max_size=3))
def test_configurations_match_the_schedules_sampled_in_time(controls):
    # Definition check: sampling every switch's state through the run must meet only listed
    # configurations, never before their first time, and each listed one must hold just after it.
    until = 20e-3
    switches = [Switch(f"K{k}", "in", "gnd", ctl, on_resistance=1.0) for k, ctl in enumerate(controls)]
    c = circuit(SOURCE, *switches, until=until)
    listed = {x.closed: x.first_time for x in reachable_configurations(c)}
    samples = [(2 * j + 1) * 0.0625e-3 for j in range(160)]  # never on a switching instant (multiples of 0.25 ms)
    for t in samples:
        state = tuple(_state_at(ctl, t) for ctl in controls)
        assert state in listed and listed[state] <= t
    for closed, first in listed.items():
        assert tuple(_state_at(ctl, first + 1e-9) for ctl in controls) == closed


def test_docstring_examples_run():
    # the examples in the module's docstrings are part of its documentation; they must hold
    import doctest

    import circuitode.model.configurations as configurations

    result = doctest.testmod(configurations)
    assert result.attempted >= 3 and result.failed == 0
