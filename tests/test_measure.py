"""Waveform figures checked against closed forms from circuit and control textbooks.

Reference responses are generated here from their textbook formulas, never by the
code under test.
"""
from __future__ import annotations

import doctest
import importlib
from types import SimpleNamespace

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from circuitode.model import FIGURES
from circuitode.errors import CircuitodeError
from circuitode.analysis.measure import MeasurementError

# The package exports a function named `measure` too; load the module itself.
m = importlib.import_module("circuitode.analysis.measure")


def second_order_step(zeta: float, wn: float, t: np.ndarray) -> np.ndarray:
    """Unit step response of wn² / (s² + 2ζwn s + wn²), 0 < ζ < 1
    (Ogata, Modern Control Engineering, ch. 5, eq. for the underdamped case)."""
    root = np.sqrt(1 - zeta**2)
    wd = wn * root
    return 1 - np.exp(-zeta * wn * t) * (np.cos(wd * t) + zeta / root * np.sin(wd * t))


WN = 2 * np.pi * 50.0  # rad/s, an invented 50 Hz resonance


@pytest.mark.parametrize("zeta", [0.2, 0.5, 0.7])
def test_second_order_overshoot_peak_time_and_undershoot(zeta):
    # Ogata ch. 5 / Nise ch. 4: Mp = exp(-ζπ/√(1-ζ²)), tp = π/ωd; the k-th extremum of
    # the step response has height exp(-kζπ/√(1-ζ²)) about the final value, so the
    # first trough (post-transition undershoot) is exp(-2ζπ/√(1-ζ²)).
    t = np.linspace(0.0, 0.3, 30001)
    dt = t[1] - t[0]
    y = second_order_step(zeta, WN, t)
    root = np.sqrt(1 - zeta**2)
    wd = WN * root
    expected_mp = 100 * np.exp(-zeta * np.pi / root)
    assert m.overshoot(t, y, final=1.0) == pytest.approx(expected_mp, rel=1e-5, abs=1e-6)
    assert abs(m.time_of_peak(t, y) - np.pi / wd) <= dt
    # the sampled maximum misses the true one by at most ~ (ωd Δt)² / 8 relative
    assert m.peak(t, y) == pytest.approx(1 + expected_mp / 100, rel=1e-6)
    expected_under = 100 * np.exp(-2 * zeta * np.pi / root)
    assert m.undershoot(t, y, final=1.0) == pytest.approx(expected_under, rel=1e-4, abs=1e-6)


@pytest.mark.parametrize("zeta", [0.2, 0.5, 0.7])
def test_second_order_settling_time_within_envelope_bound(zeta):
    # Ogata ch. 5: the response stays inside the envelope 1 ± exp(-ζωn t)/√(1-ζ²), so it is
    # inside a 2 % band after ts_env = -ln(0.02 √(1-ζ²)) / (ζωn); the rule of thumb
    # ts ≈ 4/(ζωn) comes from that envelope (Nise ch. 4), so the measured value must be
    # within a modest factor of it.
    t = np.linspace(0.0, 0.5, 50001)
    y = second_order_step(zeta, WN, t)
    measured = m.settling_time(t, y, final=1.0)
    envelope_bound = -np.log(0.02 * np.sqrt(1 - zeta**2)) / (zeta * WN)
    rule = 4 / (zeta * WN)
    assert measured <= envelope_bound + (t[1] - t[0])
    assert 0.6 * rule < measured < 1.1 * rule
    # The signal really is inside the band after the measured instant and outside just before.
    after = t > measured + 1e-9
    assert np.all(np.abs(y[after] - 1) <= 0.02 + 1e-12)
    just_before = np.searchsorted(t, measured) - 1
    assert abs(y[just_before] - 1) > 0.02 - 1e-4


@pytest.mark.parametrize("zeta", [0.2, 0.7])
def test_second_order_rise_time_matches_root_finding(zeta):
    # Reference: the 10 % and 90 % crossing instants of the closed-form response found by
    # scipy.optimize.brentq (Ogata ch. 5 gives no closed form for the 10–90 % rise time).
    t = np.linspace(0.0, 0.2, 20001)
    y = second_order_step(zeta, WN, t)
    tp = np.pi / (WN * np.sqrt(1 - zeta**2))
    t10 = brentq(lambda s: second_order_step(zeta, WN, np.array(s)) - 0.1, 1e-9, tp)
    t90 = brentq(lambda s: second_order_step(zeta, WN, np.array(s)) - 0.9, 1e-9, tp)
    assert m.rise_time(t, y, final=1.0) == pytest.approx(t90 - t10, rel=1e-4)


@pytest.mark.parametrize("direction", [+1.0, -1.0])
def test_first_order_rise_time_is_tau_ln9(direction):
    # 10–90 % rise time of a first-order step = τ ln 9 ≈ 2.2 τ (common practice;
    # Alexander & Sadiku ch. 7 for the exponential response). Same for a falling step.
    tau = 2.2e-3
    t = np.linspace(0.0, 20 * tau, 8001)
    y = 5.0 + direction * 12.0 * (1 - np.exp(-t / tau))
    assert m.rise_time(t, y, final=5.0 + direction * 12.0) == pytest.approx(tau * np.log(9), rel=1e-5)
    # First order never overshoots and settles to 2 % after τ ln 50 (same formula).
    assert m.overshoot(t, y, final=5.0 + direction * 12.0) == 0.0
    assert m.settling_time(t, y, final=5.0 + direction * 12.0) == pytest.approx(tau * np.log(50), rel=1e-5)


@pytest.mark.parametrize("zeta_true", [0.05, 0.2, 0.45])
def test_damping_ratio_from_logarithmic_decrement_of_damped_sine(zeta_true):
    # Ogata ch. 5: x = X e^{-σt} sin(ωd t + φ), δ = ln(x_k/x_{k+1}) = σ Td and
    # ζ = δ / √(4π² + δ²) = σ / √(σ² + ωd²).
    fd = 1.3e3  # Hz
    wd = 2 * np.pi * fd
    sigma = zeta_true * wd / np.sqrt(1 - zeta_true**2)
    t = np.linspace(0.0, 12 / fd, 24001)
    offset = 48.0
    y = offset + 7.0 * np.exp(-sigma * t) * np.sin(wd * t + 0.4)
    zeta = m.damping_ratio(t, y)
    assert zeta == pytest.approx(zeta_true, rel=2e-4)
    delta = sigma / fd
    assert zeta == pytest.approx(delta / np.sqrt(4 * np.pi**2 + delta**2), rel=2e-4)
    assert m.damped_frequency(t, y) == pytest.approx(fd, rel=1e-4)


def test_damping_ratio_of_step_response_and_coarse_sampling():
    # Ogata ch. 5: the underdamped step response rings about 1 with decrement 2πζ/√(1-ζ²).
    zeta = 0.3
    t = np.linspace(0.0, 0.3, 1201)  # only ~ 50 samples per period: parabolic refinement matters
    y = second_order_step(zeta, WN, t)
    assert m.damping_ratio(t, y) == pytest.approx(zeta, rel=5e-3)
    assert m.damped_frequency(t, y) == pytest.approx(WN * np.sqrt(1 - zeta**2) / (2 * np.pi), rel=1e-3)


def test_no_ringing_gives_nan_not_an_error():
    t = np.linspace(0.0, 1.0, 1001)
    first_order = 1 - np.exp(-t / 0.1)
    # Critically damped second order: 1 - (1 + ωn t) e^{-ωn t} (Ogata ch. 5) never crosses 1.
    critical = 1 - (1 + 30 * t) * np.exp(-30 * t)
    batch = np.stack([first_order, critical])
    assert np.all(np.isnan(m.damping_ratio(t, batch)))
    assert np.all(np.isnan(m.damped_frequency(t, batch)))
    # A constant signal has no step: step figures are NaN, not a division error.
    flat = np.full_like(t, 3.0)
    assert np.isnan(m.overshoot(t, flat)) and np.isnan(m.rise_time(t, flat))


def test_waveforms_that_are_not_one_damped_sinusoid_give_nan():
    t = np.linspace(0.0, 0.05, 5001)
    i = 30.0 * np.exp(-200 * t) * np.sin(2 * np.pi * 100 * t)
    # Ogata ch. 5: a damped sine e^{-σt} sin(ωd t) has ζ = σ/√(σ² + ωd²).
    assert m.damping_ratio(t, i) == pytest.approx(200 / np.hypot(200, 2 * np.pi * 100), rel=1e-3)
    # Power in a resistor carrying it, p = R i², swings between 0 and peaks that fall in
    # pairs: not one geometric decay, so no decrement is reported.
    assert np.isnan(m.damping_ratio(t, 0.1 * i * i))
    # Two modes of comparable size superposed: no single ζ exists.
    two = i + 12.0 * np.exp(-300 * t) * np.sin(2 * np.pi * 370 * t)
    assert np.isnan(m.damping_ratio(t, two)) and np.isnan(m.damped_frequency(t, two))
    # Ringing that has decayed to round-off level (1e-12 of the swing) is noise, not ringing.
    late = t > 0.03
    tail = np.where(late, 1.0 + 1e-12 * np.sin(2 * np.pi * 1e3 * t), 1.0 - np.exp(-t / 1e-3))
    assert np.isnan(m.damping_ratio(t, tail, start=0.03))


def test_damping_of_a_run_that_ends_while_still_ringing():
    # ζ = 0.05 (Ogata ch. 5 closed form), the record stops after 3.4 periods, far
    # from settled, at an arbitrary phase: the decrement of the swings between successive
    # extrema does not depend on the final level, so no final value is needed.
    zeta = 0.05
    wd = WN * np.sqrt(1 - zeta**2)
    t = np.linspace(0.0, 3.4 * 2 * np.pi / wd, 6001)
    y = second_order_step(zeta, WN, t)
    assert abs(y[-1] - 1.0) > 0.1  # the last sample is nowhere near the final value
    assert m.damping_ratio(t, y) == pytest.approx(zeta, rel=1e-3)
    assert m.damped_frequency(t, y) == pytest.approx(wd / (2 * np.pi), rel=1e-3)


def test_rc_charging_i2t_and_resistor_energy():
    # Nilsson & Riedel ch. 7 (RC step response): i(t) = (V/R) e^{-t/RC}.
    # ∫0^∞ i² dt = V² C / (2R); energy dissipated in R = ∫ i² R dt = ½ C V², the same as
    # the energy finally stored in C.
    V, R, C = 400.0, 8.2, 2.2e-3
    tau = R * C
    t = np.linspace(0.0, 30 * tau, 60001)
    i = V / R * np.exp(-t / tau)
    assert m.i2t(t, i) == pytest.approx(V**2 * C / (2 * R), rel=1e-6)
    assert m.energy(t, i * i * R) == pytest.approx(0.5 * C * V**2, rel=1e-6)
    assert m.peak(t, i) == pytest.approx(V / R)
    # Partial window [τ, 2τ]: ∫ (V/R)² e^{-2t/τ} dt = (V/R)² τ/2 (e^{-2} - e^{-4}).
    partial = (V / R) ** 2 * tau / 2 * (np.exp(-2) - np.exp(-4))
    assert m.i2t(t, i, start=tau, end=2 * tau) == pytest.approx(partial, rel=1e-6)


def test_rms_and_mean_of_sine_over_whole_periods():
    # rms of A sin(ωt) over whole periods = A/√2; mean of an offset sine = the offset
    # (Alexander & Sadiku, effective value, ch. 11 from memory).
    f = 50.0
    t = np.linspace(0.0, 0.1, 5001)
    y = 325.0 * np.sin(2 * np.pi * f * t)
    assert m.rms(t, y) == pytest.approx(325.0 / np.sqrt(2), rel=1e-6)
    # A window whose ends fall between samples, still three whole periods long.
    start = 0.0123456
    assert m.rms(t, y, start=start, end=start + 3 / f) == pytest.approx(325.0 / np.sqrt(2), rel=1e-5)
    assert m.mean(t, 2.0 + y, start=start, end=start + 3 / f) == pytest.approx(2.0, abs=1e-4)


def test_repeated_event_instants():
    # A switch event recorded twice: 0 V up to 1 ms, 10 V from 1 ms on (exact integral known).
    t = np.array([0.0, 0.5e-3, 1e-3, 1e-3, 2e-3, 3e-3])
    y = np.array([0.0, 0.0, 0.0, 10.0, 10.0, 10.0])
    assert m.mean(t, y) == pytest.approx(10.0 * 2e-3 / 3e-3)
    assert m.i2t(t, y) == pytest.approx(100.0 * 2e-3)
    # The jump is an interval of zero length: skipped, not an infinite slope.
    assert m.max_slope(t, y) == 0.0
    # A window that starts exactly on the event takes the value just after it.
    assert m.mean(t, y, start=1e-3) == pytest.approx(10.0)
    assert m.mean(t, y, end=1e-3) == pytest.approx(0.0)
    # Rise time of an instantaneous step is zero; it rises at the event instant.
    assert m.rise_time(t, y) == 0.0


def test_max_slope_of_ramp_and_sine():
    # d/dt A sin(ωt) peaks at Aω (calculus); sampled finite differences approach it.
    t = np.linspace(0.0, 0.02, 20001)
    y = 10.0 * np.sin(2 * np.pi * 50 * t)
    assert m.max_slope(t, y) == pytest.approx(10.0 * 2 * np.pi * 50, rel=1e-5)
    assert m.max_slope(t, -3.0 * t) == pytest.approx(3.0)


def test_final_value_with_window_averages_ripple():
    t = np.linspace(0.0, 0.1, 10001)
    y = 12.0 + 0.5 * np.sin(2 * np.pi * 1e3 * t)
    assert m.final(t, y) == pytest.approx(y[-1])
    assert m.final(t, y, window=5e-3) == pytest.approx(12.0, abs=1e-6)  # five whole ripple periods


def test_settling_nan_when_not_settled_and_zero_when_never_out():
    t = np.linspace(0.0, 1.0, 101)
    slow = 1 - np.exp(-t / 10.0)  # still far from the 1.0 final level at the end
    assert np.isnan(m.settling_time(t, slow, final=1.0))
    inside = 1.0 + 0.001 * np.sin(t)
    assert m.settling_time(t, inside, initial=0.0, final=1.0) == 0.0


def test_settling_needs_the_signal_to_stay_in_band_before_the_run_ends():
    # A ringing step cut off while it still rings: with the final level taken from the
    # last sample, the last sample is trivially "in band"; without the dwell rule the
    # settling time would be reported as about the end of the run.
    zeta = 0.05
    t = np.linspace(0.0, 0.05, 5001)  # 4/(ζωn) ≈ 0.25 s: far from settled at 50 ms
    y = second_order_step(zeta, WN, t)
    assert np.isnan(m.settling_time(t, y))
    without_rule = m.settling_time(t, y, dwell=0.0)
    assert without_rule > 0.045  # what the rule protects against
    # The same signal with the true final value given is not settled either (Ogata ch. 5).
    assert np.isnan(m.settling_time(t, y, final=1.0))


def test_batched_equals_loop_of_single_calls():
    rng = np.random.default_rng(7)
    t = np.linspace(0.0, 0.2, 4001)
    zetas = rng.uniform(0.1, 0.8, size=(3, 4))
    wns = rng.uniform(100.0, 400.0, size=(3, 4))
    y = 1 - np.exp(-zetas[..., None] * wns[..., None] * t) * (
        np.cos(wns[..., None] * np.sqrt(1 - zetas[..., None] ** 2) * t)
        + zetas[..., None] / np.sqrt(1 - zetas[..., None] ** 2) * np.sin(wns[..., None] * np.sqrt(1 - zetas[..., None] ** 2) * t)
    )
    for name in m.FIGURE_UNITS:
        unit = "W" if name == "energy" else "V"
        batched = m.measure(name, t, y, signal_unit=unit)
        assert batched.shape == (3, 4), name
        looped = np.array([[m.measure(name, t, y[i, j], signal_unit=unit) for j in range(4)] for i in range(3)])
        np.testing.assert_allclose(batched, looped, rtol=1e-12, equal_nan=True, err_msg=name)
    # and the batch figures are right, not only consistent: overshoot per sample (Ogata ch. 5)
    expected = 100 * np.exp(-zetas * np.pi / np.sqrt(1 - zetas**2))
    np.testing.assert_allclose(m.overshoot(t, y, final=1.0), expected, rtol=1e-4)


def test_per_signal_clocks_equal_single_calls():
    # A tolerance batch in which a threshold switch acts at a different instant in each
    # sample: each row has its own clock, with its event instant recorded twice.  Every
    # figure of the batch must equal the figure of each row measured alone.
    rng = np.random.default_rng(11)
    n = 5
    base = np.linspace(0.0, 0.1, 3000)
    events = rng.uniform(0.01, 0.03, size=n)
    t = np.sort(np.concatenate([np.broadcast_to(base, (n, base.size)), events[:, None], events[:, None]], axis=1))
    at_event = t == events[:, None]
    after = (t > events[:, None]) | (at_event & (np.cumsum(at_event, axis=1) == 2))
    zeta = rng.uniform(0.1, 0.5, size=n)[:, None]
    wn = 300.0
    tau = np.clip(t - events[:, None], 0.0, None)
    wd = wn * np.sqrt(1 - zeta**2)
    ring = 1 - np.exp(-zeta * wn * tau) * (np.cos(wd * tau) + zeta / np.sqrt(1 - zeta**2) * np.sin(wd * tau))
    # 0 before the event; from the second copy of the event instant on, a 0.2 jump plus ringing to 1.2
    y = np.where(after, 0.2 + ring, 0.0)
    assert np.all(np.sum(np.diff(t, axis=1) == 0, axis=1) == 1)  # one repeated instant per row
    assert np.all(np.max(np.abs(np.diff(y, axis=1)), axis=1) >= 0.2)  # with a jump at it
    options = {"settling_time": {"start": events}, "damping_ratio": {"start": events}, "mean": {"start": events}}
    for name in m.FIGURE_UNITS:
        unit = "W" if name == "energy" else "V"
        opts = options.get(name, {})
        batched = m.measure(name, t, y, signal_unit=unit, **opts)
        looped = np.array(
            [m.measure(name, t[i], y[i], signal_unit=unit, **{k: v[i] for k, v in opts.items()}) for i in range(n)]
        )
        np.testing.assert_allclose(batched, looped, rtol=1e-12, equal_nan=True, err_msg=name)
    # and right: overshoot about the final value 1.2 of a 0 → 1.2 step is 100·e^{-ζπ/√(1-ζ²)}/1.2
    expected = 100 * np.exp(-zeta[:, 0] * np.pi / np.sqrt(1 - zeta[:, 0] ** 2)) / 1.2
    np.testing.assert_allclose(m.overshoot(t, y, final=1.2), expected, rtol=1e-3)


def test_failed_sample_gives_nan_for_every_figure():
    # A batch row that failed upstream arrives as NaN; no figure may turn it into a number.
    t = np.linspace(0.0, 0.2, 2001)
    good = second_order_step(0.3, WN, t)
    y = np.stack([good, np.full_like(t, np.nan)])
    for name in m.FIGURE_UNITS:
        values = m.measure(name, t, y, signal_unit="W" if name == "energy" else "V")
        assert np.isnan(values[1]), name
        assert np.isfinite(values[0]), name


@settings(max_examples=40, deadline=None)
@given(st.lists(st.floats(-1e3, 1e3), min_size=3, max_size=40))
def test_rms_bounds_mean_and_peak(values):
    # Cauchy–Schwarz: |mean| ≤ rms ≤ max |y| for any signal (any analysis text).
    y = np.asarray(values)
    t = np.linspace(0.0, 1.0, y.size)
    assert abs(m.mean(t, y)) <= m.rms(t, y) * (1 + 1e-12) + 1e-12
    assert m.rms(t, y) <= np.max(np.abs(y)) * (1 + 1e-12) + 1e-12


def test_peak_is_the_largest_magnitude_and_keeps_its_instant():
    # Surge ratings are magnitudes (common practice): a discharge current that is
    # negative under the reference directions must not slip under a "peak <" limit.
    # A damped cosine e^(-t) cos(2πt): the first extreme is +1 at t = 0, but on a
    # signal shifted by -1.5 the trough near t = 0.5 (-1.5 - e^(-0.5)) dominates.
    t = np.linspace(0.0, 3.0, 3001)
    y = np.exp(-t) * np.cos(2 * np.pi * t) - 1.5
    k = np.argmax(np.abs(y))
    assert m.peak(t, y) == pytest.approx(abs(y[k])) and m.peak(t, y) > 0
    assert m.peak(t, y) == pytest.approx(1.5 + np.exp(-t[k]) * abs(np.cos(2 * np.pi * t[k])))
    assert m.time_of_peak(t, y) == pytest.approx(t[k])
    assert m.minimum(t, y) == pytest.approx(y[k])  # the signed extreme stays available
    # batched rows agree with single rows, including a positive one
    both = np.stack([y, -y])
    assert np.allclose(m.peak(t, both), [m.peak(t, y), m.peak(t, -y)])


def test_figure_units():
    assert m.figure_unit("i2t", "A") == "A²s"
    assert m.figure_unit("max_slope", "V") == "V/s"
    assert m.figure_unit("energy", "W") == "J"
    assert m.figure_unit("overshoot", "A") == "%"
    assert m.figure_unit("damped_frequency", "V") == "Hz"
    assert m.figure_unit("damping_ratio", "V") == ""
    # every figure a requirement may name can be measured and has a unit
    for name in FIGURES:
        assert name in m.FIGURE_UNITS


@pytest.mark.parametrize(
    "call, words",
    [
        (lambda: m.measure("peak_current", [0, 1], [0, 1], signal_unit="A"), "unknown figure"),
        (lambda: m.measure("energy", [0, 1], [0, 1], signal_unit="A"), "power"),
        (lambda: m.measure("peak", [0, 1], [0, 1], signal_unit="A", band=0.05), "no option band"),
        (lambda: m.peak([0, 2, 1], [0, 1, 2]), "non-decreasing"),
        (lambda: m.peak([0, 1, 2], [0, 1]), "does not match"),
        (lambda: m.peak([0.0], [1.0]), "at least 2"),
        (lambda: m.rms([0, 1, 2], [0, 1, 2], start=1.5, end=3.0), "window"),
        (lambda: m.settling_time([0, 1], [0, 1], band=-0.1), "band"),
        (lambda: m.settling_time([0, 1], [0, 1], dwell=1.5), "dwell"),
        (lambda: m.damping_ratio([0, 1, 2], [0, 1, 0], floor=2.0), "floor"),
        (lambda: m.final([0, 1, 2], [0, 1, 0], window=-1.0), "window"),
        (lambda: m.mean([[0, 1, 2], [0, 1, 2]], [[0, 1, 0]] * 3), "do not fit"),
        (lambda: m.rise_time([0, 1], [0, 1], low=0.9, high=0.1), "reference levels"),
        (lambda: m.figure_unit("loudness", "V"), "unknown figure"),
        (lambda: m.measure("settling_time", [0, 1], [0, 1], signal_unit="V", band="wide"), "must be a number"),
        (lambda: m.measure("peak", [0, 1], ["a", "b"], signal_unit="V"), "arrays of numbers"),
        (lambda: m.rms([0, 1], [[0, 1], [2]]), "arrays of numbers"),
    ],
)
def test_bad_input_gets_our_error(call, words):
    with pytest.raises(MeasurementError, match=words) as info:
        call()
    assert isinstance(info.value, CircuitodeError)


def test_summarise_standard_figures_per_signal():
    # An invented run: capacitor charging through 10 Ω from 24 V (Nilsson & Riedel ch. 7).
    R, C, V = 10.0, 1e-3, 24.0
    tau = R * C
    t = np.linspace(0.0, 20 * tau, 20001)
    vc = V * (1 - np.exp(-t / tau))
    i = V / R * np.exp(-t / tau)
    waves = SimpleNamespace(
        t=t,
        signals={"voltage at link": vc, "current through R1": i, "power in R1": i * i * R},
        units={"voltage at link": "V", "current through R1": "A", "power in R1": "W"},
        probes={},
    )
    summary = m.summarise(waves)
    v = summary["voltage at link"]
    assert v["rise_time"] == (pytest.approx(tau * np.log(9), rel=1e-4), "s")
    assert v["final"][1] == "V" and v["overshoot"][0] == 0.0
    assert "i2t" not in v and "energy" not in v
    cur = summary["current through R1"]
    assert cur["i2t"] == (pytest.approx(V**2 * C / (2 * R), rel=1e-5), "A²s")
    assert cur["peak"] == (pytest.approx(V / R), "A")
    # the charging current is a falling step from V/R to 0, so it has a (fall) transition duration
    assert cur["rise_time"][0] == pytest.approx(tau * np.log(9), rel=1e-4)
    pw = summary["power in R1"]
    assert pw["energy"] == (pytest.approx(0.5 * C * V**2, rel=1e-5), "J")
    assert isinstance(v["peak"][0], float)


def test_summarise_marks_step_figures_of_a_pulse_as_nan():
    # An inrush pulse: a series RLC current starting and ending at zero (Nilsson & Riedel ch. 8).
    t = np.linspace(0.0, 0.05, 5001)
    i = 30.0 * np.exp(-200 * t) * np.sin(2 * np.pi * 100 * t)
    waves = SimpleNamespace(t=t, signals={"current through K1": i}, units={"current through K1": "A"}, probes={})
    row = m.summarise(waves)["current through K1"]
    for name in ("overshoot", "rise_time", "settling_time"):
        assert np.isnan(row[name][0]), name
    assert row["peak"][0] > 0 and row["i2t"][0] > 0
    # ringing figures still apply to the pulse: ζ = σ/√(σ²+ωd²) (Ogata ch. 5)
    wd = 2 * np.pi * 100
    assert row["damping_ratio"][0] == pytest.approx(200 / np.hypot(200, wd), rel=1e-3)


def test_docstring_examples_run():
    # The examples in the docstrings are checked numbers too (closed forms stated beside them).
    result = doctest.testmod(m)
    assert result.attempted >= 3 and result.failed == 0


def test_trusted_clock_is_checked_once_and_only_for_that_array():
    """A batch's clock is checked when it is trusted; other clocks are still checked inside."""
    t = np.tile(np.linspace(0.0, 1.0, 11), (3, 1))
    y = np.vstack([np.linspace(-2.0, 1.0, 11), np.zeros(11), np.full(11, 0.5)])
    bad = t.copy()
    bad[1, 4] = bad[1, 3] - 0.1  # goes back in time
    with pytest.raises(MeasurementError, match="non-decreasing"):
        with m.trusted_clocks(bad):
            pass
    with m.trusted_clocks(t):
        # peak is the largest magnitude (definition of the figure, levels.py): 2, 0, 0.5
        assert np.array_equal(m.measure("peak", t, y, signal_unit="V"), [2.0, 0.0, 0.5])
        with pytest.raises(MeasurementError, match="non-decreasing"):
            m.measure("peak", bad, y, signal_unit="V")


def test_first_largest_magnitude_is_argmax_of_abs():
    """The instant of the peak is numpy's argmax of |y| (first occurrence, first NaN),
    computed without |y|: checked against np.argmax(np.abs(y)) itself."""
    from circuitode.analysis.figures.levels import _first_largest_magnitude
    rng = np.random.default_rng(5)
    y = rng.integers(-3, 4, size=(400, 9)).astype(float)  # many ties between +m and −m
    y[::37, 4] = np.nan
    y[5] = 0.0
    assert np.array_equal(_first_largest_magnitude(y), np.argmax(np.abs(y), axis=-1))


def test_step_figures_need_a_step_of_a_tenth_of_the_swing():
    # IEEE Std 181-2011 gives overshoot, undershoot and the 10 %/90 % reference levels in
    # terms of the amplitude final − initial.  A first-order step of amplitude a under a
    # decaying 30 A ring: with a = 2 A beside a ~50 A swing (the LC filter's inductor
    # current, 0 → 61 A → 2 A, printed "overshoot 2977 %") there is no step to refer to
    # (NO_STEP = 10 % of the peak-to-peak range, our choice); with a = 20 A there is, and
    # the overshoot is the definition's 100·(max − final)/a.
    from circuitode.analysis.figures.step import NO_STEP

    t = np.linspace(0.0, 0.05, 5001)
    ring = 30.0 * np.exp(-200 * t) * np.sin(2 * np.pi * 100 * t)
    for a in (2.0, 20.0):
        y = a * (1 - np.exp(-t / 2e-3)) + ring
        stepped = abs(y[-1] - y[0]) >= NO_STEP * np.ptp(y)
        assert stepped == (a == 20.0)
        for name in ("overshoot", "undershoot", "rise_time"):
            assert np.isnan(getattr(m, name)(t, y)) != stepped, (a, name)
        if stepped:
            assert m.overshoot(t, y) == pytest.approx(100 * (y.max() - y[-1]) / (y[-1] - y[0]), rel=1e-12)
    waves = SimpleNamespace(t=t, signals={"current through L1": 2.0 * (1 - np.exp(-t / 2e-3)) + ring},
                            units={"current through L1": "A"}, probes={})
    row = m.summarise(waves)["current through L1"]
    assert row["step"] == (False, "") and np.isnan(row["overshoot"][0])


def test_the_lc_filter_inductor_current_has_no_overshoot_in_run_text_limits_and_batches(tmp_path, capsys):
    # netlists/lc_filter.cnet: the inductor current starts at 0 A, peaks at 61.38 A and ends at
    # 24 V / 12 Ω ≈ 2 A (Ohm's law at DC), 3.3 % of its swing.  Its overshoot was printed as
    # 2977 %; the run, summary.json, a 'require' on it and a batch now say there is no step.
    import json
    from pathlib import Path

    from circuitode.cli import main

    text = (Path(__file__).parents[1] / "netlists" / "lc_filter.cnet").read_text(encoding="utf-8")
    netlist = tmp_path / "lc.cnet"
    netlist.write_text(text + "require overshoot current through L1 < 50 %\n", encoding="utf-8")
    assert main(["run", str(netlist), "--out", str(tmp_path / "run"), "--no-plots"]) == 1
    out = capsys.readouterr().out
    lines = out.splitlines()
    row = lines.index(next(x for x in lines if x.startswith("current through L1")))
    assert lines[row + 1].strip().startswith("no step (final ≈ initial)") and "2977" not in out
    assert "FAIL overshoot of current through L1 < 50 %" in out and "not measurable: no step" in out
    figures = json.loads((tmp_path / "run" / "summary.json").read_text(encoding="utf-8"))["figures"]
    assert figures["current through L1"]["overshoot"]["value"] is None
    assert figures["current through L1"]["step"]["value"] is False
    assert figures["voltage at out"]["step"]["value"] is True
    main(["tolerance", str(netlist), "--samples", "16", "--out", str(tmp_path / "batch"), "--no-plots"])
    out = capsys.readouterr().out
    assert "overshoot, current through L1" in out and "no step in any sample" in out
    assert "not measurable in any sample: no step (final ≈ initial)" in out
    assert all(len(line) <= 80 for line in out.splitlines())
