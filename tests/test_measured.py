"""Reading captures and measuring ringing from samples alone.

Log decrement: δ = (1/n) ln(x₀/xₙ), ζ = δ/√(4π² + δ²) — a standard vibration-
textbook result, from memory.  Matrix pencil: Hua & Sarkar, IEEE Trans. ASSP
1990 (from memory).  The synthetic signals are closed-form damped sinusoids,
so the truth is known exactly.
"""
import numpy as np
import pytest

from circuitode.measured.capture import CaptureError, parse_capture, read_capture
from circuitode.measured.ringing import RingingError, fit_damped_sine, log_decrement, matrix_pencil

ZETA, FN, FS = 0.05, 1000.0, 100e3


def ringing(zeta=ZETA, fn=FN, fs=FS, until=0.012, offset=0.5, phase=0.0):
    wn = 2 * np.pi * fn
    t = np.arange(0, until, 1 / fs)
    return t, offset + 2 * np.exp(-zeta * wn * t) * np.cos(wn * np.sqrt(1 - zeta**2) * t + phase)


@pytest.mark.parametrize("zeta, fs, phase", [(0.05, 100e3, 0.0), (0.05, 37e3, 2.0), (0.2, 100e3, 0.3)])
def test_log_decrement_recovers_zeta_noise_free(zeta, fs, phase):
    t, y = ringing(zeta=zeta, fs=fs, phase=phase, until=0.02)
    ld = log_decrement(t, y)
    assert ld.cycles >= 3
    assert abs(ld.zeta - zeta) < 1e-6
    assert ld.delta == pytest.approx(np.log(ld.heights[0] / ld.heights[ld.cycles]) / ld.cycles)
    assert ld.natural_frequency_hz == pytest.approx(FN, rel=1e-6)


def test_log_decrement_interval_covers_about_95_percent():
    t, y = ringing()
    hits = 0
    for seed in range(200):
        noisy = y + 0.02 * np.random.default_rng(seed).standard_normal(t.size)
        low, high = log_decrement(t, noisy).zeta_interval
        hits += low <= ZETA <= high
    assert 0.90 <= hits / 200 <= 0.99  # binomial sd at 95 % and 200 draws is 1.5 %


def test_damped_sine_fit_interval_covers_about_95_percent():
    t, y = ringing()
    zeta_hits = fn_hits = 0
    for seed in range(200):
        noisy = y + 0.02 * np.random.default_rng(1000 + seed).standard_normal(t.size)
        fit = fit_damped_sine(t, noisy)
        zeta_hits += fit.zeta_interval[0] <= ZETA <= fit.zeta_interval[1]
        fn_hits += fit.natural_frequency_interval[0] <= FN <= fit.natural_frequency_interval[1]
    assert 0.90 <= zeta_hits / 200 <= 0.99
    assert 0.90 <= fn_hits / 200 <= 0.99


def test_damped_sine_fit_exact_without_noise():
    t, y = ringing(phase=1.1)
    fit = fit_damped_sine(t, y)
    assert fit.zeta == pytest.approx(ZETA, rel=1e-9)
    assert fit.natural_frequency_hz == pytest.approx(FN, rel=1e-9)
    assert fit.offset == pytest.approx(0.5, abs=1e-9)


def test_matrix_pencil_separates_two_modes():
    t, y = ringing()
    wn2 = 2 * np.pi * 5000
    y = y + 0.8 * np.exp(-0.1 * wn2 * t) * np.cos(wn2 * np.sqrt(1 - 0.01) * t)
    modes = matrix_pencil(t, y + 0.01 * np.random.default_rng(3).standard_normal(t.size))
    first, second = modes[:2]
    assert first.natural_frequency_hz == pytest.approx(1000, rel=2e-3)
    assert first.zeta == pytest.approx(0.05, rel=2e-2)
    assert first.amplitude == pytest.approx(2.0, rel=1e-2)
    assert second.natural_frequency_hz == pytest.approx(5000, rel=1e-2)
    assert second.zeta == pytest.approx(0.1, rel=5e-2)


def test_no_ringing_is_refused():
    t = np.linspace(0, 1e-2, 500)
    with pytest.raises(RingingError, match="no ringing"):
        log_decrement(t, 1 - np.exp(-t / 1e-3))


HEADER_12 = """# invented capture for a test
instrument;none (synthetic)
date;2026-01-01
note;decimal commas, semicolons
sample interval;0,5 us
start;-2 us
probe;10:1
coupling;DC
bandwidth;20 MHz
record;8 points
averaging;off
CH1 [V];CH2 (mA)
"""


def test_reads_decimal_commas_after_a_12_line_header():
    rows = "\n".join(f"{0.1 * k:.1f};{2.5 + k}".replace(".", ",") for k in range(8))
    cap = parse_capture(HEADER_12 + rows + "\n", "demo.csv")
    assert cap.first_data_line == 13
    np.testing.assert_allclose(cap.t, -2e-6 + 0.5e-6 * np.arange(8))
    np.testing.assert_allclose(cap.channels["CH2"], (2.5 + np.arange(8)) * 1e-3)
    assert cap.units == {"CH1": "V", "CH2": "A"}
    assert cap.channel("2") == "CH2" and cap.channel(1) == "CH1"


def test_reads_a_time_column_with_units_and_commas():
    text = "time [ms],ch1 / mV,ch2 (V),\n0,1,2,\n0.5,1.5,2,\n1.0,2,2,\n"
    cap = parse_capture(text)
    np.testing.assert_allclose(cap.t, [0, 5e-4, 1e-3])
    np.testing.assert_allclose(cap.channels["ch1"], [1e-3, 1.5e-3, 2e-3])


@pytest.mark.parametrize("text, where, words", [
    ("t [s],v\n0,1\n1,2\n2,x\n", "line 4", "field 2 is 'x'; expected a number"),
    ("t [s],v\n0,1\n1,2\n2,3,4\n", "line 4", "expected 2 fields"),
    ("t [s],v\n0,1\n1,2\n1,3\n", "line 4", "strictly increasing"),
    ("a;b\n1;2\n3;4\n5;6\n", "line 1", "no time column and no sample interval"),
    ("t [furlong],v\n0,1\n1,2\n2,3\n", "line 1", "unknown unit 'furlong'"),
    ("just words\nmore words\n", "", "no line of numbers"),
])
def test_refusals_name_the_line_and_what_was_expected(text, where, words):
    with pytest.raises(CaptureError) as err:
        parse_capture(text, "bad.csv")
    assert where in str(err.value) and words in str(err.value)


def test_missing_file_and_unknown_channel(tmp_path):
    with pytest.raises(CaptureError, match="no capture file"):
        read_capture(tmp_path / "none.csv")
    path = tmp_path / "c.csv"
    path.write_text("time [s],CH1 [V]\n0,1\n1,2\n2,3\n", encoding="utf-8")
    with pytest.raises(CaptureError, match="1 channel\\(s\\): CH1"):
        read_capture(path).channel(2)


def test_demo_captures_read_through_the_public_api():
    """Both invented captures: the 12-line header with decimal commas, and the time column in µs."""
    from pathlib import Path

    import circuitode as co

    folder = Path(__file__).resolve().parents[1] / "netlists" / "captures"
    semi = co.read_capture(folder / "dc_link_ring_decimal_comma.csv")
    timed = co.read_capture(folder / "dc_link_ring_time_column.csv")
    assert semi.first_data_line == 13 and semi.units == {"CH1": "A", "CH2": "V"}
    assert semi.sample_interval == pytest.approx(0.5e-6) and semi.t[0] == pytest.approx(-50e-6)
    assert timed.units == {"current": "A", "voltage": "V"} and timed.sample_interval == pytest.approx(1e-6)
    for cap, name in ((semi, "CH2"), (timed, "voltage")):  # the link settles near 48 V + 0.3 V offset
        assert np.median(cap.channels[name][-200:]) == pytest.approx(48.3, abs=0.5)


def test_a_number_in_the_header_and_trailing_text():
    cap = parse_capture("record length\n10000\nsample interval;1 us\n1;2\n3;4\n5;6\n")
    np.testing.assert_allclose(cap.t, [0, 1e-6, 2e-6])
    assert list(cap.channels) == ["channel 1", "channel 2"]
    with pytest.raises(CaptureError, match="line 6: text after the block of numbers"):
        parse_capture("t [s],v\n0,1\n1,2\n2,3\n\nend of data\n", "f.csv")
