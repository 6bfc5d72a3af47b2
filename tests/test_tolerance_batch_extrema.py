"""Peaks and minima of batches located between output rows (circuitode.tolerance.batch_extrema).

References: the closed-form step response of a series RLC (Ogata, Modern Control
Engineering, ch. 5: time of peak π/ω_d and maximum overshoot exp(−ζπ/√(1−ζ²)) of
the capacitor voltage; Nilsson & Riedel, Electric Circuits, ch. 8: the loop current
(V/(ω_d L)) e^{−αt} sin ω_d t), and single runs, which locate the same figures
between rows on their own (circuitode.transient.extrema).
"""
import math

import numpy as np
import pytest

import circuitode as co
from circuitode.analysis.between_rows import carried_figure
from circuitode.analysis.measure import measure
from circuitode.netlist import load, loads
from circuitode.netlist.parts import set_parts
from circuitode.studies.grid import evaluate_points, study_circuit
from circuitode.tolerance.batch import batch_figure_keys, run_chunk
from circuitode.tolerance.batch_extrema import hermite_guess, locate_roots

V, L, C = 10.0, 100e-6, 10e-6
W_N = 1.0 / math.sqrt(L * C)  # 31.6 krad/s
R_VALUES = np.array([1.0, 2.0, 4.0])  # ζ = (R/2)·√(C/L) = 0.158, 0.316, 0.632

SERIES_RLC = """
param R_s = 2 Ω ± 50 % uniform
ground g
voltage_source V1 a -- g constant 10 V
resistor R1 a -- b R_s
inductor L1 b -- c 100 uH initial 0 A
capacitor C1 c -- g 10 uF initial 0 V
transient until 8 ms step {step} method {method} initial given
record voltage across C1, current through L1
"""


def _closed_form(R):
    """(t_p, peak of v_C, overshoot %, i_max, i_min) of the series RLC step (Ogata ch. 5;
    Nilsson & Riedel ch. 8)."""
    zeta = R / 2.0 * math.sqrt(C / L)
    alpha = zeta * W_N
    w_d = W_N * math.sqrt(1 - zeta ** 2)
    overshoot = math.exp(-zeta * math.pi / math.sqrt(1 - zeta ** 2))
    t_i = math.atan(w_d / alpha) / w_d  # di/dt = 0: tan(ω_d t) = ω_d / α
    amp = V / (w_d * L)
    i_max = amp * math.exp(-alpha * t_i) * math.sin(w_d * t_i)
    i_min = -amp * math.exp(-alpha * (t_i + math.pi / w_d)) * math.sin(w_d * t_i)
    return math.pi / w_d, V * (1 + overshoot), 100 * overshoot, i_max, i_min


def _chunk(text, names, values, method="exact"):
    circuit = loads(text)
    probes, keys = batch_figure_keys(circuit)
    res = run_chunk({"circuit": circuit, "names": names, "values": values, "start": 0,
                     "keys": keys, "probes": probes, "method": method})
    assert res["ok"].all(), set(res["message"])
    return {k: res["figures"][:, j] for j, k in enumerate(keys)}


def test_series_rlc_peak_time_and_overshoot_at_a_seventh_of_the_period():
    # step T_d/7 of the fastest ringing (R = 1 Ω: T_d = 2π/ω_d ≈ 201 µs)
    step = 2 * math.pi / (W_N * math.sqrt(1 - (0.5 * math.sqrt(C / L)) ** 2)) / 7
    text = SERIES_RLC.format(step=f"{step * 1e6:.6f} us", method="exact")
    got = _chunk(text, ("R_s",), R_VALUES[:, None])
    vc, il = "voltage across C1", "current through L1"
    for i, R in enumerate(R_VALUES):
        t_p, v_peak, overshoot, i_max, i_min = _closed_form(R)
        assert got["time_of_peak", vc][i] == pytest.approx(t_p, rel=1e-9)
        assert got["peak", vc][i] == pytest.approx(v_peak, rel=1e-9)
        assert got["overshoot", vc][i] == pytest.approx(overshoot, rel=1e-9)
        assert got["peak", il][i] == pytest.approx(i_max, rel=1e-9)
        assert got["minimum", il][i] == pytest.approx(i_min, rel=1e-9)
        # and the same as a single run, which locates between its rows itself
        single = co.simulate(loads(text, overrides={"R_s": R}))
        for fig, label in [("time_of_peak", vc), ("peak", vc), ("overshoot", vc), ("peak", il),
                           ("minimum", il), ("time_of_peak", il)]:
            assert got[fig, label][i] == pytest.approx(carried_figure(fig, single, label), rel=1e-9)
    # the rows alone are far off at this step (the check can fail)
    rows = co.simulate(loads(text, overrides={"R_s": 1.0}))
    row_peak = float(measure("peak", rows.t, rows.signals[vc], signal_unit="V"))
    assert abs(row_peak - _closed_form(1.0)[1]) > 1e-3 * V


def test_rk4_batch_locates_from_its_own_states_as_the_single_run():
    text = SERIES_RLC.format(step="5 us", method="rk4")
    got = _chunk(text, ("R_s",), R_VALUES[:, None], method="rk4")
    for i, R in enumerate(R_VALUES):
        single = co.simulate(loads(text, overrides={"R_s": R}))
        for fig in ("peak", "time_of_peak"):
            want = carried_figure(fig, single, "voltage across C1")
            assert got[fig, "voltage across C1"][i] == pytest.approx(want, rel=1e-9)
        # RK4 at h·ω_n = 0.16 (Butcher ch. 3: fourth order): close to the closed form
        assert got["peak", "voltage across C1"][i] == pytest.approx(_closed_form(R)[1], rel=1e-5)


def test_point_on_wave_batch_peaks_equal_single_runs_at_the_readme_step():
    path = "netlists/reactor_inrush.cnet"  # step 20 µs, as in the README
    angles = np.array([0.0, 37.0, 90.0, 180.0, 271.3])
    circuit = study_circuit(path, ["K_on.angle"])
    res = evaluate_points(circuit, ["K_on.angle"], np.deg2rad(angles)[:, None])
    assert res.ok.all()
    base = load(path)
    label = "current through L_r"
    off_rows = 0.0
    for k, angle in enumerate(angles):
        single = co.simulate(set_parts(base, {"K_on.angle": f"{angle} deg"}))
        for fig in ("peak", "time_of_peak", "minimum"):
            got = res.figures[k, res.figure_keys.index((fig, label))]
            want = carried_figure(fig, single, label)
            assert got == pytest.approx(want, rel=1e-9), (angle, fig)
        rows = float(measure("peak", single.t, single.signals[label], signal_unit="A"))
        off_rows = max(off_rows, abs(rows - res.figures[k, res.figure_keys.index(("peak", label))]) / rows)
    # the rows' own peak differs by about 2e-6 at this step (the check can fail)
    assert off_rows > 1e-7


def test_locate_roots_finds_the_crest_and_trough_of_a_damped_sine():
    # x' = M x with M = [[−a, b], [−b, −a]] and x(0) = (0, 1): x1 = e^{−at} sin(bt), whose
    # crests and troughs are at tan(bt) = b/a (first crest t_top, next trough t_top + π/b)
    a, b = 50.0, 2000.0
    t_top = math.atan(b / a) / b
    s0 = 1e-3  # the second search starts past the crest: a minimum lies in (1 ms, 3 ms)
    M = np.array([[[-a, b], [-b, -a]]] * 2)
    w = np.array([[0.0, 1.0], [math.exp(-a * s0) * math.sin(b * s0), math.exp(-a * s0) * math.cos(b * s0)]])
    g = np.array([[1.0, 0.0], [1.0, 0.0]])
    s, y = locate_roots(M, w, g, np.array([1e-3, 2e-3]), np.array([1.0, -1.0]))
    assert s[0] == pytest.approx(t_top, rel=1e-12)
    assert y[0] == pytest.approx(math.exp(-a * t_top) * math.sin(b * t_top), rel=1e-12)
    t_low = t_top + math.pi / b
    assert s0 + s[1] == pytest.approx(t_low, rel=1e-12)
    assert y[1] == pytest.approx(math.exp(-a * t_low) * math.sin(b * t_low), rel=1e-12)


def test_the_first_guess_is_exact_for_a_cubic():
    # the cubic Hermite interpolant of a cubic is the cubic itself, so its slope's root is the
    # true one (calculus): y = s − s³ on [0, 1] peaks at 1/√3; y = s − s³/3 on [0, 2] at 1
    guess = hermite_guess(np.array([0.0, 0.0]), np.array([0.0, -2.0 / 3.0]), np.array([1.0, 1.0]),
                          np.array([-2.0, -3.0]), np.array([1.0, 2.0]))
    assert guess == pytest.approx([1 / math.sqrt(3), 1.0], rel=1e-14)
    # a slope that keeps its sign (y = s) gives no guess
    assert np.isnan(hermite_guess(np.array([0.0]), np.array([1.0]), np.array([1.0]), np.array([1.0]),
                                  np.array([1.0]))[0])


RING_AFTER_THRESHOLD = """
param R_c = 1 kΩ ± 20 % uniform
ground g
voltage_source V1 a -- g constant 10 V
resistor R1 a -- b R_c
capacitor C1 b -- g 1 uF initial 0 V
switch K b -- c closes when voltage at b > 5 V
resistor R2 c -- d 1 Ω
inductor L1 d -- e 1.2 mH initial 0 A
capacitor C2 e -- g 1 uF initial 0 V
transient until 3 ms step 50 us method exact initial given
record current through L1
"""


def test_a_peak_inside_the_step_a_threshold_switch_splits_is_located():
    # K closes at t = R C ln 2 (Nilsson & Riedel ch. 7), a few µs into a 50 µs step for these R;
    # the L1–C1–C2 loop then rings with a period of 2π√(L·C1C2/(C1+C2)) ≈ 154 µs, so the
    # first current peak (a quarter period on) lies inside the step that the switch splits
    values = np.array([[870.0], [938.0], [1010.0], [1090.0], [1160.0]])
    got = _chunk(RING_AFTER_THRESHOLD, ("R_c",), values)
    label = "current through L1"
    off_rows = 0.0
    for i, (R,) in enumerate(values):
        single = co.simulate(loads(RING_AFTER_THRESHOLD, overrides={"R_c": R}))
        t_close = R * 1e-6 * math.log(2)
        assert [e.time for e in single.events] == pytest.approx([t_close], rel=1e-9)
        for fig in ("peak", "time_of_peak", "minimum"):
            assert got[fig, label][i] == pytest.approx(carried_figure(fig, single, label), rel=1e-9), (R, fig)
        next_row = math.ceil(t_close / 50e-6) * 50e-6
        assert t_close < got["time_of_peak", label][i] < next_row
        rows = float(measure("peak", single.t, single.signals[label], signal_unit="A"))
        off_rows = max(off_rows, abs(got["peak", label][i] - rows) / rows)
    assert off_rows > 1e-3  # the rows alone miss it (the check can fail)


def test_a_swing_hidden_between_two_rows_is_located():
    # With L1 = 10 µH the loop rings with a 14 µs period inside one 50 µs step: the first
    # current peak (0.95 A with a 0.5 µs step) begins and ends between two rows (the slope
    # test at the rows alone printed 0.116 A); the sub-point search finds it in single runs
    # and in batches (the piece after the switch), to 1e-9 of the fine run's located peak
    from circuitode.analysis.resolution import resolution_warnings

    text = RING_AFTER_THRESHOLD.replace("1.2 mH", "10 uH")
    label = "current through L1"
    values = np.array([[800.0], [900.0]])
    got = _chunk(text, ("R_c",), values)
    for i, (R,) in enumerate(values):
        fine = co.simulate(loads(text.replace("step 50 us", "step 0.5 us"), overrides={"R_c": R}))
        coarse = co.simulate(loads(text, overrides={"R_c": R}))
        want = carried_figure("peak", fine, label)
        assert want > 0.9  # the swing's peak (the check can fail: the rows see about 0.1 A)
        assert carried_figure("peak", coarse, label) == pytest.approx(want, rel=1e-9)
        assert got["peak", label][i] == pytest.approx(want, rel=1e-9)
        assert got["time_of_peak", label][i] == pytest.approx(carried_figure("time_of_peak", fine, label), rel=1e-9)
        assert np.max(np.abs(coarse.signals[label])) < 0.5 * want
    (warning,) = resolution_warnings(coarse)  # rise and settling times stay row-based
    assert "every output interval searched" in warning
    assert resolution_warnings(fine) == []


@pytest.mark.parametrize("fraction", [1.3, 3.7])
def test_series_rlc_batch_peaks_with_the_step_longer_than_the_damped_period(fraction):
    # Output step 1.3 and 3.7 damped periods of the fastest sample (R = 1 Ω): each sample's
    # first overshoot begins and ends between its first two rows; peak V(1 + e^{−ζπ/√(1−ζ²)})
    # at π/ω_d (Ogata ch. 5), loop current extremes (Nilsson & Riedel ch. 8), to 1e-9
    Td = 2 * math.pi / (W_N * math.sqrt(1 - (0.5 * math.sqrt(C / L)) ** 2))
    text = SERIES_RLC.format(step=f"{fraction * Td * 1e6:.6f} us", method="exact")
    got = _chunk(text, ("R_s",), R_VALUES[:, None])
    vc, il = "voltage across C1", "current through L1"
    for i, R in enumerate(R_VALUES):
        t_p, v_peak, overshoot, i_max, i_min = _closed_form(R)
        assert got["time_of_peak", vc][i] == pytest.approx(t_p, rel=1e-9)
        assert got["peak", vc][i] == pytest.approx(v_peak, rel=1e-9)
        assert got["peak", il][i] == pytest.approx(i_max, rel=1e-9)
        assert got["minimum", il][i] == pytest.approx(i_min, rel=1e-9)
    rows = co.simulate(loads(text, overrides={"R_s": 1.0}))  # the rows alone miss it
    assert float(np.max(rows.signals[vc])) < 0.8 * _closed_form(1.0)[1]


def test_lightly_damped_lc_batch_with_a_step_of_ten_periods():
    # R = 0.01…0.03 Ω (ζ ≈ 0.0016…0.0047): a step of 10 damped periods; the first peak
    # V(1 + e^{−ζπ/√(1−ζ²)}) at π/ω_d (Ogata ch. 5) to 1e-9, and the same as single runs
    Rs = np.array([0.01, 0.02, 0.03])
    Td = 2 * math.pi / W_N
    text = SERIES_RLC.format(step=f"{10 * Td * 1e6:.6f} us", method="exact").replace("until 8 ms", "until 6.3 ms")
    got = _chunk(text, ("R_s",), Rs[:, None])
    vc = "voltage across C1"
    for i, R in enumerate(Rs):
        t_p, v_peak, *_ = _closed_form(R)
        assert got["peak", vc][i] == pytest.approx(v_peak, rel=1e-9)
        assert got["time_of_peak", vc][i] == pytest.approx(t_p, rel=1e-9)
        single = co.simulate(loads(text, overrides={"R_s": R}))
        assert got["minimum", vc][i] == pytest.approx(carried_figure("minimum", single, vc), rel=1e-9, abs=1e-12)
