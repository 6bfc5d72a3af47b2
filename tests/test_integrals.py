"""Integrals of outputs carried by the solvers (circuitode.solvers.integrals,
circuitode.transient.window_integrals): energy, I²t, rms and mean exact to rounding with the exact
method whatever the output step, and over the dense output with the adaptive methods."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad_vec
from scipy.linalg import expm

from circuitode.analysis.measure import summarise
from circuitode.model import (Capacitor, Circuit, CurrentThrough, Inductor, NodeVoltage,
                                      PowerIn, Resistor, VoltageSource)
from circuitode.model import Dc, PulseTrain
from circuitode.solvers.integrals import output_moments
from circuitode.transient import simulate


def test_output_moments_match_adaptive_quadrature():
    # Independent reference: scipy.integrate.quad_vec of y(s) = G expm(M s) w0 and its products.
    rng = np.random.default_rng(7)
    M = rng.normal(size=(4, 4)) - 1.5 * np.eye(4)
    w0, G, h = rng.normal(size=4), rng.normal(size=(2, 4)), 2.3
    pairs = np.array([[0, 0], [0, 1], [1, 1]])
    got = output_moments(M, w0, h, G, pairs)

    def y(s):
        return G @ expm(M * s) @ w0

    ref_lin = quad_vec(y, 0, h, epsabs=1e-14, epsrel=1e-13)[0]
    ref_sq = quad_vec(lambda s: np.array([y(s)[0] ** 2, y(s)[0] * y(s)[1], y(s)[1] ** 2]),
                      0, h, epsabs=1e-14, epsrel=1e-13)[0]
    assert np.allclose(got.linear, ref_lin, rtol=1e-11, atol=1e-13)
    assert np.allclose(got.products, ref_sq, rtol=1e-11, atol=1e-13)


def test_output_moments_of_a_stiff_decay_do_not_overflow():
    # v' = (z − v)/τ with z = 5 held, τ = 1 ns, over 1 ms (h|λ| = 1e6): y = z − v = 5 e^(−t/τ),
    # ∫ y² = 25 τ/2 (closed form of the exponential integral, common practice).  The
    # documented rounding bound is about eps·h‖M‖₁ (2e-10 here).
    tau = 1e-9
    M = np.array([[-1 / tau, 1 / tau], [0.0, 0.0]])
    got = output_moments(M, np.array([0.0, 5.0]), 1e-3, np.array([[-1.0, 1.0]]), np.array([[0, 0]]))
    assert got.products[0] == pytest.approx(25 * tau / 2, rel=1e-9)
    assert got.linear[0] == pytest.approx(5 * tau, rel=1e-9)


def _rc(R, C, V, until, step):
    return Circuit("rc", "gnd", (VoltageSource("V1", "in", "gnd", Dc(V)),
                                 Resistor("R1", "in", "out", R),
                                 Capacitor("C1", "out", "gnd", C, initial_voltage=0.0)),
                   records=(NodeVoltage("out"), CurrentThrough("R1"), PowerIn("R1")))


@pytest.mark.parametrize("step", [10e-6, 1e-3])
def test_fast_rc_energy_and_i2t_are_exact_whatever_the_step(step):
    # 5 V step into 1 Ω and 1 nF (τ = 1 ns) over 1 ms: the resistor dissipates ½CV² and
    # ∫ i² dt = V²C/(2R) (Nilsson & Riedel, Electric Circuits, ch. 7: step response of RC;
    # the ½CV² loss in the charging resistor is a classic result).  The rows at a 10 µs or
    # 1 ms step see nothing of the decay; the figures must not depend on them.
    R, C, V = 1.0, 1e-9, 5.0
    w = simulate(_rc(R, C, V, 1e-3, step), until=1e-3, step=step, method="exact")
    figures = summarise(w)
    assert figures["power in R1"]["energy"][0] == pytest.approx(0.5 * C * V ** 2, rel=1e-9)
    assert figures["current through R1"]["i2t"][0] == pytest.approx(V ** 2 * C / (2 * R), rel=1e-9)
    # rms and mean over the window T: √(∫i²/T) and ∫i/T = CV/T (charge delivered, ch. 7)
    assert figures["current through R1"]["rms"][0] == pytest.approx(
        math.sqrt(V ** 2 * C / (2 * R) / 1e-3), rel=1e-9)
    assert w.integrals["current through R1"][0] / 1e-3 == pytest.approx(C * V / 1e-3, rel=1e-9)


def _series_rlc(R, L, C, V):
    return Circuit("rlc", "gnd", (VoltageSource("V1", "in", "gnd", Dc(V)),
                                  Resistor("R1", "in", "a", R),
                                  Inductor("L1", "a", "b", L, initial_current=0.0),
                                  Capacitor("C1", "b", "gnd", C, initial_voltage=0.0)),
                   records=(NodeVoltage("b"), CurrentThrough("R1"), PowerIn("R1")))


def test_series_rlc_energy_with_a_1_ms_step():
    # Series RLC charged from rest by a step V: at the end (decay e^(−αT), α = R/2L,
    # αT = 100) the resistor has dissipated ½CV² and ∫ i² = V²C/(2R) (energy balance;
    # Nilsson & Riedel ch. 8, step response of series RLC).  Output step 1 ms ≫ the
    # ringing period 2π√(LC) ≈ 0.2 ms.
    R, L, C, V = 10.0, 1e-3, 1e-6, 12.0
    w = simulate(_series_rlc(R, L, C, V), until=20e-3, step=1e-3, method="exact")
    figures = summarise(w)
    assert figures["power in R1"]["energy"][0] == pytest.approx(0.5 * C * V ** 2, rel=1e-9)
    assert figures["current through R1"]["i2t"][0] == pytest.approx(V ** 2 * C / (2 * R), rel=1e-9)


def _pulse_train_energy(R, C, V, width, period, count, until):
    """Sum of per-pulse closed forms for an RC driven by ideal rectangular pulses: charging
    from v0 towards V for the width dissipates C(V − v0)²/2 · (1 − e^(−2w/τ)); discharging
    from v1 for the rest dissipates C v1²/2 · (1 − e^(−2 t_off/τ)) (Nilsson & Riedel ch. 7)."""
    tau, v, total, t = R * C, 0.0, 0.0, 0.0
    for _ in range(count):
        total += C * (V - v) ** 2 / 2 * (1 - math.exp(-2 * width / tau))
        v = V + (v - V) * math.exp(-width / tau)
        off = min(period, until - t) - width
        total += C * v ** 2 / 2 * (1 - math.exp(-2 * off / tau))
        v *= math.exp(-off / tau)
        t += period
    return total


@pytest.mark.parametrize("count", [4, 20])
def test_pulse_train_energy_is_the_sum_of_per_pulse_closed_forms(count):
    # 5 V pulses, 100 µs wide every 300 µs, into 200 Ω and 1 µF (τ = 200 µs); rows every
    # 12 µs, so no edge falls on a row of the uniform grid.
    R, C, V, width, period = 200.0, 1e-6, 5.0, 100e-6, 300e-6
    until = count * period
    c = Circuit("train", "gnd", (
        VoltageSource("V1", "in", "gnd", PulseTrain(low=0.0, high=V, delay=0.0, rise=0.0, fall=0.0,
                                                    width=width, period=period, count=count)),
        Resistor("R1", "in", "out", R), Capacitor("C1", "out", "gnd", C, initial_voltage=0.0)),
        records=(PowerIn("R1"),))
    w = simulate(c, until=until, step=12e-6, method="exact")
    expected = _pulse_train_energy(R, C, V, width, period, count, until)
    assert summarise(w)["power in R1"]["energy"][0] == pytest.approx(expected, rel=1e-9)


@pytest.mark.parametrize("method", ["rk45", "dop853", "radau", "bdf"])
def test_adaptive_methods_integrate_over_their_dense_output(method):
    # Same closed forms as above (Nilsson & Riedel ch. 7); τ = 1 ms, window 20 τ.  The
    # integrals are taken over the method's own dense output, so their error follows
    # rtol = 1e-6, not the 1 ms output step.
    R, C, V = 1e3, 1e-6, 10.0
    w = simulate(_rc(R, C, V, 20e-3, 1e-3), until=20e-3, step=1e-3, method=method)
    figures = summarise(w)
    assert figures["power in R1"]["energy"][0] == pytest.approx(0.5 * C * V ** 2, rel=1e-4)
    assert figures["current through R1"]["i2t"][0] == pytest.approx(V ** 2 * C / (2 * R), rel=1e-4)


def test_rk4_has_no_carried_integrals_and_falls_back_to_the_rows():
    # rk4 steps at the output step and carries no integrals: the figures are the trapezoid
    # over its rows, close to ½CV² at a fine step (same closed form, ch. 7).
    R, C, V = 1e3, 1e-6, 10.0
    w = simulate(_rc(R, C, V, 20e-3, 10e-6), until=20e-3, step=10e-6, method="rk4")
    assert w.integrals == {}
    assert summarise(w)["power in R1"]["energy"][0] == pytest.approx(0.5 * C * V ** 2, rel=1e-3)


def test_every_source_edge_is_a_pair_of_rows():
    # Edges of a pulse train at 0, 100 µs, 300 µs, 400 µs … with rows every 12 µs: each edge
    # gets the rows just before and just after (as switch instants do), so the source jumps
    # between two rows at the edge instant (definition of an ideal pulse, IEEE Std 181 terms).
    c = Circuit("train", "gnd", (
        VoltageSource("V1", "in", "gnd", PulseTrain(low=0.0, high=5.0, delay=0.0, rise=0.0, fall=0.0,
                                                    width=100e-6, period=300e-6, count=4)),
        Resistor("R1", "in", "out", 200.0), Capacitor("C1", "out", "gnd", 1e-6, initial_voltage=0.0)),
        records=(NodeVoltage("in"),))
    w = simulate(c, until=1.2e-3, step=12e-6, method="exact")
    for edge, (before, after) in {100e-6: (5.0, 0.0), 300e-6: (0.0, 5.0), 700e-6: (5.0, 0.0)}.items():
        rows = np.flatnonzero(np.abs(w.t - edge) < 1e-15)
        assert rows.size == 2
        assert w["voltage at in"][rows].tolist() == [before, after]
    assert np.all(np.diff(w.t) >= 0)


FAST_RC_BATCH = """
circuit "fast RC, spread capacitor"
param C_x = 1 nF ± 20 % uniform
ground gnd
voltage_source V1 in -- gnd  constant 5 V
resistor  R1  in -- out      1 Ω
capacitor C1  out -- gnd     C_x  initial 0 V
transient until 1 ms step 10 us method exact initial given
record current through R1, power in R1
"""


def test_batch_energy_and_i2t_are_exact_per_sample():
    # Each sample: ½ C V² dissipated and ∫ i² = V²C/(2R) (Nilsson & Riedel ch. 7), with the
    # sample's own C, though the 10 µs rows never see the 1 ns decay.
    from circuitode.netlist import loads
    from circuitode.tolerance.batch import batch_figure_keys, run_chunk
    from circuitode.tolerance.sampling import draw_samples, spreads_with_overrides

    circuit = loads(FAST_RC_BATCH)
    table = draw_samples(spreads_with_overrides(circuit), 16, "mc", 3)
    probes, keys = batch_figure_keys(circuit)
    res = run_chunk({"circuit": circuit, "names": table.names, "values": table.values, "start": 0,
                     "keys": keys, "probes": probes, "method": "exact"})
    C = table.values[:, table.names.index("C_x")]
    energy = res["figures"][:, keys.index(("energy", "power in R1"))]
    i2t = res["figures"][:, keys.index(("i2t", "current through R1"))]
    assert np.allclose(energy, 0.5 * C * 25.0, rtol=1e-9, atol=0)
    assert np.allclose(i2t, 25.0 * C / 2.0, rtol=1e-9, atol=0)


def test_series_rlc_peak_time_and_overshoot_located_between_rows():
    # Series RLC step response of the capacitor voltage (underdamped): the peak comes at
    # t_p = π/ω_d with overshoot exp(−ζπ/√(1−ζ²)) (Ogata, Modern Control Engineering, ch. 5;
    # Nilsson & Riedel ch. 8), ω_n = 1/√(LC), ζ = (R/2)√(C/L).  Rows every T_d/7 with an
    # offset, so no row falls on the peak.
    R, L, C, V = 10.0, 1e-3, 1e-6, 12.0
    wn, zeta = 1 / math.sqrt(L * C), R / 2 * math.sqrt(C / L)
    wd = wn * math.sqrt(1 - zeta ** 2)
    Td = 2 * math.pi / wd
    w = simulate(_series_rlc(R, L, C, V), until=40 * Td + 0.3 * Td / 7, step=Td / 7, method="exact")
    figures = summarise(w)["voltage at b"]
    assert figures["time_of_peak"][0] == pytest.approx(math.pi / wd, rel=1e-9)
    assert figures["peak"][0] == pytest.approx(V * (1 + math.exp(-zeta * math.pi / math.sqrt(1 - zeta ** 2))),
                                               rel=1e-9)
    assert figures["overshoot"][0] == pytest.approx(
        100 * math.exp(-zeta * math.pi / math.sqrt(1 - zeta ** 2)), rel=1e-9)
    # the rows alone miss it: the largest row is below the located peak
    assert np.max(w["voltage at b"]) < figures["peak"][0] * (1 - 1e-4)


def test_coarse_step_warns_with_the_step_that_resolves_it(tmp_path, capsys):
    # The 1 Ω / 1 nF case at a 10 µs step, as a new user runs it: exact energy and I²t
    # printed (½CV² = 12.5 nJ, V²C/2R = 12.5 nA²s; Nilsson & Riedel ch. 7) and a warning,
    # under the table and in summary.json, naming the 1 ns time constant as the step to use.
    import json

    from circuitode.cli import main

    netlist = tmp_path / "fast.cnet"
    netlist.write_text('circuit "fast"\nground gnd\nvoltage_source V1 in -- gnd constant 5 V\n'
                       "resistor R1 in -- out 1 Ω\ncapacitor C1 out -- gnd 1 nF initial 0 V\n"
                       "transient until 1 ms step 10 us\nrecord current through R1, power in R1\n",
                       encoding="utf-8")
    assert main(["run", str(netlist), "--out", str(tmp_path / "o"), "--no-plots"]) == 0
    text = capsys.readouterr().out
    assert "energy 12.5 nJ" in text and "I²t 12.5 nA²s" in text
    table_end = text.index("power in R1")
    warning = text.index("warning: the output step 10 µs")
    assert warning > table_end and "a step of 1 ns or less" in text.replace("\n", " ")
    summary = json.loads((tmp_path / "o" / "summary.json").read_text(encoding="utf-8"))
    assert any("time constant 1 ns" in w for w in summary["warnings"])


def test_a_resolving_step_gives_no_warning():
    # Same RC with τ = 1 ms and a 10 µs step: h·|λ| = 0.01, nothing to warn about.
    from circuitode.analysis.resolution import resolution_warnings

    w = simulate(_rc(1e3, 1e-6, 10.0, 5e-3, 10e-6), until=5e-3, step=10e-6, method="exact")
    assert w.fastest_seen_rate == pytest.approx(1e3, rel=1e-12)
    assert resolution_warnings(w) == []


def test_final_carries_a_settled_flag():
    # A series RLC still ringing at the end of a short window has not settled; the same
    # circuit after 40 decay constants has (decay e^(−αt), α = R/2L; Nilsson & Riedel ch. 8).
    R, L, C, V = 10.0, 1e-3, 1e-6, 12.0
    short = summarise(simulate(_series_rlc(R, L, C, V), until=0.5e-3, step=1e-6, method="exact"))
    long = summarise(simulate(_series_rlc(R, L, C, V), until=8e-3, step=1e-6, method="exact"))
    assert short["voltage at b"]["settled"][0] is False
    assert long["voltage at b"]["settled"][0] is True


def test_fast_rc_rise_and_settling_located_on_the_solution():
    # First-order step response: 10–90 % rise time τ ln 9 and 2 % settling time τ ln 50
    # (Ogata, Modern Control Engineering, ch. 5, first-order systems), τ = 1 ns, though
    # the rows are 10 µs apart.
    tau = 1.0 * 1e-9
    w = simulate(_rc(1.0, 1e-9, 5.0, 1e-3, 10e-6), until=1e-3, step=10e-6, method="exact")
    figures = summarise(w)["voltage at out"]
    assert figures["rise_time"][0] == pytest.approx(tau * math.log(9), rel=1e-9)
    assert figures["settling_time"][0] == pytest.approx(tau * math.log(50), rel=1e-9)
