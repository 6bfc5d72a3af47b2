"""Where the waveform plot puts what: panels by scale, zoom windows, running integrals.

Expected values: the closed-form RC discharge current and its Joule integral
(Nilsson & Riedel, Electric Circuits, ch. 7: i = I0·e^(−t/τ), ∫i² dt =
I0²·τ/2·(1 − e^(−2t/τ))), and the package's own I²t figure for agreement.
"""
import numpy as np
import pytest

from circuitode.analysis.figures.integrals import i2t
from circuitode.output.plot_layout import SCALE_RATIO, panels, running_integral, zoom_windows


def test_signals_of_one_unit_far_apart_in_scale_get_their_own_panels():
    t = np.linspace(0.0, 1.0, 101)
    signals = {"v": 48 * np.ones_like(t), "big": 143 * np.exp(-t), "small": 4.8 * np.exp(-t),
               "near": 60 * np.exp(-t)}
    units = {"v": "V", "big": "A", "small": "A", "near": "A"}
    layout = panels(signals, units, ["small", "v", "big", "near"])
    assert [p.unit for p in layout] == ["V", "A", "A"]
    assert layout[1].labels == ("big", "near")  # 143 A and 60 A: within 10×, one panel
    assert layout[2].labels == ("small",) and layout[2].scale_note  # 143 / 4.8 > SCALE_RATIO
    assert 143 / 4.8 > SCALE_RATIO > 143 / 60


def test_a_narrow_spike_gets_a_zoom_window_around_it():
    tau = 52e-6
    t = np.linspace(0.0, 80e-3, 8001)
    spike = np.where(t >= 35.47e-3, 143 * np.exp(-(t - 35.47e-3) / tau), 0.0)
    window = zoom_windows(t, [spike])
    assert window is not None
    t0, t1 = window
    assert t0 < 35.47e-3 < t1 and t1 - t0 < 0.01 * 80e-3


def test_activity_early_in_the_window_gets_a_zoom_window():
    t = np.linspace(0.0, 3e-3, 6001)
    settle = np.where(t > 0.1e-3, 24 * (1 - np.exp(-(t - 0.1e-3) / 40e-6) * np.cos((t - 0.1e-3) / 30e-6)), 0.0)
    window = zoom_windows(t, [settle])
    assert window is not None and window[0] < 0.1e-3 and window[1] < 0.3 * 3e-3


def test_a_slow_charge_over_the_whole_window_needs_no_zoom():
    t = np.linspace(0.0, 80e-3, 8001)
    assert zoom_windows(t, [48 * (1 - np.exp(-t / 15e-3))]) is None


def test_running_i2t_matches_the_closed_form_and_the_final_figure():
    I0, tau = 4.8, 15e-3
    t = np.linspace(0.0, 60e-3, 60001)
    i = I0 * np.exp(-t / tau)
    running = running_integral(t, i, square=True)
    exact = I0**2 * tau / 2 * (1 - np.exp(-2 * t / tau))
    np.testing.assert_allclose(running, exact, rtol=1e-6, atol=1e-12)
    assert running[-1] == pytest.approx(float(i2t(t, i)), rel=1e-12)
    energy = running_integral(t, 10.0 * i, square=False)  # ∫p dt of a power, trapezoidal
    assert energy[-1] == pytest.approx(10.0 * I0 * tau * (1 - np.exp(-4)), rel=1e-6)
