"""Switches with hysteresis (model.circuit.HysteresisRule): they act each time their
condition is met.  Each check names its source."""
from __future__ import annotations

import math

import numpy as np
import pytest

from circuitode.errors import CircuitodeError, NetlistError
from circuitode.model import HysteresisRule
from circuitode.netlist import loads
from circuitode.transient import simulate

DUMP = """
circuit "overvoltage dump"
ground gnd
voltage_source V1 in -- gnd constant 48 V
resistor R1 in -- link 10 Ω
capacitor C1 link -- gnd 1 mF initial 0 V
switch K link -- d closes when voltage at link > 43 V, opens when voltage at link < 40 V
resistor R_dump d -- gnd 5 Ω
transient until 60 ms step 10 us method exact
record voltage at link
"""


def test_dump_switch_cycles_between_its_two_levels():
    # Nilsson & Riedel ch. 7 (RC step response v = V∞ + (v0 − V∞) e^{−t/τ}): charging toward
    # 48 V with τ1 = R1 C, the switch closes at 43 V; discharging toward
    # V∞ = 48·R_dump/(R1 + R_dump) with τ2 = (R1 ∥ R_dump) C it opens at 40 V; and again.
    c = loads(DUMP)
    assert isinstance(c.element("K").control, HysteresisRule)
    w = simulate(c)
    tau1, tau2, v_inf = 10e-3, (10 * 5 / 15) * 1e-3, 48 * 5 / 15
    first = tau1 * math.log(48 / (48 - 43))
    discharge = tau2 * math.log((43 - v_inf) / (40 - v_inf))
    charge = tau1 * math.log((48 - 40) / (48 - 43))
    expected, t, closing = [], first, True
    while t < 60e-3:
        expected.append((t, closing))
        t += discharge if closing else charge
        closing = not closing
    got = [(e.time, e.closed) for e in w.events]
    assert [c for _, c in got] == [c for _, c in expected]
    np.testing.assert_allclose([t for t, _ in got], [t for t, _ in expected], rtol=1e-9)
    v = w["voltage at link"]
    assert v[w.t > first].max() == pytest.approx(43.0, abs=1e-6)
    assert v[w.t > first].min() == pytest.approx(40.0, abs=1e-6)


@pytest.mark.parametrize("clause, words", [
    ("closes when voltage at link > 43 V, closes when voltage at link < 40 V", "both clauses"),
    ("closes when voltage at link > 43 V, opens when voltage at in < 40 V", "different quantities"),
    ("closes when voltage at link > 40 V, opens when voltage at link < 43 V", "overlap"),
])
def test_clauses_that_cannot_work_are_refused(clause, words):
    text = DUMP.replace("closes when voltage at link > 43 V, opens when voltage at link < 40 V", clause)
    with pytest.raises(NetlistError, match=words):
        loads(text)


def test_batch_with_hysteresis_equals_single_runs():
    # [Structural] each sample follows its own sequence of configurations (the dump switch
    # closes and opens at instants that depend on R1); the batch equals single runs.
    import dataclasses

    from circuitode.model import CurrentThrough, NodeVoltage
    from circuitode.tolerance.engine import simulate_chunk

    base = loads(DUMP)
    R = np.array([8.0, 10.0, 12.0, 30.0])  # 30 Ω: link tops out at 48 V, still closes
    chunk = simulate_chunk(base, {("R1", "resistance"): R}, [NodeVoltage("link"), CurrentThrough("K")])
    assert chunk.ok.all()
    counts = set()
    for k, r in enumerate(R):
        one = dataclasses.replace(base, elements=tuple(
            dataclasses.replace(e, resistance=float(r)) if e.name == "R1" else e for e in base.elements))
        w = simulate(one, probes=[NodeVoltage("link"), CurrentThrough("K")])
        n = w.t.size  # a sample with fewer switchings than another is padded with its last row
        assert np.all(chunk.t[k][n:] == chunk.t[k][n - 1])
        np.testing.assert_allclose(chunk.t[k][:n], w.t, rtol=0, atol=1e-12)
        np.testing.assert_allclose(chunk.signals[0][k][:n], w["voltage at link"], rtol=1e-9, atol=1e-9)
        np.testing.assert_allclose(chunk.signals[1][k][:n], w["current through K"], rtol=1e-9, atol=1e-9)
        counts.add(len(w.events))
    assert len(counts) > 1  # the samples did follow sequences of different lengths
