"""The transient driver on Circuits built directly from circuit.py dataclasses.

Every physics check names its source.  Book chapter numbers are cited from memory
(they shift between editions); the closed forms themselves are re-derived in the
comments or are standard results.  The same circuits run with every method;
rk4 runs at a stable fixed step, the adaptive and implicit methods at tight
tolerances, exact must agree to 1e-9 relative.
"""
from __future__ import annotations

import numpy as np

from circuitode.quantities import format_si
import pytest
import scipy.linalg as la
import scipy.signal as signal
from scipy.integrate import simpson

from circuitode.model import (Analysis, Capacitor, Circuit, Coupling, CurrentSource,
                                CurrentThrough, Inductor, NodeVoltage, PeriodicSchedule, PowerIn,
                                Resistor, Switch, ThresholdRule, TimedSchedule, VoltageSource)
from circuitode.errors import CircuitodeError, UnstableStepError
from circuitode.model import Dc, Ramp, Sine, Step
from circuitode.transient import Waveforms, simulate

ALL = ["bdf", "dop853", "exact", "radau", "rk4", "rk45"]
RTOL = {"radau": 1e-9}  # Radau's Newton iterations make 1e-10 slow; 1e-9 meets TOL
TOL = {"rk4": 1e-7, "rk45": 1e-6, "dop853": 1e-6, "radau": 1e-6, "bdf": 1e-5, "exact": 1e-9}


def run(circuit, name, until, rk4_step, points=201, **kw):
    """Simulate with ``name``: rk4 at a fixed ``rk4_step``; others on ``points`` outputs."""
    if name == "rk4":
        return simulate(circuit, method="rk4", until=until, step=rk4_step, **kw)
    return simulate(circuit, method=name, until=until, points=points, rtol=RTOL.get(name, 1e-10),
                    atol=1e-13, **kw)


def rel_err(got, want):
    return float(np.max(np.abs(got - want)) / np.max(np.abs(want)))


def rc_circuit(R, C, V, *extra, records=()):
    return Circuit("rc", "gnd", (
        VoltageSource("V1", "in", "gnd", Dc(V)),
        Resistor("R1", "in", "out", R),
        Capacitor("C1", "out", "gnd", C),
        *extra,
    ), records=records)


def series_rlc_circuit(R, L, C, waveform):
    return Circuit("series rlc", "gnd", (
        VoltageSource("V1", "in", "gnd", waveform),
        Resistor("R1", "in", "a", R),
        Inductor("L1", "a", "out", L),
        Capacitor("C1", "out", "gnd", C),
    ), records=(NodeVoltage("out"), CurrentThrough("L1")))


def series_rlc_step(R, L, C, V, t):
    """(v_C, i_L) after a step of V from rest (Nilsson & Riedel, Electric Circuits, ch. 8;
    Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 8)."""
    alpha, w0 = R / (2 * L), 1 / np.sqrt(L * C)
    if np.isclose(alpha, w0, rtol=1e-12):
        return V - V * np.exp(-alpha * t) * (1 + alpha * t), V / L * t * np.exp(-alpha * t)
    if alpha < w0:
        wd = np.sqrt(w0**2 - alpha**2)
        e = np.exp(-alpha * t)
        return (V - V * e * (np.cos(wd * t) + alpha / wd * np.sin(wd * t)),
                V / (L * wd) * e * np.sin(wd * t))
    root = np.sqrt(alpha**2 - w0**2)
    s1, s2 = -alpha + root, -alpha - root
    A1, A2 = V * s2 / (s1 - s2), -V * s1 / (s1 - s2)
    return (V + A1 * np.exp(s1 * t) + A2 * np.exp(s2 * t),
            C * (s1 * A1 * np.exp(s1 * t) + s2 * A2 * np.exp(s2 * t)))


# ---------------------------------------------------------------------------
# Textbook circuits with every method
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("name", ALL)
def test_rc_charging_time_constant(name):
    # v_C = V (1 − e^{−t/RC}); 63.2 % after one time constant (common practice).
    R, C, V = 1e3, 1e-6, 10.0
    w = run(rc_circuit(R, C, V), name, 5e-3, rk4_step=1e-6, points=51, initial="rest")
    v = w["voltage at out"]
    assert rel_err(v, V * (1 - np.exp(-w.t / (R * C)))) < TOL[name]
    at_tau = np.flatnonzero(np.isclose(w.t, R * C))[0]
    assert v[at_tau] / V == pytest.approx(0.632, abs=5e-4)


@pytest.mark.parametrize("name", ALL)
def test_rl_current_rise(name):
    # i = (V/R)(1 − e^{−Rt/L}) (Nilsson & Riedel, ch. 7, step response of an RL circuit).
    R, L, V = 5.0, 10e-3, 12.0
    c = Circuit("rl", "gnd", (VoltageSource("V1", "in", "gnd", Dc(V)), Resistor("R1", "in", "a", R),
                              Inductor("L1", "a", "gnd", L)), records=(CurrentThrough("L1"),))
    w = run(c, name, 10e-3, rk4_step=1e-5, points=41, initial="rest")
    assert rel_err(w["current through L1"], V / R * (1 - np.exp(-R * w.t / L))) < TOL[name]


@pytest.mark.parametrize("R", [4.0, 20.0, 60.0], ids=["underdamped", "critical", "overdamped"])
@pytest.mark.parametrize("name", ALL)
def test_series_rlc_step_response(name, R):
    # Closed forms in series_rlc_step; R_critical = 2√(L/C) = 20 Ω for 1 mH, 10 µF.
    L, C, V = 1e-3, 10e-6, 24.0
    w = run(series_rlc_circuit(R, L, C, Dc(V)), name, 3e-3, rk4_step=1e-7, points=61, initial="rest")
    v, i = series_rlc_step(R, L, C, V, w.t)
    assert rel_err(w["voltage at out"], v) < TOL[name]
    assert rel_err(w["current through L1"], i) < TOL[name]


@pytest.mark.parametrize("name", ALL)
def test_parallel_rlc_natural_response(name):
    # Nilsson & Riedel, ch. 8: v = −I0/(C ω_d) e^{−αt} sin ω_d t, α = 1/(2RC), from i_L(0) = I0.
    R, L, C, I0 = 50.0, 2e-3, 5e-6, 0.3
    c = Circuit("parallel rlc", "gnd", (Resistor("R1", "top", "gnd", R),
                                        Inductor("L1", "top", "gnd", L, initial_current=I0),
                                        Capacitor("C1", "top", "gnd", C)), records=(NodeVoltage("top"),))
    w = run(c, name, 2e-3, rk4_step=1e-7, points=81, initial="given")
    alpha, w0 = 1 / (2 * R * C), 1 / np.sqrt(L * C)
    wd = np.sqrt(w0**2 - alpha**2)
    want = -I0 / (C * wd) * np.exp(-alpha * w.t) * np.sin(wd * w.t)
    assert rel_err(w["voltage at top"], want) < TOL[name]


@pytest.mark.parametrize("name", ALL)
def test_lossless_lc_period_and_energy(name):
    # Period 2π√(LC) and ½CV² + ½LI² conserved (Alexander & Sadiku, ch. 8, LC circuit).
    L, C, V0 = 1e-3, 1e-6, 5.0
    period = 2 * np.pi * np.sqrt(L * C)
    c = Circuit("lc", "gnd", (Capacitor("C1", "top", "gnd", C, initial_voltage=V0),
                              Inductor("L1", "top", "gnd", L)),
                records=(NodeVoltage("top"), CurrentThrough("L1")))
    w = run(c, name, 2 * period, rk4_step=period / 4000, points=81)
    v, i = w["voltage at top"], w["current through L1"]
    assert v[-1] == pytest.approx(V0, rel=10 * TOL[name])
    assert v[np.flatnonzero(np.isclose(w.t, period / 2))[0]] == pytest.approx(-V0, rel=10 * TOL[name])
    energy = 0.5 * C * v**2 + 0.5 * L * i**2
    assert np.max(np.abs(energy / (0.5 * C * V0**2) - 1)) < 10 * TOL[name]


@pytest.mark.parametrize("name", ALL)
def test_sine_driven_series_rlc_matches_phasor(name):
    # Phasor analysis (Alexander & Sadiku, ch. 9; Nilsson & Riedel, ch. 9):
    # V_C/V = 1/(1 − ω²LC + jωRC) once the transient e^{−Rt/2L} has died (R t/2L ≥ 35 here).
    R, L, C, amp, f = 16.0, 1e-3, 10e-6, 3.0, 1e3
    wv = 2 * np.pi * f
    c = series_rlc_circuit(R, L, C, Sine(amplitude=amp, frequency=f))
    w = run(c, name, 5e-3, rk4_step=1e-7, points=501, initial="rest")
    late = w.t >= 4.4e-3
    H = 1 / (1 - wv**2 * L * C + 1j * wv * R * C)
    want = amp * abs(H) * np.sin(wv * w.t[late] + np.angle(H))
    assert rel_err(w["voltage at out"][late], want) < 10 * TOL[name]


@pytest.mark.parametrize("R", [4.0, 20.0, 60.0], ids=["underdamped", "critical", "overdamped"])
@pytest.mark.parametrize("name", ALL)
def test_series_rlc_against_lsim(name, R):
    # Transfer function derived by hand (divider of 1/(sC) against R + sL):
    # V_C/V = 1/(LC s² + RC s + 1); reference: scipy.signal.lsim on a fine grid.
    L, C, f = 1e-3, 10e-6, 700.0
    t = np.linspace(0.0, 4e-3, 4001)
    _, ref, _ = signal.lsim(([1.0], [L * C, R * C, 1.0]), 2.0 * np.sin(2 * np.pi * f * t), t)
    c = series_rlc_circuit(R, L, C, Sine(amplitude=2.0, frequency=f))
    w = run(c, name, 4e-3, rk4_step=1e-7, points=41, initial="rest")
    every_100us = w["voltage at out"][:: (1000 if name == "rk4" else 1)]
    assert rel_err(every_100us, ref[::100]) < max(TOL[name], 2e-6)


@pytest.mark.parametrize("R", [10.0, 1e3, 1e5])
@pytest.mark.parametrize("name", ALL)
def test_rc_charging_dissipates_half_cv2_whatever_r(name, R):
    # Charging C from a step through any R dissipates ½CV² in R (classic textbook result;
    # Alexander & Sadiku, ch. 7 problems; Nilsson & Riedel, ch. 7).  Simpson's rule on
    # 3001 points over 30 τ adds about 1e-7 relative.
    C, V = 2e-6, 30.0
    tau = R * C
    w = run(rc_circuit(R, C, V, records=(PowerIn("R1"),)), name, 30 * tau, rk4_step=tau / 100,
            points=3001, initial="rest")
    energy = simpson(w["power in R1"], x=w.t)
    assert energy == pytest.approx(0.5 * C * V**2, rel=max(10 * TOL[name], 1e-6))


# ---------------------------------------------------------------------------
# Switching
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("name", ALL)
def test_second_resistor_switched_in_parallel_mid_charge(name):
    # Piecewise closed form (Nilsson & Riedel, ch. 7, sequential switching): τ1 = R1 C until
    # t1; then the Thévenin source V R2/(R1 + R2) behind R1∥R2 charges C from v(t1).
    R1, R2, C, V, t1 = 1e3, 2e3, 1e-6, 9.0, 1.5e-3
    c = rc_circuit(R1, C, V, Switch("K", "out", "x", TimedSchedule(False, ((t1, True),))),
                   Resistor("R2", "x", "gnd", R2),
                   records=(NodeVoltage("out"), CurrentThrough("R2")))
    w = run(c, name, 6e-3, rk4_step=1e-6, points=61, initial="rest")
    v_t1 = V * (1 - np.exp(-t1 / (R1 * C)))
    v_th, tau2 = V * R2 / (R1 + R2), (R1 * R2 / (R1 + R2)) * C
    want = np.where(w.t <= t1, V * (1 - np.exp(-w.t / (R1 * C))),
                    v_th + (v_t1 - v_th) * np.exp(-(w.t - t1) / tau2))
    assert rel_err(w["voltage at out"], want) < TOL[name]
    at = np.flatnonzero(w.t == t1)
    assert at.size == 2  # the values just before and just after the switch
    i_r2 = w["current through R2"][at]
    assert i_r2[0] == 0.0 and i_r2[1] == pytest.approx(v_t1 / R2, rel=TOL[name])
    assert [(e.time, e.switch, e.closed) for e in w.events] == [(t1, "K", True)]
    assert len(w.configurations) == 2


@pytest.mark.parametrize("name", ALL)
def test_threshold_switch_instant(name):
    # RC charging reaches Vth at t = −RC ln(1 − Vth/V) (common practice), located to 1e-9 × window.
    R, C, V, Vth, until = 2.2e3, 4.7e-6, 48.0, 43.0, 40e-3
    rule = ThresholdRule(closes=True, probe=NodeVoltage("out"), above=True, level=Vth)
    c = rc_circuit(R, C, V, Switch("K", "out", "x", rule), Resistor("R2", "x", "gnd", 100.0),
                   records=(NodeVoltage("out"),))
    w = run(c, name, until, rk4_step=1e-6, points=41, initial="rest")
    t_star = -R * C * np.log(1 - Vth / V)
    assert len(w.events) == 1 and w.events[0].switch == "K" and w.events[0].closed
    tol = 1e-9 if name != "bdf" else 1e-8  # BDF's own solution error dominates (see test_solvers)
    assert abs(w.events[0].time - t_star) < tol * until
    # after the switch the node relaxes towards V·R2/(R + R2) with τ = (R∥R2) C
    v_inf, tau2 = V * 100.0 / (R + 100.0), (R * 100.0 / (R + 100.0)) * C
    after = w.t > w.events[0].time
    want = v_inf + (Vth - v_inf) * np.exp(-(w.t[after] - w.events[0].time) / tau2)
    assert rel_err(w["voltage at out"][after], want) < 10 * TOL[name] + 1e-7


@pytest.mark.parametrize("name", ALL)
def test_threshold_waits_while_the_quantity_sits_on_the_level(name):
    # v_C stays exactly 0 V until the source steps at t0, then rises at once (common practice),
    # so "closes when voltage at out > 0 V" acts at t0, not at the start where v_C only touches 0.
    R, C, V, t0, until = 1e3, 1e-6, 5.0, 1e-3, 4e-3
    rule = ThresholdRule(closes=True, probe=NodeVoltage("out"), above=True, level=0.0)
    c = Circuit("late", "gnd", (VoltageSource("V1", "in", "gnd", Step(0.0, V, t0)),
                                Resistor("R1", "in", "out", R), Capacitor("C1", "out", "gnd", C),
                                Switch("K", "out", "x", rule), Resistor("R2", "x", "gnd", 1e3)),
                records=(NodeVoltage("out"),))
    w = run(c, name, until, rk4_step=1e-6, points=41, initial="rest")
    assert len(w.events) == 1
    assert abs(w.events[0].time - t0) < 1e-9 * until


def test_threshold_on_a_circuit_without_storage():
    # Divider of two equal resistors on sin ωt: v_out = ½ sin ωt passes ¼ at ωt = π/6, i.e.
    # t = 1/(12 f); then K (1 Ω) parallels R2, giving the divider 0.5/1.5 (Ohm's law, common practice).
    f = 50.0
    rule = ThresholdRule(closes=True, probe=NodeVoltage("out"), above=True, level=0.25)
    c = Circuit("no storage", "gnd", (
        VoltageSource("V1", "in", "gnd", Sine(amplitude=1.0, frequency=f)),
        Resistor("R1", "in", "out", 1.0), Resistor("R2", "out", "gnd", 1.0),
        Switch("K", "out", "gnd", rule, on_resistance=1.0)), records=(NodeVoltage("out"),))
    w = simulate(c, until=0.04, points=81)
    assert w.method == "exact" and w.states.shape == (w.t.size, 0)
    assert abs(w.events[0].time - 1 / (12 * f)) < 1e-9 * 0.04
    after = w.t > w.events[0].time
    want = np.sin(2 * np.pi * f * w.t[after]) / 3
    assert np.max(np.abs(w["voltage at out"][after] - want)) < 1e-12


@pytest.mark.parametrize("name", ALL)
def test_coupled_inductors_against_independent_model(name):
    # Coupled coils: [L1 M; M L2] d/dt [i1; i2] = [V − R1 i1; −R2 i2], M = k√(L1 L2)
    # (Alexander & Sadiku, ch. 13, magnetically coupled circuits); reference by expm in the test.
    L1, L2, k, R1, R2, V = 2e-3, 8e-3, 0.6, 3.0, 20.0, 5.0
    M = k * np.sqrt(L1 * L2)
    c = Circuit("transformer", "gnd", (
        VoltageSource("V1", "in", "gnd", Dc(V)),
        Resistor("R1", "in", "p", R1),
        Inductor("L1", "p", "gnd", L1),
        Inductor("L2", "s", "gnd", L2),
        Resistor("R2", "s", "gnd", R2),
    ), couplings=(Coupling("K12", "L1", "L2", k),),
        records=(CurrentThrough("L1"), CurrentThrough("L2")))
    w = run(c, name, 3e-3, rk4_step=1e-6, points=31, initial="rest")
    Lm = np.array([[L1, M], [M, L2]])
    A = -la.solve(Lm, np.diag([R1, R2]))
    b = la.solve(Lm, np.array([V, 0.0]))
    x_inf = -la.solve(A, b)
    lam, modes = np.linalg.eig(A)  # modal solution x(t) = x_inf − V e^{Λt} V⁻¹ x_inf
    weights = np.linalg.solve(modes, x_inf)
    ref = x_inf - np.real((np.exp(np.outer(w.t, lam)) * weights) @ modes.T)
    assert np.allclose(ref[-1], x_inf - la.expm(A * w.t[-1]) @ x_inf)
    assert rel_err(w["current through L1"], ref[:, 0]) < TOL[name]
    assert rel_err(w["current through L2"], ref[:, 1]) < TOL[name]


@pytest.mark.parametrize("name", ALL)
def test_tellegen_sum_of_branch_powers_is_zero(name):
    # Tellegen's theorem (Tellegen 1952; Desoer & Kuh, Basic Circuit Theory, ch. 9):
    # Σ v_k i_k = 0 over every branch, with each branch's own reference directions.
    elements = (
        VoltageSource("V1", "in", "gnd", Sine(amplitude=10.0, frequency=2e3, offset=2.0)),
        Resistor("R1", "in", "a", 4.0),
        Inductor("L1", "a", "b", 1e-3),
        Capacitor("C1", "b", "gnd", 5e-6),
        CurrentSource("I1", "gnd", "b", Step(before=0.0, after=0.2, at=0.5e-3)),
        Switch("K1", "b", "c", TimedSchedule(False, ((0.3e-3, True),)), on_resistance=0.5),
        Inductor("L2", "c", "d", 2e-3),
        Resistor("R2", "d", "gnd", 30.0),
        Switch("K2", "a", "e", TimedSchedule(True, ((0.7e-3, False),))),
        Resistor("R3", "e", "gnd", 50.0),
        Capacitor("C2", "c", "gnd", 1e-6),
    )
    c = Circuit("every kind", "gnd", elements, couplings=(Coupling("M12", "L1", "L2", 0.4),),
                records=tuple(PowerIn(e.name) for e in elements))
    w = run(c, name, 1.5e-3, rk4_step=5e-7, points=301, initial="rest")
    powers = np.column_stack([w[f"power in {e.name}"] for e in elements])
    scale = np.max(np.abs(powers))
    assert scale > 1.0  # the circuit is busy: watts flow
    assert np.max(np.abs(powers.sum(axis=1))) < 1e-9 * scale
    assert len(w.events) == 2


def test_source_step_inside_the_window_is_a_breakpoint():
    # A step at t0 charges from rest: v = V(1 − e^{−(t − t0)/RC}) for t > t0 (common practice);
    # rk4 lands on the breakpoint even when it is not a multiple of the step.
    R, C, V, t0 = 1e3, 1e-6, 5.0, 1.23456e-3
    c = Circuit("delayed", "gnd", (VoltageSource("V1", "in", "gnd", Step(0.0, V, t0)),
                                   Resistor("R1", "in", "out", R), Capacitor("C1", "out", "gnd", C)),
                records=(NodeVoltage("out"),))
    want = lambda t: np.where(t > t0, V * (1 - np.exp(-(t - t0) / (R * C))), 0.0)  # noqa: E731
    for name, kw in (("rk4", {"step": 1e-6}), ("exact", {"points": 101})):
        w = simulate(c, method=name, until=5e-3, initial="rest", **kw)
        assert rel_err(w["voltage at out"], want(w.t)) < TOL[name]
        assert w.counters["segments"] == 2


def test_steady_initial_state_then_opening_switch():
    # Steady DC start: v_C = V R2/(R1 + R2) with the load switched in (voltage divider,
    # common practice); opening the load at t1 lets C charge to V with τ = R1 C.
    R1, R2, C, V, t1 = 1e3, 3e3, 1e-6, 8.0, 1e-3
    c = rc_circuit(R1, C, V, Switch("K", "out", "x", TimedSchedule(True, ((t1, False),))),
                   Resistor("R2", "x", "gnd", R2), records=(NodeVoltage("out"),))
    w = simulate(c, method="exact", until=6e-3, points=61, initial="steady")
    v0 = V * R2 / (R1 + R2)
    want = np.where(w.t <= t1, v0, V + (v0 - V) * np.exp(-(w.t - t1) / (R1 * C)))
    assert rel_err(w["voltage at out"], want) < 1e-9


def test_exact_sine_rc_from_rest_is_exact():
    # v = A[sin ωt − ωτ cos ωt + ωτ e^{−t/τ}]/(1 + ω²τ²)
    # (first-order linear ODE solved by an integrating factor; Nilsson & Riedel, ch. 9).
    R, C, A, f = 1e3, 1e-6, 2.0, 400.0
    wv, tau = 2 * np.pi * f, R * C
    c = Circuit("sine rc", "gnd", (VoltageSource("V1", "in", "gnd", Sine(amplitude=A, frequency=f)),
                                   Resistor("R1", "in", "out", R), Capacitor("C1", "out", "gnd", C)),
                records=(NodeVoltage("out"),))
    w = simulate(c, method="exact", until=10e-3, points=2001, initial="rest")
    wt = wv * tau
    want = A * (np.sin(wv * w.t) - wt * np.cos(wv * w.t) + wt * np.exp(-w.t / tau)) / (1 + wt**2)
    assert rel_err(w["voltage at out"], want) < 1e-9
    assert w.counters["expm_calls"] == 1


# ---------------------------------------------------------------------------
# Guard, settings, outputs
# ---------------------------------------------------------------------------


def stiff_after_switching():
    """Slow RC (τ = 1 ms) that, once K closes at 2 ms, gains a fast RC (τ = 1 µs)."""
    return Circuit("stiff later", "gnd", (
        VoltageSource("V1", "in", "gnd", Dc(1.0)),
        Resistor("R1", "in", "out", 1e3),
        Capacitor("C1", "out", "gnd", 1e-6),
        Switch("K", "out", "f", TimedSchedule(False, ((2e-3, True),))),
        Resistor("R2", "f", "g", 1.0),
        Capacitor("C2", "g", "gnd", 1e-6),
    ), analysis=Analysis(until=4e-3, method="rk4"))


def test_rk4_guard_checks_configurations_reached_later():
    with pytest.raises(UnstableStepError) as info:
        simulate(stiff_after_switching(), step=1e-5)
    limit = info.value.largest_stable_step
    # With K closed, nodal analysis by hand (C1 = C2 = C): C v1' = (1 − v1)/R1 − (v1 − v2)/R2,
    # C v2' = (v1 − v2)/R2; its fastest eigenvalue is real, so the RK4 limit is 2.785293563/|λ|
    # (real-axis reach from memory, Hairer & Wanner, Solving ODEs II, ch. IV.2).
    R1, R2, C = 1e3, 1.0, 1e-6
    A = np.array([[-(1 / R1 + 1 / R2) / C, 1 / (R2 * C)], [1 / (R2 * C), -1 / (R2 * C)]])
    fastest = np.max(np.abs(np.linalg.eigvals(A)))
    assert limit == pytest.approx(2.785293563 / fastest, rel=1e-8)
    assert "K closed" in str(info.value) and format_si(limit, "s", 6) in str(info.value)
    assert info.value.exit_code == 3
    w = simulate(stiff_after_switching(), step=0.9 * limit)  # a stable step is accepted
    assert w.method == "rk4" and np.all(np.isfinite(w["voltage at out"]))


def test_auto_picks_exact_and_says_why():
    w = simulate(stiff_after_switching(), method="auto", points=41)
    assert w.method == "exact"
    assert "stiffness ratio" in w.method_reason


def test_missing_end_time_is_explained():
    c = rc_circuit(1e3, 1e-6, 1.0)
    with pytest.raises(CircuitodeError, match="transient until"):
        simulate(c)


def test_unknown_method_and_bad_settings_are_refused():
    c = rc_circuit(1e3, 1e-6, 1.0)
    with pytest.raises(CircuitodeError, match="exact"):
        simulate(c, until=1e-3, method="trapezoid")
    with pytest.raises(CircuitodeError, match="initial"):
        simulate(c, until=1e-3, initial="cold")
    with pytest.raises(CircuitodeError, match="points"):
        simulate(c, until=1e-3, points=1)
    with pytest.raises(CircuitodeError, match="step"):
        simulate(c, until=1e-3, step=-1.0)
    with pytest.raises(CircuitodeError, match="until"):
        simulate(c, until="soon")
    with pytest.raises(CircuitodeError, match="rtol"):
        simulate(c, until=1e-3, rtol="tight")
    with pytest.raises(CircuitodeError, match="probe objects"):
        simulate(c, until=1e-3, probes=["voltage at out"])
    with pytest.raises(CircuitodeError, match="nowhere"):
        simulate(c, until=1e-3, probes=[NodeVoltage("nowhere")])


def test_default_records_and_csv_with_units(tmp_path):
    c = rc_circuit(1e3, 1e-6, 4.0)
    w = simulate(c, until=1e-3, points=11)
    assert isinstance(w, Waveforms)
    assert set(w.labels) == {"voltage at in", "voltage at out", "current through V1",
                             "current through R1", "current through C1"}
    assert w.units["current through R1"] == "A" and w.state_names == ("voltage across C1",)
    # KCL at out (Kirchhoff, common practice): the resistor's current all goes into C1
    assert np.allclose(w["current through R1"], w["current through C1"], rtol=1e-12, atol=1e-15)
    path = tmp_path / "run.csv"
    w.to_csv(path)
    header = path.read_text().splitlines()[0]
    assert header.startswith("time [s],voltage at in [V]") and "current through C1 [A]" in header
    data = np.loadtxt(path, delimiter=",", skiprows=1)
    assert data.shape == (11, 6) and np.allclose(data[:, 0], w.t)
    with pytest.raises(CircuitodeError, match="recorded"):
        w["voltage at nowhere"]


def test_docstring_examples_run():
    import doctest

    import circuitode.transient.driver as module

    result = doctest.testmod(module)
    assert result.failed == 0 and result.attempted > 0


def test_large_ladder_gets_a_stiff_method_that_agrees_with_exact():
    # An RC ladder of 401 sections is past EXACT_MAX_STATES and stiff (its slowest and fastest
    # modes differ by ~1e5, common practice for diffusion-like ladders), so auto picks bdf.
    sections = 401
    elements = [VoltageSource("V1", "n0", "gnd", Dc(1.0))]
    for k in range(sections):
        elements += [Resistor(f"R{k}", f"n{k}", f"n{k + 1}", 1.0),
                     Capacitor(f"C{k}", f"n{k + 1}", "gnd", 1e-6)]
    c = Circuit("ladder", "gnd", tuple(elements), records=(NodeVoltage("n10"), NodeVoltage("n401")))
    auto = simulate(c, until=2e-2, points=11, initial="rest", rtol=1e-8, atol=1e-12)
    exact = simulate(c, method="exact", until=2e-2, points=11, initial="rest")
    assert auto.method == "bdf" and "more than 400 states" in auto.method_reason
    for label in ("voltage at n10", "voltage at n401"):
        assert np.max(np.abs(auto[label] - exact[label])) < 1e-6
    # the far end of a diffusive ladder lags the near end (common practice)
    assert 0 < exact["voltage at n401"][-1] < exact["voltage at n10"][-1] < 1


@pytest.mark.parametrize("name", ["exact", "rk45", "radau"])
def test_stored_energy_never_grows_without_a_source(name):
    # A passive RLC network left to itself only loses energy to its resistors
    # (Desoer & Kuh, Basic Circuit Theory, ch. 9 on passivity): ½CV² + ½LI² is non-increasing.
    c = Circuit("free", "gnd", (
        Capacitor("C1", "a", "gnd", 2e-6, initial_voltage=10.0),
        Resistor("R1", "a", "b", 5.0),
        Inductor("L1", "b", "gnd", 1e-3, initial_current=-0.5),
        Resistor("R2", "a", "gnd", 200.0),
    ))
    w = simulate(c, method=name, until=3e-3, points=301, rtol=1e-10, atol=1e-13)
    v, i = w.states.T
    energy = 0.5 * 2e-6 * v**2 + 0.5 * 1e-3 * i**2
    assert np.all(np.diff(energy) <= 1e-9 * energy[0])
    assert energy[-1] < 0.01 * energy[0]


def test_work_counters_stay_small_for_exact_with_a_threshold():
    # Ceiling on work (diffrax-style structural check): one exponential per segment and step
    # length, plus the root finder's evaluations for the one threshold instant.
    R, C, V = 2.2e3, 4.7e-6, 48.0
    rule = ThresholdRule(closes=True, probe=NodeVoltage("out"), above=True, level=43.0)
    c = rc_circuit(R, C, V, Switch("K", "out", "x", rule), Resistor("R2", "x", "gnd", 100.0),
                   records=(NodeVoltage("out"),))
    w = simulate(c, method="exact", until=40e-3, step=1e-5, initial="rest")
    assert w.counters["segments"] == 2
    assert w.counters["expm_calls"] <= 4 + 60
    assert w.t.size == 4001 + 2  # the grid plus the two rows at the switching instant


@pytest.mark.parametrize("name", ALL)
def test_rc_driven_by_a_ramp(name):
    # Ramp response of RC (Nilsson & Riedel, ch. 7; from the step response by integration):
    # u = k (t − ts) on [ts, te] gives v = k[(t − ts) − τ(1 − e^{−(t − ts)/τ})]; after te the
    # held value V is approached with the same τ.  The ramp corners are segment breakpoints.
    R, C, V, ts, te = 1e3, 1e-6, 6.0, 0.5e-3, 2.5e-3
    tau, k = R * C, V / (te - ts)
    c = Circuit("ramp", "gnd", (VoltageSource("V1", "in", "gnd", Ramp(0.0, V, ts, te - ts)),
                                Resistor("R1", "in", "out", R), Capacitor("C1", "out", "gnd", C)),
                records=(NodeVoltage("out"),))
    w = run(c, name, 6e-3, rk4_step=1e-6, points=61, initial="rest")
    ramp = lambda t: k * ((t - ts) - tau * (1 - np.exp(-(t - ts) / tau)))  # noqa: E731
    t = w.t
    want = np.where(t <= ts, 0.0, np.where(t <= te, ramp(t), V + (ramp(te) - V) * np.exp(-(t - te) / tau)))
    assert rel_err(w["voltage at out"], want) < TOL[name]
    assert w.counters["segments"] == 3


@pytest.mark.parametrize("name", ALL)
def test_periodic_switch_piecewise_exponentials(name):
    # A load switched in and out periodically: each interval relaxes exponentially towards its own
    # Thévenin value (Nilsson & Riedel, ch. 7, sequential switching), chained interval by interval.
    R1, R2, C, V, period = 1e3, 1e3, 1e-6, 10.0, 1e-3
    c = rc_circuit(R1, C, V, Switch("K", "out", "x", PeriodicSchedule(period, 0.5, 0.0)),
                   Resistor("R2", "x", "gnd", R2), records=(NodeVoltage("out"),))
    w = run(c, name, 5e-3, rk4_step=1e-6, points=101, initial="rest")
    closed = (V * R2 / (R1 + R2), R1 * R2 / (R1 + R2) * C)  # (target, τ) with K closed
    opened = (V, R1 * C)
    edges = np.arange(0.0, 5e-3 + 1e-12, period / 2)
    want, v0 = np.empty_like(w.t), 0.0
    for j, (a, b) in enumerate(zip(edges[:-1], edges[1:])):
        target, tau = closed if j % 2 == 0 else opened
        inside = (w.t >= a) & (w.t <= b)
        want[inside] = target + (v0 - target) * np.exp(-(w.t[inside] - a) / tau)
        v0 = target + (v0 - target) * np.exp(-(b - a) / tau)
    assert rel_err(w["voltage at out"], want) < TOL[name]
    assert len(w.events) == 9  # opens at 0.5 ms, closes at 1 ms, … , opens at 4.5 ms


def test_exact_reuses_exponentials_when_configurations_recur():
    # Work ceiling: 100 segments of two alternating configurations on one uniform grid need
    # only a handful of distinct exponentials (step lengths differ only where grid and
    # switching instants interleave), not one or more per segment.
    c = rc_circuit(1e3, 1e-6, 10.0, Switch("K", "out", "x", PeriodicSchedule(1e-3, 0.5, 0.0)),
                   Resistor("R2", "x", "gnd", 1e3), records=(NodeVoltage("out"),))
    w = simulate(c, method="exact", until=50e-3, points=1001, initial="rest")
    assert w.counters["segments"] == 100
    assert w.counters["expm_calls"] <= 20
