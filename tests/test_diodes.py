"""Ideal piecewise-linear diodes (model.circuit.Diode, commutation.py).  Each check names
its source beside it."""
from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from circuitode.errors import CircuitodeError
from circuitode.model import (
    Analysis,
    Capacitor,
    Circuit,
    CurrentThrough,
    Diode,
    Inductor,
    NodeVoltage,
    PowerIn,
    Resistor,
    Switch,
    TimedSchedule,
    VoltageAcross,
    VoltageSource,
)
from circuitode.model import Dc, Sine
from circuitode.netlist import loads
from circuitode.transient import simulate


# ---------------------------------------------------------------- freewheel diode


def relay(R=12.0, L=0.2, V=24.0, drop=0.7, on=0.01, t1=0.1, until=0.2):
    """A 24 V relay coil (R, L) driven through K, which opens at t1; D freewheels."""
    return Circuit("relay", "gnd", (
        VoltageSource("V1", "in", "gnd", Dc(V)),
        Switch("K", "in", "c", TimedSchedule(True, ((t1, False),))),
        Inductor("L1", "c", "m", L),
        Resistor("Rc", "m", "gnd", R),
        Diode("D1", "gnd", "c", on_resistance=on, drop=drop),
    ), analysis=Analysis(until=until, step=1e-4, method="exact", initial="steady"),
        records=(CurrentThrough("L1"), NodeVoltage("c"), CurrentThrough("D1")))


def test_freewheel_diode_across_a_relay_coil():
    # Nilsson & Riedel ch. 7 (first-order RL natural and step response): once K opens the
    # coil current flows on through D1, i = i_f + (i0 − i_f) e^{−t/τ} with τ = L/(R + R_on)
    # and i_f = −V_d/(R + R_on) (the drop drives it down); the coil voltage is clamped at
    # −(V_d + i R_on); D1 turns off when i reaches 0, and from then on i = 0 exactly.
    R, L, V, drop, on, t1 = 12.0, 0.2, 24.0, 0.7, 0.01, 0.1
    w = simulate(relay(R, L, V, drop, on, t1))
    i0, tau, i_f = V / R, L / (R + on), -drop / (R + on)
    t_zero = t1 + tau * math.log((i0 - i_f) / (-i_f))
    assert [(e.switch, e.closed) for e in w.events] == [("K", False), ("D1", True), ("D1", False)]
    assert w.events[1].time == pytest.approx(t1, abs=1e-12)
    assert w.events[2].time == pytest.approx(t_zero, rel=1e-9)
    t, i = w.t, w["current through L1"]
    before = t < t1
    np.testing.assert_allclose(i[before], i0, rtol=1e-9)
    free = (t > t1) & (t < w.events[2].time)
    expected = i_f + (i0 - i_f) * np.exp(-(t[free] - t1) / tau)
    np.testing.assert_allclose(i[free], expected, rtol=0, atol=1e-9 * i0)
    np.testing.assert_allclose(w["voltage at c"][free], -(drop + expected * on), rtol=0, atol=1e-8)
    assert np.all(i[t > w.events[2].time] == 0.0)


# ---------------------------------------------------------------- half-wave rectifier


HALF = dict(V=325.0, f=50.0, Rs=2.0, on=0.01, drop=0.8, C=470e-6, RL=1e3)


def half_wave(until=0.1, step=1e-5, **kw):
    p = dict(HALF, **kw)
    return Circuit("half-wave", "gnd", (
        VoltageSource("V1", "ac", "gnd", Sine(p["V"], p["f"])),
        Resistor("Rs", "ac", "a", p["Rs"]),
        Diode("D1", "a", "dc", on_resistance=p["on"], drop=p["drop"]),
        Capacitor("C1", "dc", "gnd", p["C"], initial_voltage=0.0),
        Resistor("RL", "dc", "gnd", p["RL"]),
    ), analysis=Analysis(until=until, step=step, method="exact"),
        records=(CurrentThrough("D1"), NodeVoltage("dc"), PowerIn("V1"), PowerIn("Rs"), PowerIn("D1"),
                 PowerIn("RL")))


class HalfWaveClosedForm:
    """The half-wave rectifier solved in closed form (first-order circuit theory, Nilsson &
    Riedel ch. 7 and ch. 9 for the sinusoidal steady state): while D1 conducts,
    C v' = (V sin ωt − V_d − v)/R − v/R_L (R = Rs + R_on); while it blocks, v decays with
    τ_b = R_L C.  Switching instants from brentq on the closed form."""

    def __init__(self, V, f, Rs, on, drop, C, RL):
        self.V, self.w, self.R, self.drop, self.C, self.RL = V, 2 * math.pi * f, Rs + on, drop, C, RL
        self.tau = C * self.R * RL / (self.R + RL)
        a = 1 / (self.R * C)  # v' = −v/τ + a (V sin ωt − V_d)
        wt = self.w * self.tau
        self.dc = -a * drop * self.tau
        self.amp = a * V * self.tau / math.hypot(1, wt)
        self.phi = -math.atan(wt)

    def v_ss(self, t):
        return self.dc + self.amp * np.sin(self.w * t + self.phi)

    def v_on(self, t, t0, v0):
        return self.v_ss(t) + (v0 - self.v_ss(t0)) * np.exp(-(t - t0) / self.tau)

    def i_on(self, t, t0, v0):
        return (self.V * np.sin(self.w * t) - self.drop - self.v_on(t, t0, v0)) / self.R

    def v_off(self, t, t0, v0):
        return v0 * np.exp(-(t - t0) / (self.RL * self.C))

    def instants(self, count):
        """[(t_on, t_off)] for the first ``count`` conduction intervals from v = 0 at t = 0."""
        period = 2 * math.pi / self.w
        t_on, v = math.asin(self.drop / self.V) / self.w, 0.0
        out = []
        for _ in range(count):
            # the current ends where it first changes sign after t_on: bracket on a fine scan
            scan = t_on + np.linspace(period * 1e-6, period, 20001)
            current = self.i_on(scan, t_on, v)
            j = int(np.flatnonzero(current < 0)[0])
            t_off = brentq(lambda t: self.i_on(t, t_on, v), scan[j - 1], scan[j], xtol=1e-15)
            v_off = float(self.v_on(t_off, t_on, v))
            out.append((t_on, t_off))
            forward = lambda t: self.V * math.sin(self.w * t) - self.drop - self.v_off(t, t_off, v_off)
            cycle = math.floor(t_off / period) + 1
            t_on = brentq(forward, cycle * period, cycle * period + period / 4, xtol=1e-15)
            v = float(self.v_off(t_on, t_off, v_off))
        return out


def test_half_wave_rectifier_against_its_closed_form():
    w = simulate(half_wave())
    form = HalfWaveClosedForm(**HALF)
    intervals = form.instants(5)
    ons = [e.time for e in w.events if e.closed]
    offs = [e.time for e in w.events if not e.closed]
    expected_on = [a for a, b in intervals if a < 0.1]
    expected_off = [b for a, b in intervals if b < 0.1]
    np.testing.assert_allclose(ons, expected_on, rtol=0, atol=1e-9)
    np.testing.assert_allclose(offs, expected_off, rtol=0, atol=1e-9)
    # peak charging current of the first (inrush) conduction, on the output grid
    t, i = w.t, w["current through D1"]
    first = (t > intervals[0][0]) & (t < intervals[0][1])
    closed_form = form.i_on(t[first], intervals[0][0], 0.0)
    np.testing.assert_allclose(i[first], closed_form, rtol=0, atol=1e-8 * closed_form.max())
    fine = np.linspace(*intervals[0], 200001)
    assert i.max() == pytest.approx(form.i_on(fine, intervals[0][0], 0.0).max(), rel=1e-4)


def test_half_wave_ripple_matches_the_common_practice_estimate():
    # Common practice: the ripple of a capacitor-input rectifier is ΔV ≈ I_load / (f C)
    # (half-wave), good to about ±10 % when the ripple is small.
    w = simulate(half_wave(until=0.4, step=2e-5))
    t, v = w.t, w["voltage at dc"]
    last = t >= 0.38
    ripple = v[last].max() - v[last].min()
    estimate = v[last].mean() / HALF["RL"] / (HALF["f"] * HALF["C"])
    assert ripple == pytest.approx(estimate, rel=0.10)


def test_half_wave_energy_balance():
    # Conservation of energy (Tellegen's theorem, Nilsson & Riedel ch. 1 power balance):
    # source energy = resistor losses + diode losses (drop and on-resistance) + ½ C v².
    w = simulate(half_wave(until=0.06, step=2e-6))
    t = w.t
    energy = {name: np.trapezoid(w[f"power in {name}"], t) for name in ("V1", "Rs", "D1", "RL")}
    stored = 0.5 * HALF["C"] * w["voltage at dc"][-1] ** 2
    supplied = -energy["V1"]
    assert supplied == pytest.approx(energy["Rs"] + energy["D1"] + energy["RL"] + stored, rel=1e-6)


# ---------------------------------------------------------------- bridge rectifier


BRIDGE = """
circuit "bridge"
ground gnd
voltage_source mains src -- gnd sine amplitude 325 V frequency 50 Hz
switch K src -- k closes at 5 ms
resistor R_inrush k -- ac1 4.7 Ω
capacitor C_x ac1 -- gnd 100 nF
diode D1 ac1 -- p drop 0.9 V on 20 mΩ
diode D2 gnd -- p drop 0.9 V on 20 mΩ
diode D3 n -- ac1 drop 0.9 V on 20 mΩ
diode D4 n -- gnd drop 0.9 V on 20 mΩ
capacitor C_bulk p -- n 2.2 mF initial 0 V
resistor R_load p -- n 470 Ω
transient until 40 ms step 1 us method exact
record current through D1, current through R_inrush, voltage between p and n
"""


def test_bridge_switched_on_at_the_mains_peak_first_peak_current():
    # From memory (derived here): at the peak the contactor connects V_peak through the inrush
    # resistor and two conducting diodes to an empty bulk capacitor, so the first current peak
    # is (V_peak − 2 V_d)/(R + 2 R_on) while v_C has not yet moved (C large: it takes the
    # capacitor R C ≈ 10 ms to charge, the peak is reached within microseconds).
    w = simulate(loads(BRIDGE))
    i = w["current through D1"]  # the bridge's current (the 100 nF X capacitor's spike aside)
    expected = (325.0 - 2 * 0.9) / (4.7 + 2 * 0.02)
    assert i.max() == pytest.approx(expected, rel=0.01)
    starts = [e.switch for e in w.events if e.closed and e.switch.startswith("D")]
    assert starts[:2] == ["D1", "D4"] or sorted(starts[:2]) == ["D1", "D4"]
    # the other pair takes over on the negative half wave
    assert {"D2", "D3"} <= set(starts)


# ---------------------------------------------------------------- complementarity


@settings(max_examples=12, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 3), st.integers(0, 3), st.floats(0.0, 1.5),
                          st.floats(0.01, 5.0)), min_size=1, max_size=4),
       st.floats(5.0, 50.0), st.floats(1e-6, 1e-4))
def test_complementarity_at_every_output_row(diodes, amplitude, capacitance):
    # Definition of the ideal piecewise-linear diode (complementarity): at every instant a
    # diode either conducts, i ≥ 0 and v = V_d + i R_on, or blocks, i = 0 and v ≤ V_d.
    nodes = ["src", "n1", "n2", "n3"]
    parts = [VoltageSource("V1", "src", "gnd", Sine(amplitude, 50.0)),
             Resistor("Rs", "src", "n1", 1.0)]
    parts += [Resistor(f"R{k}", n, "gnd", 100.0 * (k + 1)) for k, n in enumerate(nodes[1:], start=1)]
    parts += [Capacitor(f"C{k}", n, "gnd", capacitance * k) for k, n in enumerate(nodes[2:], start=1)]
    names = []
    for k, (a, b, drop, on) in enumerate(diodes):
        if a == b:
            continue
        names.append((f"D{k}", drop, on))
        parts.append(Diode(f"D{k}", nodes[a], nodes[b], on_resistance=on, drop=drop))
    if not names:
        return
    records = [p for name, _, _ in names for p in (CurrentThrough(name), VoltageAcross(name))]
    ckt = Circuit("random", "gnd", tuple(parts), analysis=Analysis(until=0.05, step=1e-4, method="exact"),
                  records=tuple(records))
    w = simulate(ckt)
    scale = amplitude * 1e-7
    for name, drop, on in names:
        i, v = w[f"current through {name}"], w[f"voltage across {name}"]
        assert np.all(i >= -scale), name  # no conducting diode carries negative current
        idle = np.abs(i) <= scale
        assert np.all(v[idle] <= drop + scale), name  # no blocking diode is forward biased
        conducting = i > scale
        np.testing.assert_allclose(v[conducting], drop + on * i[conducting], rtol=0, atol=scale)
        blocking = v < drop - scale
        assert np.all(np.abs(i[blocking]) <= scale), name


# ---------------------------------------------------------------- netlist


def test_diode_statement_and_its_mistakes():
    ckt = loads(BRIDGE)
    d1 = ckt.element("D1")
    assert isinstance(d1, Diode) and (d1.first, d1.second, d1.drop, d1.on_resistance) == ("ac1", "p", 0.9, 0.02)
    assert d1.off_resistance is None
    with pytest.raises(CircuitodeError, match="volts|V"):
        loads("ground g\nvoltage_source V a -- g constant 1 V\ndiode D a -- g drop 3 Ω\n")
    with pytest.raises(CircuitodeError, match="given twice"):
        loads("ground g\nvoltage_source V a -- g constant 1 V\ndiode D a -- g on 1 Ω on 2 Ω\n")


# ---------------------------------------------------------------- chattering, check


def test_chattering_stops_the_run_naming_the_diode_and_the_instant():
    # Structural: many diode events within a tiny time stop the run instead of crawling.
    from circuitode.transient.commutation import CHATTER_EVENTS, Commutation
    from circuitode.errors import IntegrationError

    ckt = loads(BRIDGE)
    watcher = Commutation(ckt, None, None, until=0.04)
    k = [s.name for s in ckt.switches].index("D3")
    with pytest.raises(IntegrationError, match=r"diode D3 chatters at t = 12 ms"):
        for _ in range(CHATTER_EVENTS + 1):
            watcher.note(12e-3, [k])
    quiet = Commutation(ckt, None, None, until=0.04)
    for j in range(3 * CHATTER_EVENTS):  # the same number spread over the window is fine
        quiet.note(j * 1e-4, [k])


def test_check_lists_diodes_and_each_configuration_with_its_states(capsys):
    from pathlib import Path

    from circuitode.cli import main

    root = Path(__file__).resolve().parent.parent / "netlists"
    assert main(["check", str(root / "bridge_rectifier.cnet")]) == 0
    out = capsys.readouterr().out
    assert "diode          D1" in out and "drop 900 mV, on 20 mΩ, off open" in out
    assert "configurations (32):" in out and "D1 conducting" in out
    assert main(["check", str(root / "precharge_cable.cnet")]) == 0
    out = capsys.readouterr().out
    assert "from the start: 1 state (voltage across C1)" in out
    assert "current through L_cab is held at 0 A while K_pre and K_main are open" in out


def test_bridge_energy_balance_and_the_floating_dc_side():
    # Conservation of energy (Tellegen's theorem, Nilsson & Riedel ch. 1 power balance):
    # source energy = resistor losses + diode losses + ½ C v², for a bridge fed straight from
    # the mains sine; until the first diodes conduct the DC side floats (all four block).
    text = """
circuit "bridge, no contactor"
ground gnd
voltage_source mains src -- gnd sine amplitude 325 V frequency 50 Hz
resistor R_s src -- ac1 4.7 Ω
diode D1 ac1 -- p drop 0.9 V on 20 mΩ
diode D2 gnd -- p drop 0.9 V on 20 mΩ
diode D3 n -- ac1 drop 0.9 V on 20 mΩ
diode D4 n -- gnd drop 0.9 V on 20 mΩ
capacitor C_bulk p -- n 2.2 mF initial 0 V
resistor R_load p -- n 47 Ω
transient until 40 ms step 2 us method exact
record power in mains, power in R_s, power in R_load, power in D1, power in D2, power in D3, power in D4, voltage between p and n
"""
    w = simulate(loads(text))
    t = w.t
    energy = lambda name: np.trapezoid(w[f"power in {name}"], t)
    supplied = -energy("mains")
    losses = energy("R_s") + energy("R_load") + sum(energy(f"D{k}") for k in range(1, 5))
    stored = 0.5 * 2.2e-3 * w["voltage between p and n"][-1] ** 2
    assert supplied == pytest.approx(losses + stored, rel=1e-6)
    assert sorted(e.switch for e in w.events[:2]) == ["D1", "D4"]


@pytest.mark.parametrize("method", ["rk45", "dop853", "radau", "bdf", "rk4"])
def test_every_integrator_follows_the_diode(method):
    # [Structural] the same half-wave run with each integrator: the same diode events, and
    # waveforms equal to the exact method's within the integrator's tolerance.
    exact = simulate(half_wave(until=0.05))
    other = simulate(half_wave(until=0.05), method=method, step=1e-5 if method == "rk4" else None)
    assert [e.closed for e in other.events] == [e.closed for e in exact.events]
    np.testing.assert_allclose([e.time for e in other.events], [e.time for e in exact.events], rtol=0, atol=1e-6)
    ref = exact["voltage at dc"]
    np.testing.assert_allclose(np.interp(exact.t, other.t, other["voltage at dc"]), ref, rtol=0,
                               atol=1e-4 * np.max(np.abs(ref)))


def test_a_diode_is_called_a_diode_in_diagnostics():
    # A dangling diode terminal was reported as "reached only by coupling D1".
    from circuitode.checks import diagnose
    from circuitode.netlist import loads

    circuit = loads("ground gnd\nvoltage_source V1 a -- gnd constant 5 V\nresistor R1 a -- m 1 kΩ\n"
                    "capacitor C1 m -- gnd 1 uF\ndiode D1 m -- out drop 0.7 V\n")
    messages = [d.message for d in diagnose(circuit) if d.code == "unconnected-node"]
    assert messages and "diode D1" in messages[0]
