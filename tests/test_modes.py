"""Modal figures checked against the second-order closed forms of circuit textbooks.

State matrices are written out in each test from Kirchhoff's laws, with states in
the circuit's order (capacitor voltages, then inductor currents).
"""
from __future__ import annotations

import doctest
import importlib

import numpy as np
import pytest
import scipy.signal
from hypothesis import given, settings
from hypothesis import strategies as st

from circuitode.errors import CircuitodeError
from circuitode.analysis.modes import (
    APERIODIC,
    CRITICALLY_DAMPED,
    GROWING_OSCILLATION,
    INTEGRATING,
    OVERDAMPED,
    UNDAMPED,
    UNDERDAMPED,
    ModeAnalysisError,
    analyse_modes,
    eigen_summary,
    mode_rows,
)

SERIES_NAMES = ("voltage across C1", "current through L1")

# The package exports a function named `measure` too; load the module itself.
measure = importlib.import_module("circuitode.analysis.measure")
modes_module = importlib.import_module("circuitode.analysis.modes")


def series_rlc(R: float, L: float, C: float) -> np.ndarray:
    """C dv/dt = i, L di/dt = −v − R i (series RLC, Nilsson & Riedel ch. 8)."""
    return np.array([[0.0, 1 / C], [-1 / L, -R / L]])


def parallel_rlc(R: float, L: float, C: float) -> np.ndarray:
    """C dv/dt = −v/R − i, L di/dt = v (parallel RLC, Nilsson & Riedel ch. 8)."""
    return np.array([[-1 / (R * C), -1 / C], [1 / L, 0.0]])


@pytest.mark.parametrize("R", [0.5, 4.7, 22.0])
def test_series_rlc_underdamped(R):
    # Nilsson & Riedel ch. 8; Alexander & Sadiku ch. 8: α = R/(2L), ω0 = 1/√(LC),
    # ζ = α/ω0 = (R/2)√(C/L), ωd = √(ω0² − α²).  Q = 1/(2ζ) = (1/R)√(L/C)
    # (Alexander & Sadiku, series resonance, ch. 14 from memory).  Time constant of the envelope 1/α.
    L, C = 2e-3, 10e-6
    (mode,) = analyse_modes(series_rlc(R, L, C), SERIES_NAMES)
    w0 = 1 / np.sqrt(L * C)
    alpha = R / (2 * L)
    assert mode.kind == UNDERDAMPED and mode.order == 2
    assert mode.natural_frequency == pytest.approx(w0, rel=1e-10)
    assert mode.natural_frequency_hz == pytest.approx(w0 / (2 * np.pi), rel=1e-10)
    assert mode.damping_ratio == pytest.approx(R / 2 * np.sqrt(C / L), rel=1e-10)
    assert mode.quality_factor == pytest.approx(np.sqrt(L / C) / R, rel=1e-10)
    assert mode.time_constant == pytest.approx(1 / alpha, rel=1e-10)
    assert mode.damped_frequency_hz == pytest.approx(np.sqrt(w0**2 - alpha**2) / (2 * np.pi), rel=1e-10)
    assert mode.eigenvalue.imag > 0 and mode.eigenvalues[1] == np.conj(mode.eigenvalue)


@pytest.mark.parametrize("R", [100.0, 330.0, 1e3])
def test_parallel_rlc_damping(R):
    # Nilsson & Riedel ch. 8: parallel RLC α = 1/(2RC), ω0 = 1/√(LC),
    # ζ = α/ω0 = (1/(2R))√(L/C).
    L, C = 2e-3, 10e-6
    modes = analyse_modes(parallel_rlc(R, L, C), SERIES_NAMES)
    zeta = 1 / (2 * R) * np.sqrt(L / C)
    assert len(modes) == 1
    assert modes[0].damping_ratio == pytest.approx(zeta, rel=1e-9)
    assert modes[0].natural_frequency == pytest.approx(1 / np.sqrt(L * C), rel=1e-9)
    assert modes[0].kind == (UNDERDAMPED if zeta < 1 else OVERDAMPED)


def test_series_rlc_overdamped_and_critically_damped():
    # Nilsson & Riedel ch. 8: roots s = −α ± √(α² − ω0²); overdamped when α > ω0,
    # critically damped when α = ω0 (R = 2√(L/C)).
    L, C = 1e-3, 1e-6
    R = 150.0
    (mode,) = analyse_modes(series_rlc(R, L, C), SERIES_NAMES)
    alpha, w0 = R / (2 * L), 1 / np.sqrt(L * C)
    roots = sorted([-alpha + np.sqrt(alpha**2 - w0**2), -alpha - np.sqrt(alpha**2 - w0**2)], key=abs)
    assert mode.kind == OVERDAMPED and mode.order == 2
    np.testing.assert_allclose([e.real for e in mode.eigenvalues], roots, rtol=1e-9)
    assert mode.damping_ratio == pytest.approx(alpha / w0, rel=1e-9) and mode.damping_ratio > 1
    assert mode.natural_frequency == pytest.approx(w0, rel=1e-9)
    assert mode.time_constant == pytest.approx(1 / abs(roots[0]), rel=1e-9)
    (critical,) = analyse_modes(series_rlc(2 * np.sqrt(L / C), L, C), SERIES_NAMES)
    assert critical.kind == CRITICALLY_DAMPED
    assert critical.damping_ratio == 1.0 and critical.quality_factor == 0.5
    assert critical.natural_frequency == pytest.approx(w0, rel=1e-6)


def test_undamped_lc_and_growing_oscillation():
    # Lossless LC: λ = ±j/√(LC), ζ = 0, Q infinite (Nilsson & Riedel ch. 8, undamped case).
    L, C = 1e-3, 1e-6
    (mode,) = analyse_modes(series_rlc(0.0, L, C), SERIES_NAMES)
    assert mode.kind == UNDAMPED
    assert mode.damping_ratio == 0.0 and mode.quality_factor == np.inf and mode.time_constant == np.inf
    # A negative resistance (an active circuit) makes the pair grow: ζ < 0.
    (growing,) = analyse_modes(series_rlc(-5.0, L, C), SERIES_NAMES)
    assert growing.kind == GROWING_OSCILLATION and growing.damping_ratio < 0


def test_first_order_and_integrating_modes():
    # RC discharge: λ = −1/RC, τ = RC (Nilsson & Riedel ch. 7).
    R, C = 470.0, 22e-6
    (mode,) = analyse_modes([[-1 / (R * C)]], ("voltage across C1",))
    assert mode.kind == APERIODIC and mode.order == 1
    assert mode.time_constant == pytest.approx(R * C, rel=1e-12)
    assert mode.damped_frequency_hz == 0.0
    # A capacitor charged by nothing but itself and another RC: one eigenvalue at zero
    # (charge is conserved; two capacitors joined through a resistor, Nilsson & Riedel ch. 7).
    R, C1, C2 = 10.0, 1e-3, 2e-3
    A = np.array([[-1 / (R * C1), 1 / (R * C1)], [1 / (R * C2), -1 / (R * C2)]])
    modes = analyse_modes(A, ("voltage across C1", "voltage across C2"))
    kinds = sorted(m.kind for m in modes)
    assert kinds == sorted([INTEGRATING, APERIODIC])
    fast = next(m for m in modes if m.kind == APERIODIC)
    # the other eigenvalue is −(1/(R C1) + 1/(R C2)) = −1/(R C_series) (trace of A)
    assert fast.time_constant == pytest.approx(R * C1 * C2 / (C1 + C2), rel=1e-10)


def test_slow_bleeder_beside_fast_modes_is_not_called_integrating():
    # A capacitor bank with a bleeder resistor: τ = R C = 6 s, next to microsecond modes
    # (stiffness ratio ~ 3·10⁶).  λ = −1/6 1/s is a real first-order mode (Nilsson &
    # Riedel ch. 7), not a zero eigenvalue.
    A = np.diag([-1 / 6.0, -5e5])
    slow, fast = analyse_modes(A, ("voltage across C_b1", "current through L_d1"))
    assert slow.kind == APERIODIC and slow.time_constant == pytest.approx(6.0)
    assert fast.time_constant == pytest.approx(2e-6)


def test_two_identical_rc_sections_are_not_called_critically_damped():
    # A repeated real eigenvalue from two separate RC circuits is two first-order modes;
    # "critically damped" needs an L–C pair (the rule in the module text).
    tau = 1e-3
    modes = analyse_modes(np.diag([-1 / tau, -1 / tau]), ("voltage across C1", "voltage across C2"))
    assert [m.kind for m in modes] == [APERIODIC, APERIODIC]


def test_participation_names_the_states_of_each_section():
    # Two decoupled series RLC sections (different frequencies); states in circuit order
    # C1, C2, L1, L2.  Each mode must be formed by its own C and L only.
    names = ("voltage across C1", "voltage across C2", "current through L1", "current through L2")
    A1 = series_rlc(2.0, 1e-3, 10e-6)  # ω0 = 10 krad/s
    A2 = series_rlc(5.0, 50e-6, 1e-6)  # ω0 ≈ 141 krad/s
    A = np.zeros((4, 4))
    first, second = [0, 2], [1, 3]
    A[np.ix_(first, first)] = A1
    A[np.ix_(second, second)] = A2
    slow, fast = analyse_modes(A, names)
    assert set(slow.main_states()) == {"voltage across C1", "current through L1"}
    assert set(fast.main_states()) == {"voltage across C2", "current through L2"}
    assert slow.natural_frequency == pytest.approx(1e4, rel=1e-9)
    assert sum(w for _, w in slow.participation) == pytest.approx(1.0)
    assert dict(slow.participation)["voltage across C2"] < 1e-12


def test_two_overdamped_sections_are_paired_within_each_section():
    # Two decoupled overdamped series RLC sections (states C1, C2, L1, L2): each pair of
    # real roots must form one overdamped mode of its own section, with the section's
    # ζ = (R/2)√(C/L) > 1 and ωn = 1/√(LC) (Nilsson & Riedel ch. 8).
    names = ("voltage across C1", "voltage across C2", "current through L1", "current through L2")
    sections = [(100.0, 1e-3, 1e-6), (9.0, 20e-6, 2e-6)]  # ζ ≈ 1.58 and 1.42
    A = np.zeros((4, 4))
    for idx, (R, L, C) in zip(([0, 2], [1, 3]), sections):
        A[np.ix_(idx, idx)] = series_rlc(R, L, C)
    zetas = [R / 2 * np.sqrt(C / L) for R, L, C in sections]
    assert all(z > 1 for z in zetas)
    modes = analyse_modes(A, names)
    assert [m.kind for m in modes] == [OVERDAMPED, OVERDAMPED]
    by_states = {frozenset(m.main_states()): m for m in modes}
    first = by_states[frozenset({"voltage across C1", "current through L1"})]
    second = by_states[frozenset({"voltage across C2", "current through L2"})]
    assert first.damping_ratio == pytest.approx(zetas[0], rel=1e-9)
    assert second.damping_ratio == pytest.approx(zetas[1], rel=1e-9)
    assert first.natural_frequency == pytest.approx(1 / np.sqrt(1e-3 * 1e-6), rel=1e-9)


def test_participation_does_not_depend_on_state_units():
    # Participation factors are invariant under a change of state scale (Pérez-Arriaga,
    # Verghese & Schweppe 1982, from memory): express the current in mA, x' = T x.
    L, C, R = 1e-3, 1e-6, 30.0
    A = series_rlc(R, L, C) + np.array([[-50.0, 0.0], [0.0, 0.0]])  # a leaky capacitor: unequal shares
    T = np.diag([1.0, 1e3])
    scaled = T @ A @ np.linalg.inv(T)
    (a,) = analyse_modes(A, SERIES_NAMES)
    (b,) = analyse_modes(scaled, SERIES_NAMES)
    assert dict(a.participation) == pytest.approx(dict(b.participation), rel=1e-8)


def test_modal_zeta_agrees_with_log_decrement_on_the_waveform():
    # One-mode circuit: series RLC driven by a 48 V step, output the capacitor voltage.
    # The waveform is produced by scipy.signal.step on the same A (an outside reference
    # integrator); ζ measured by logarithmic decrement (Ogata ch. 5) must agree with the
    # modal ζ = (R/2)√(C/L) within a few percent.
    R, L, C = 3.3, 220e-6, 47e-6
    A = series_rlc(R, L, C)
    B = np.array([[0.0], [1 / L]])
    system = scipy.signal.StateSpace(A, B, np.array([[1.0, 0.0]]), np.array([[0.0]]))
    (mode,) = analyse_modes(A, SERIES_NAMES)
    t = np.linspace(0.0, 12 * mode.time_constant, 20001)
    _, v = scipy.signal.step(system, T=t)
    v = 48.0 * v
    zeta_wave = measure.damping_ratio(t, v)
    assert zeta_wave == pytest.approx(mode.damping_ratio, rel=0.02)
    assert measure.damped_frequency(t, v) == pytest.approx(mode.damped_frequency_hz, rel=0.01)


def test_eigen_summary_batch_matches_single_analyses():
    rng = np.random.default_rng(3)
    R = rng.uniform(0.5, 80.0, size=6)
    L = rng.uniform(0.5e-3, 2e-3, size=6)
    C = rng.uniform(5e-6, 20e-6, size=6)
    stack = np.stack([series_rlc(r, l, c) for r, l, c in zip(R, L, C)])
    summary = eigen_summary(stack)
    assert summary["eigenvalues"].shape == (6, 2)
    assert np.any(np.isnan(summary["least_damping_ratio"])) and not np.all(np.isnan(summary["least_damping_ratio"]))
    for k in range(6):
        modes = analyse_modes(stack[k], SERIES_NAMES)
        ringing = [m for m in modes if m.kind == UNDERDAMPED]
        if ringing:
            assert summary["least_damping_ratio"][k] == pytest.approx(ringing[0].damping_ratio, rel=1e-9)
            assert summary["ringing_frequency"][k] == pytest.approx(ringing[0].damped_frequency_hz, rel=1e-9)
        else:
            assert np.isnan(summary["least_damping_ratio"][k])
        slowest = max(m.time_constant for m in modes)
        assert summary["slowest_time_constant"][k] == pytest.approx(slowest, rel=1e-9)
        assert summary["largest_real_part"][k] < 0  # passive circuit: Re λ < 0 (common practice)


def test_eigen_summary_of_a_failed_sample_is_nan():
    stack = np.stack([series_rlc(10.0, 1e-3, 1e-6), np.full((2, 2), np.nan)])
    summary = eigen_summary(stack)
    assert np.isfinite(summary["least_damping_ratio"][0])
    assert summary["least_damping_ratio"][0] == pytest.approx(5 * np.sqrt(1e-3))  # (R/2)√(C/L)
    for key in ("least_damping_ratio", "ringing_frequency", "slowest_time_constant", "largest_real_part"):
        assert np.isnan(summary[key][1]), key
    assert np.all(np.isnan(summary["eigenvalues"][1]))


def test_mode_rows_are_plain_numbers():
    L, C, R = 1e-3, 1e-6, 10.0
    rows = mode_rows(analyse_modes(series_rlc(R, L, C), SERIES_NAMES))
    (row,) = rows
    assert row["kind"] == UNDERDAMPED
    assert row["damping_ratio"] == pytest.approx(R / 2 * np.sqrt(C / L))
    assert row["eigenvalue_real"] == pytest.approx(-R / (2 * L))
    assert row["main_states"] == list(SERIES_NAMES) or row["main_states"] == list(SERIES_NAMES[::-1])
    assert all(isinstance(row[k], float) for k in ("natural_frequency", "quality_factor", "time_constant"))


@pytest.mark.parametrize(
    "A, names, words",
    [
        ([[1.0, 2.0, 3.0]], ("a",), "square"),
        ([[1.0, 0.0], [0.0, 1.0]], ("a",), "2 states"),
        ([[np.nan]], ("a",), "NaN"),
        ("not a matrix", ("a",), "real square array"),
    ],
)
def test_bad_matrices_get_our_error(A, names, words):
    with pytest.raises(ModeAnalysisError, match=words) as info:
        analyse_modes(A, names)
    assert isinstance(info.value, CircuitodeError)


def test_mismatched_state_units_get_our_error():
    with pytest.raises(ModeAnalysisError, match="state units"):
        analyse_modes(series_rlc(1.0, 1e-3, 1e-6), SERIES_NAMES, state_units=("V",))


def test_no_states_no_modes():
    assert analyse_modes(np.zeros((0, 0)), ()) == ()


def test_circuit_modes_for_each_switch_configuration():
    # Integration with topology.reachable_configurations and statespace.assemble on an
    # invented DC-link: 48 V pack, 50 mΩ internal resistance, 0.2 Ω pre-charge resistor
    # bypassed by K_main at 2 ms, 100 µH cable inductance, 1 mF link capacitor.
    # Each configuration is a series RLC: ζ = (R/2)√(C/L), ω0 = 1/√(LC)
    # (Nilsson & Riedel ch. 8) with R = R_int + R_pre before the bypass, R_int after.
    from circuitode.model import (
        Capacitor, Circuit, Inductor, Resistor, Switch, TimedSchedule, VoltageSource,
    )
    from circuitode.analysis.modes import circuit_modes
    from circuitode.model import Dc

    R_int, R_pre, L, C = 0.05, 0.2, 100e-6, 1e-3
    circuit = Circuit(
        title="DC-link with bypassed pre-charge",
        ground="gnd",
        elements=(
            VoltageSource("pack", "pos", "gnd", Dc(48.0)),
            Resistor("R_int", "pos", "a", R_int),
            Resistor("R_pre", "a", "b", R_pre),
            Switch("K_main", "a", "b", TimedSchedule(False, ((2e-3, True),))),
            Inductor("L_cable", "b", "link", L),
            Capacitor("C_link", "link", "gnd", C),
        ),
    )
    configurations = circuit_modes(circuit, until=10e-3)
    assert [c.closed for c in configurations] == [(False,), (True,)]
    assert configurations[1].first_time == pytest.approx(2e-3)
    assert "K_main closed" in configurations[1].description
    for configuration, R in zip(configurations, (R_int + R_pre, R_int)):
        (mode,) = configuration.modes
        assert mode.kind == UNDERDAMPED
        assert mode.damping_ratio == pytest.approx(R / 2 * np.sqrt(C / L), rel=1e-9)
        assert mode.natural_frequency == pytest.approx(1 / np.sqrt(L * C), rel=1e-9)
        assert set(mode.main_states()) == {"voltage across C_link", "current through L_cable"}
    rows = mode_rows(configurations[1].modes, configurations[1])
    assert rows[0]["configuration"] == configurations[1].description


def test_simulated_waveform_zeta_matches_modal_zeta_in_each_configuration():
    # End to end with the transient engine: the same invented DC link, the bypass closing
    # at 1 ms while the link still rings.  Each configuration is one series-RLC mode, so
    # the link voltage rings about 48 V with that mode's ζ and ωd; the logarithmic
    # decrement on the waveform (Ogata ch. 5) must agree with the modal ζ within 2 %.
    from circuitode.model import (
        Analysis, Capacitor, Circuit, Inductor, NodeVoltage, Resistor, Switch, TimedSchedule,
        VoltageSource,
    )
    from circuitode.analysis.modes import circuit_modes
    from circuitode.model import Dc
    from circuitode.transient import simulate

    R_int, R_pre, L, C = 0.05, 0.2, 100e-6, 1e-3
    switch_time = 1e-3
    circuit = Circuit(
        title="DC-link with early bypass",
        ground="gnd",
        elements=(
            VoltageSource("pack", "pos", "gnd", Dc(48.0)),
            Resistor("R_int", "pos", "a", R_int),
            Resistor("R_pre", "a", "b", R_pre),
            Switch("K_main", "a", "b", TimedSchedule(False, ((switch_time, True),))),
            Inductor("L_cable", "b", "link", L),
            Capacitor("C_link", "link", "gnd", C),
        ),
        analysis=Analysis(until=60e-3, points=30001, method="exact", initial="rest"),
        records=(NodeVoltage("link"),),
    )
    waves = simulate(circuit)
    v = waves.signals["voltage at link"]
    before, after = (c.modes[0] for c in circuit_modes(circuit))
    # The bypass closes before the first peak, so the ringing to measure is that of the
    # bypassed configuration: measure from the switching instant on.
    zeta = measure.damping_ratio(waves.t, v, start=switch_time)
    assert zeta == pytest.approx(after.damping_ratio, rel=0.02)
    assert measure.damped_frequency(waves.t, v, start=switch_time) == pytest.approx(
        after.damped_frequency_hz, rel=0.01
    )
    assert before.damping_ratio == pytest.approx((R_int + R_pre) / 2 * np.sqrt(C / L), rel=1e-9)


def test_docstring_examples_run():
    # The examples in the docstrings are checked numbers too (closed forms stated beside them).
    result = doctest.testmod(modes_module)
    assert result.attempted >= 3 and result.failed == 0


@settings(max_examples=60, deadline=None)
@given(
    st.integers(1, 6).flatmap(
        lambda n: st.tuples(
            st.just(n),
            st.lists(st.floats(-1e4, 1e4, allow_nan=False), min_size=n * n, max_size=n * n),
        )
    )
)
def test_modes_account_for_every_eigenvalue_once(case):
    # Linear algebra (any text): the eigenvalues of A, counted with multiplicity, sum to
    # trace A.  Whatever the grouping into pairs and sections, the modes must cover each
    # eigenvalue exactly once, and each mode's participation shares must sum to 1.
    n, entries = case
    A = np.array(entries).reshape(n, n)
    names = tuple(f"voltage across C{k}" if k % 2 else f"current through L{k}" for k in range(n))
    modes = analyse_modes(A, names)
    covered = [lam for mode in modes for lam in mode.eigenvalues]
    assert len(covered) == n
    scale = max(1.0, float(np.abs(A).sum()))
    assert abs(sum(covered) - np.trace(A)) <= 1e-6 * scale
    for mode in modes:
        assert sum(w for _, w in mode.participation) == pytest.approx(1.0)


def test_a_capacitor_without_a_discharge_path_is_integrating_not_growing():
    """Bridge example, K open and one diode conducting: the bulk capacitor has no path to
    discharge (λ = 0 exactly).  Eliminating the 20 mΩ diode beside a 470 nF capacitor
    (1e8 1/s) leaves rounding of about +3e-9 1/s in that configuration's A; it must read as
    integrating (λ = 0), never as a growing (unstable) mode (a fact of linear algebra: a
    capacitor with no resistive path holds its voltage)."""
    from pathlib import Path

    from circuitode.analysis.modes import GROWING, INTEGRATING, circuit_modes
    from circuitode.netlist import load

    circuit = load(Path(__file__).resolve().parent.parent / "netlists" / "bridge_rectifier.cnet")
    table = circuit_modes(circuit, circuit.analysis.until)
    kinds = [m.kind for conf in table for m in conf.modes]
    assert GROWING not in kinds
    assert INTEGRATING in kinds
