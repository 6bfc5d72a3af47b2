"""Peaks and minima of single runs located between output rows (circuitode.transient.extrema),
where a whole swing begins and ends between two rows (output step longer than the ringing).

References: the underdamped series RLC step response (Ogata, Modern Control Engineering,
ch. 5: the k-th extremum of the capacitor voltage comes at kπ/ω_d, at V(1 ± e^{−kζπ/√(1−ζ²)});
Nilsson & Riedel, Electric Circuits, ch. 8: ω_n = 1/√(LC), ζ = (R/2)√(C/L),
ω_d = ω_n√(1−ζ²), loop current (V/(ω_d L)) e^{−αt} sin ω_d t, α = R/(2L)).
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from circuitode.analysis.between_rows import carried_figure
from circuitode.analysis.resolution import resolution_warnings
from circuitode.analysis.windows import run_figure
from circuitode.model import Capacitor, Circuit, CurrentThrough, Dc, Inductor, NodeVoltage, Resistor, VoltageSource
from circuitode.transient import simulate
from circuitode.transient.extrema import MAX_PER_INTERVAL

V, L, C = 10.0, 100e-6, 10e-6


def _series_rlc(R):
    return Circuit("rlc", "gnd", (VoltageSource("V1", "in", "gnd", Dc(V)),
                                  Resistor("R1", "in", "a", R),
                                  Inductor("L1", "a", "b", L, initial_current=0.0),
                                  Capacitor("C1", "b", "gnd", C, initial_voltage=0.0)),
                   records=(NodeVoltage("b"), CurrentThrough("L1")))


def _closed_form(R):
    """(ω_d, ζ, k-th extremum of v_C, (i_max, t_i)) of the series RLC step (Ogata ch. 5;
    Nilsson & Riedel ch. 8)."""
    wn = 1 / math.sqrt(L * C)
    zeta = R / 2 * math.sqrt(C / L)
    wd = wn * math.sqrt(1 - zeta ** 2)
    alpha = zeta * wn

    def v_extremum(k):
        return V * (1 - (-1) ** k * math.exp(-k * zeta * math.pi / math.sqrt(1 - zeta ** 2)))

    t_i = math.atan(wd / alpha) / wd  # di/dt = 0: tan ω_d t = ω_d/α
    i_max = V / (wd * L) * math.exp(-alpha * t_i) * math.sin(wd * t_i)
    return wd, zeta, v_extremum, (i_max, t_i)


@pytest.mark.parametrize("method", ["exact", "radau"])
@pytest.mark.parametrize("fraction", [1.3, 3.7])
def test_series_rlc_peak_with_the_step_longer_than_the_damped_period(fraction, method):
    # Output step 1.3·T_d and 3.7·T_d: the first overshoot (at T_d/2) begins and ends
    # between the first two rows; the peak must still be V(1 + e^{−ζπ/√(1−ζ²)}) at π/ω_d.
    R = 1.0
    wd, zeta, v_extremum, (i_max, t_i) = _closed_form(R)
    Td = 2 * math.pi / wd
    w = simulate(_series_rlc(R), until=48 * Td, step=fraction * Td, method=method)  # settled: e^(−αt) < 1e−20
    vc, il = "voltage at b", "current through L1"
    assert carried_figure("peak", w, vc) == pytest.approx(v_extremum(1), rel=1e-9)
    assert carried_figure("time_of_peak", w, vc) == pytest.approx(math.pi / wd, rel=1e-9)
    assert carried_figure("peak", w, il) == pytest.approx(i_max, rel=1e-9)
    assert carried_figure("time_of_peak", w, il) == pytest.approx(t_i, rel=1e-9)
    assert carried_figure("overshoot", w, vc) == pytest.approx(100 * (v_extremum(1) / V - 1), rel=1e-7)
    # the rows alone are far off (the check can fail): no row comes near the swing
    assert np.max(w[vc]) < 0.8 * v_extremum(1)
    assert w.extrema[vc].searched and not w.extrema[vc].capped
    # the warning no longer says the located peaks may miss a swing; rise and settling stay row-based
    (warning,) = resolution_warnings(w)
    assert "every output interval searched" in warning and "rise and settling times" in warning


def test_lightly_damped_lc_with_a_step_of_ten_periods():
    # ζ = 0.005 (R = 0.01 Ω): the step is 10 damped periods, 100 swings per row
    R = 0.01
    wd, zeta, v_extremum, (i_max, t_i) = _closed_form(R)
    Td = 2 * math.pi / wd
    w = simulate(_series_rlc(R), until=30 * Td, step=10 * Td, method="exact")
    assert w.t.size == 4
    vc, il = "voltage at b", "current through L1"
    assert carried_figure("peak", w, vc) == pytest.approx(v_extremum(1), rel=1e-9)
    assert carried_figure("time_of_peak", w, vc) == pytest.approx(math.pi / wd, rel=1e-9)
    # the loop current's extremes: i_max at t_i, and its minimum half a period on,
    # −i_max e^{−απ/ω_d} (Nilsson & Riedel ch. 8)
    alpha = zeta / math.sqrt(1 - zeta ** 2) * wd
    assert carried_figure("peak", w, il) == pytest.approx(i_max, rel=1e-9)
    assert carried_figure("minimum", w, il) == pytest.approx(-i_max * math.exp(-alpha * math.pi / wd), rel=1e-9)
    assert w.extrema[il].t_minimum == pytest.approx(t_i + math.pi / wd, rel=1e-9)
    assert not w.extrema[vc].capped


def test_a_later_swing_in_a_window_and_minima_that_are_not_swings():
    # Step 1.3·T_d: rows at 0, 1.3 T_d, 2.6 T_d …  Between 1.3 T_d and 2.6 T_d the voltage has a
    # maximum at 3π/ω_d, a minimum at 4π/ω_d and a maximum at 5π/ω_d (Ogata ch. 5): the slopes
    # at the two rows differ in sign, but the largest value there is the first of the three,
    # V(1 + e^{−3ζπ/√(1−ζ²)}), not the global peak (which lies before the window).
    R = 1.0
    wd, zeta, v_extremum, _ = _closed_form(R)
    Td = 2 * math.pi / wd
    w = simulate(_series_rlc(R), until=13 * Td, step=1.3 * Td, method="exact")
    vc = "voltage at b"
    start = float(w.t[1])
    assert run_figure("peak", w, vc, start=start, stop=float(w.t[2])) == pytest.approx(v_extremum(3), rel=1e-9)
    assert run_figure("time_of_peak", w, vc, start=start, stop=float(w.t[2])) == pytest.approx(
        3 * math.pi / wd, rel=1e-9)
    assert run_figure("minimum", w, vc, start=start, stop=float(w.t[2])) == pytest.approx(v_extremum(4), rel=1e-9)
    # over the whole run the minimum is the initial 0 V at t = 0, below every swing's minimum
    assert w.extrema[vc].minimum == 0.0 and w.extrema[vc].t_minimum == 0.0


def test_the_cap_on_sub_points_is_said():
    # A step of 200 damped periods needs 1600 sub-points per interval, above the cap
    R = 0.01
    wd, _, v_extremum, _ = _closed_form(R)
    Td = 2 * math.pi / wd
    assert 8 * 200 > MAX_PER_INTERVAL
    w = simulate(_series_rlc(R), until=600 * Td, step=200 * Td, method="exact")
    assert w.extrema["voltage at b"].capped
    (warning,) = resolution_warnings(w)
    assert "hit its cap of sub-points" in warning
