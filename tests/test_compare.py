"""Comparing a capture with the model: alignment, error figures, the command end to end.

The reference waveform is a closed-form underdamped step response
1 − e^{−ζωn t}(cos ωd t + ζ/√(1−ζ²) sin ωd t) (Nilsson & Riedel, Electric
Circuits, ch. 8), so shifts and errors are known exactly.
"""
from pathlib import Path

import numpy as np
import pytest

from circuitode.cli import main
from circuitode.measured.compare import CompareError, compare_waveforms, crossing_time
from circuitode.jobs.compare import compare_job

ZETA, WN = 0.1, 2 * np.pi * 1000

ROOT = Path(__file__).resolve().parents[1]
DEMO = str(ROOT / "netlists" / "dc_link_ring.cnet")
CAPTURE = str(ROOT / "netlists" / "captures" / "dc_link_ring_decimal_comma.csv")


def step_response(t):
    tt = np.maximum(t, 0.0)
    wd = WN * np.sqrt(1 - ZETA**2)
    y = 1 - np.exp(-ZETA * WN * tt) * (np.cos(wd * tt) + ZETA / np.sqrt(1 - ZETA**2) * np.sin(wd * tt))
    return np.where(t > 0, y, 0.0)


def test_alignment_finds_the_trigger_delay_and_figures_vanish_for_a_perfect_capture():
    t_model = np.linspace(-1e-3, 20e-3, 210001)  # long enough that the last sample is the final level
    t_meas = np.arange(-0.5e-3, 19e-3, 2e-6)
    delay = 37.3e-6  # the capture's zero lies this long after the model's
    c = compare_waveforms(t_model, step_response(t_model), t_meas, step_response(t_meas + delay))
    assert c.shift == pytest.approx(delay, abs=1e-8)
    assert c.rms_error < 1e-5 and c.time_of_peak_error == pytest.approx(0, abs=3e-6)
    overshoot = 100 * np.exp(-ZETA * np.pi / np.sqrt(1 - ZETA**2))  # Nilsson & Riedel ch. 8 (common practice)
    assert c.overshoot_model == pytest.approx(overshoot, rel=1e-4)
    assert c.overshoot_measured == pytest.approx(overshoot, rel=1e-3)


def test_an_offset_shows_as_rms_and_peak_error():
    t = np.linspace(-1e-3, 8e-3, 9001)
    c = compare_waveforms(t, step_response(t), t, step_response(t) + 0.05, shift=0.0)
    assert c.rms_error == pytest.approx(0.05, rel=1e-9)
    assert c.peak_error == pytest.approx(0.05, rel=1e-9)
    assert c.alignment == "shift given"


def test_crossing_and_refusals():
    t = np.linspace(0, 1, 11)
    assert crossing_time(t, t, 0.45, rising=True) == pytest.approx(0.45)
    assert np.isnan(crossing_time(t, t, 2.0, rising=True))
    with pytest.raises(CompareError, match="never crosses"):
        compare_waveforms(t, t, t, 0 * t)
    with pytest.raises(CompareError, match="overlap"):
        compare_waveforms(t, t, t, t, shift=5.0)




def test_demo_capture_against_its_model():
    """The invented capture was made with L_cab 3.25 µH, C_link 205 µF, R_damp 11.5 mΩ
    (make_demo_captures.py), so its ringing must show those values' ζ and fn, not the nominal ones."""
    r = compare_job(DEMO, measured=CAPTURE, channel=2, quantity="voltage at link")
    L, C, R = 3.25e-6, 205e-6, 0.012 + 0.0115
    zeta, fn = R / 2 * np.sqrt(C / L), 1 / (2 * np.pi * np.sqrt(L * C))  # series RLC, Nilsson & Riedel ch. 8
    fit = r.ringing["damped-sine fit"]
    assert fit.zeta_interval[0] - 2e-3 < zeta < fit.zeta_interval[1] + 2e-3  # the 1 kΩ bleeder adds a little
    assert fit.natural_frequency_hz == pytest.approx(fn, rel=2e-3)
    assert r.ringing["log decrement"].zeta == pytest.approx(zeta, abs=0.01)
    assert r.ringing["matrix pencil"][0].natural_frequency_hz == pytest.approx(fn, rel=5e-3)
    assert r.comparison.shift == pytest.approx(102.7e-6, abs=1.5e-6)  # edge at 100 µs + 2.7 µs trigger delay
    assert r.modes.closed == (True,)


def test_cli_compare(tmp_path, capsys):
    code = main(["compare", DEMO, "--measured", CAPTURE, "--channel", "2", "--as", "voltage at link",
                 "--out", str(tmp_path)])
    out = capsys.readouterr().out
    assert code == 0
    assert "rms error" in out and "log decrement" in out and "model's modes with K_main closed" in out
    assert (tmp_path / "comparison.png").stat().st_size > 0
    code = main(["compare", DEMO, "--measured", CAPTURE, "--channel", "1", "--as", "voltage at link"])
    err = capsys.readouterr().err
    assert code == 2 and "is in A" in err
