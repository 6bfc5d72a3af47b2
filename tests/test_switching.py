"""States per switch configuration (equations.constraints) and entering a configuration
(equations.entry): ideal switches in series with inductors, ideal switches paralleling
capacitors.  Each check names its source."""
from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from circuitode.analysis.modes import circuit_modes
from circuitode.errors import ImpulsiveSwitchingError, SingularSystemError
from circuitode.equations.statespace import assemble
from circuitode.model import (
    Analysis,
    Capacitor,
    Circuit,
    CurrentSource,
    CurrentThrough,
    Inductor,
    NodeVoltage,
    Resistor,
    Switch,
    TimedSchedule,
    VoltageAcross,
    VoltageSource,
)
from circuitode.model import Dc, Step
from circuitode.tolerance.engine import simulate_chunk
from circuitode.transient import simulate


def closes_at(t):
    return TimedSchedule(False, ((t, True),))


def opens_at(t):
    return TimedSchedule(True, ((t, False),))


def contactor(R, L=100e-6, C=100e-6, V=48.0, t0=1e-3, until=4e-3, step=1e-6):
    """Source → R → cable inductance L → ideal contactor (closes at t0) → capacitor C."""
    return Circuit("contactor", "gnd", (
        VoltageSource("V1", "in", "gnd", Dc(V)),
        Resistor("R1", "in", "a", R),
        Inductor("L1", "a", "b", L, initial_current=0.0),
        Switch("K1", "b", "c", closes_at(t0)),
        Capacitor("C1", "c", "gnd", C, initial_voltage=0.0),
    ), analysis=Analysis(until=until, step=step, method="exact"),
        records=(CurrentThrough("L1"), NodeVoltage("b"), NodeVoltage("c")))


def rlc_step_current(t, R, L, C, V):
    """Series RLC switched onto V at t = 0 from rest: the inductor current
    (Nilsson & Riedel, Electric Circuits, ch. 8, step response of a series RLC)."""
    alpha, w0 = R / (2 * L), 1 / np.sqrt(L * C)
    if alpha < w0:
        wd = np.sqrt(w0**2 - alpha**2)
        return V / (wd * L) * np.exp(-alpha * t) * np.sin(wd * t)
    root = np.sqrt(alpha**2 - w0**2)
    s1, s2 = -alpha + root, -alpha - root
    return V / (L * (s1 - s2)) * (np.exp(s1 * t) - np.exp(s2 * t))


@pytest.mark.parametrize("R", [1.0, 5.0])  # ζ = 0.5 (underdamped), 2.5 (overdamped)
def test_series_inductance_before_an_ideal_contactor(R):
    # Nilsson & Riedel ch. 8: closing at t0 gives the textbook series-RLC step response
    # shifted to t0; before t0 the inductor current is exactly 0 (held by the open switch)
    # and the node between L and the contactor sits at the source voltage (v_L = L di/dt = 0).
    L, C, V, t0 = 100e-6, 100e-6, 48.0, 1e-3
    w = simulate(contactor(R, L, C, V, t0))
    t, i = w.t, w["current through L1"]
    before = t < t0
    assert np.all(i[before] == 0.0)
    np.testing.assert_allclose(w["voltage at b"][before], V, rtol=1e-12)
    after = t > t0
    expected = rlc_step_current(t[after] - t0, R, L, C, V)
    np.testing.assert_allclose(i[after], expected, rtol=0, atol=1e-9 * np.max(np.abs(expected)))
    assert [e.switch for e in w.events] == ["K1"]


def test_contactor_configuration_has_its_own_states_and_no_fake_mode():
    # [Structural] with K1 open only C1 is free (no bleed path: no mode at all); with K1
    # closed the series RLC has the pair s² + (R/L) s + 1/(LC) (Nilsson & Riedel ch. 8).
    R, L, C = 1.0, 100e-6, 100e-6
    ckt = contactor(R, L, C)
    open_, closed = assemble(ckt, (False,)), assemble(ckt, (True,))
    assert (open_.n_states, open_.n_free, open_.free_names) == (2, 1, ("voltage across C1",))
    assert closed.n_free == 2 and closed.basis is None
    np.testing.assert_allclose(open_.A_free, [[0.0]], atol=1e-9)
    configurations = circuit_modes(ckt)
    assert [len(c.modes) for c in configurations] == [1, 1]  # the held current adds none
    assert configurations[0].states == ("voltage across C1",)
    assert "current through L1 is held at 0 A while K1 is open" in configurations[0].dependent
    pair = configurations[1].modes[0]
    np.testing.assert_allclose(abs(pair.eigenvalue), 1 / np.sqrt(L * C), rtol=1e-9)
    np.testing.assert_allclose(pair.damping_ratio, R / 2 * np.sqrt(C / L), rtol=1e-9)


def test_contactor_batch_equals_single_runs():
    # [Structural] the batched assembly (leading sample axis) gives each sample's single run.
    R = np.array([0.7, 1.0, 5.0])
    base = contactor(1.0)
    chunk = simulate_chunk(base, {("R1", "resistance"): R}, [CurrentThrough("L1"), NodeVoltage("b")])
    assert chunk.ok.all()
    for k, r in enumerate(R):
        one = dataclasses.replace(base, elements=tuple(
            dataclasses.replace(e, resistance=float(r)) if e.name == "R1" else e for e in base.elements))
        w = simulate(one)
        ref = w["current through L1"]
        np.testing.assert_allclose(chunk.signals[0][k], ref, rtol=0, atol=1e-9 * np.max(np.abs(ref)))
        np.testing.assert_allclose(chunk.signals[1][k], w["voltage at b"], rtol=0, atol=1e-9 * 48.0)


def interrupted(source=None, until=8e-3):
    return Circuit("interrupted", "gnd", (
        VoltageSource("V1", "in", "gnd", source or Dc(48.0)),
        Resistor("R1", "in", "a", 1.0),
        Inductor("L1", "a", "b", 1e-3),
        Switch("K", "b", "c", opens_at(5e-3)),
        Resistor("R2", "c", "gnd", 1.0),
    ), analysis=Analysis(until=until, points=801, method="exact", initial="rest"),
        records=(CurrentThrough("L1"),))


def test_opening_on_an_inductor_current_is_refused_with_its_numbers():
    # Nilsson & Riedel ch. 7: i_L = V/R (1 − e^{−t R/L}) = 24 A (1 − e^{−10}) at 5 ms; an
    # ideal switch cannot break it (v = L di/dt would be infinite).
    with pytest.raises(ImpulsiveSwitchingError) as info:
        simulate(interrupted())
    err = info.value
    expected = 24.0 * (1 - np.exp(-10.0))
    assert err.time == pytest.approx(5e-3) and err.element == "K"
    assert err.value == pytest.approx(expected, rel=1e-9)
    text = str(err)
    assert "t = 5 ms" in text and "K opens" in text and "L1 carries 24 A" in text
    assert "freewheel" in text and "snubber" in text and "off-resistance" in text


def test_opening_at_zero_current_runs_and_holds_it():
    # The source steps up only after K has opened: the current is 0 when K opens, then held.
    w = simulate(interrupted(Step(0.0, 48.0, 6e-3)))
    assert [(e.switch, e.closed) for e in w.events] == [("K", False)]
    assert np.all(w["current through L1"] == 0.0)


def paralleled(v2, until=4e-3):
    return Circuit("paralleled", "gnd", (
        VoltageSource("V1", "in", "gnd", Dc(48.0)),
        Resistor("R1", "in", "a", 1.0),
        Capacitor("C1", "a", "gnd", 100e-6, initial_voltage=48.0),
        Switch("K", "a", "b", closes_at(2e-3)),
        Capacitor("C2", "b", "gnd", 300e-6, initial_voltage=v2),
    ), analysis=Analysis(until=until, points=401, method="exact", initial="given"),
        records=(VoltageAcross("C2"), CurrentThrough("K"), CurrentThrough("R1")))


def test_paralleling_capacitors_at_different_voltages_is_refused_with_charge_and_energy():
    # Charge sharing (Nilsson & Riedel ch. 6, capacitors in parallel): joining C1 = 100 µF at
    # 48 V and C2 = 300 µF at 0 V moves q = C1C2/(C1+C2)·ΔV = 75 µF · 48 V = 3.6 mC and loses
    # ½·75 µF·(48 V)² = 86.4 mJ in the ideal circuit.
    with pytest.raises(ImpulsiveSwitchingError) as info:
        simulate(paralleled(0.0))
    text = str(info.value)
    assert info.value.time == pytest.approx(2e-3) and info.value.element == "K"
    assert abs(info.value.value) == pytest.approx(48.0, rel=1e-9)
    assert "t = 2 ms" in text and "48 V" in text and "3.6 mC" in text and "86.4 mJ" in text
    assert "on-resistance" in text


def test_paralleling_capacitors_at_equal_voltages_runs_as_one_capacitor():
    # After closing, C1 ∥ C2 is one 400 µF capacitor: nothing moves while both sit at the
    # source voltage, and the pair keeps one state.
    w = simulate(paralleled(48.0))
    np.testing.assert_allclose(w["voltage across C2"], 48.0, rtol=1e-12)
    np.testing.assert_allclose(w["current through K"], 0.0, atol=1e-9)


def test_given_initial_current_behind_an_open_switch_is_refused_at_the_start():
    ckt = contactor(1.0)
    ckt = dataclasses.replace(ckt, elements=tuple(
        dataclasses.replace(e, initial_current=2.0) if e.name == "L1" else e for e in ckt.elements))
    with pytest.raises(ImpulsiveSwitchingError, match="t = 0 s.*L1 carries 2 A"):
        simulate(ckt)


def test_current_source_into_an_open_switch_stays_refused():
    # A current source in a cut set with an inductor behind an open switch: KCL cannot hold
    # (a non-homogeneous constraint), whatever the state.
    ckt = Circuit("cs", "gnd", (
        CurrentSource("I1", "gnd", "a", Dc(1.0)),
        Inductor("L1", "a", "b", 1e-3),
        Switch("K", "b", "gnd", closes_at(1e-3)),
        Resistor("R", "a", "gnd", 1.0),
        Inductor("L2", "a", "c", 1e-3),
        Switch("K2", "c", "gnd", closes_at(1e-3)),
        CurrentSource("I2", "gnd", "c", Dc(1.0)),
    ))
    with pytest.raises(SingularSystemError):
        assemble(ckt, (False, False))


def test_batch_marks_the_sample_that_would_interrupt_a_current():
    # The batch engine refuses per sample, with the single run's words, and carries on.
    base = interrupted()
    chunk = simulate_chunk(base, {("R1", "resistance"): np.array([1.0, 2.0])}, [CurrentThrough("L1")])
    assert not chunk.ok.any()
    assert all("L1 carries" in chunk.problems[k] for k in (0, 1))


def test_batch_threshold_switch_opening_on_a_current_fails_that_sample():
    # [Structural] as the single run refuses it, a batch marks the sample whose threshold
    # switch would interrupt the inductor current as failed, with the same words.
    from circuitode.model import ThresholdRule

    base = interrupted()
    trip = Switch("K", "b", "c", ThresholdRule(False, CurrentThrough("L1"), True, 10.0))
    ckt = dataclasses.replace(base, elements=tuple(trip if e.name == "K" else e for e in base.elements))
    with pytest.raises(ImpulsiveSwitchingError, match="L1 carries 10 A"):
        simulate(ckt)
    chunk = simulate_chunk(ckt, {("R1", "resistance"): np.array([1.0, 10.0])}, [CurrentThrough("L1")])
    # R1 = 1 Ω reaches 10 A and trips; R1 = 10 Ω tops out at 4.8 A and never does
    assert list(chunk.ok) == [False, True]
    assert "L1 carries 10 A" in chunk.problems[0]
