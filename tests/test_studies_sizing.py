"""Sizing (circuitode.studies.sizing): intervals of a part's value, checked against closed forms."""
from __future__ import annotations

import math

import numpy as np
import pytest

import circuitode as co
from circuitode.cli import main
from circuitode.errors import CircuitodeError
from circuitode.studies.sizing import size

RC = """\
circuit "RC charge"
param R = 10 Ω
ground gnd
voltage_source V1 in -- gnd constant 10 V
resistor R1 in -- out R ± 5 %
capacitor C1 out -- gnd 1 uF initial 0 V
transient until 1 ms step 1 us method exact initial given
record current through R1, voltage at out
require peak current through R1 < 2 A
require final voltage at out > 9 V
"""

RLC = """\
circuit "series RLC step"
param R = 10 Ω
ground gnd
voltage_source V1 in -- gnd step from 0 V to 10 V at 0 s
resistor R1 in -- a R
inductor L1 a -- out 1 mH initial 0 A
capacitor C1 out -- gnd 1 uF initial 0 V
transient until 1 ms step 50 ns method exact initial rest
record voltage at out
require overshoot voltage at out < 10 %
"""

RESONANCE = """\
circuit "series resonance"
param C = 1 uF
ground gnd
voltage_source V1 in -- gnd sine amplitude 10 V frequency 5 kHz
resistor R1 in -- a 10 Ω
inductor L1 a -- b 1 mH initial 0 A
capacitor C1 b -- gnd C initial 0 V
transient until 2 ms step 1 us method exact initial rest
record current through R1
require peak current through R1 < 0.5 A
"""


def _file(tmp_path, text, name="c.cnet"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_both_ends_of_an_rc_interval_match_closed_forms(tmp_path):
    # Nilsson & Riedel, Electric Circuits, ch. 7: i(0+) = V/R, so peak < I_max needs R > V/I_max;
    # v(T) = V (1 - e^(-T/RC)) > v_min needs R < T / (C ln(V / (V - v_min))).
    result = size(_file(tmp_path, RC), "R1", "1Ω..1kΩ")
    (interval,) = result.intervals
    assert interval.low == pytest.approx(10.0 / 2.0, rel=1e-6)
    assert interval.high == pytest.approx(1e-3 / (1e-6 * math.log(10.0 / 1.0)), rel=1e-6)
    assert interval.low_limit.figure == "peak" and interval.high_limit.figure == "final"
    assert result.exit_code == 0


def test_overshoot_limit_gives_the_damping_ratio_of_the_percent_overshoot_formula(tmp_path):
    # Ogata, Modern Control Engineering, ch. 5: Mp = exp(-πζ/√(1-ζ²)), inverted
    # ζ = -ln(OS)/√(π² + ln²(OS)); a series RLC has ζ = (R/2)√(C/L), so R = 2ζ√(L/C).
    # The overshoot is the largest output sample beyond the last one: with h = 50 ns the
    # sampled peak lies within ½(ω_d h/2)² ≈ 2e-7 of the true one, hence 1e-6 in R.
    OS = 0.10
    zeta = -math.log(OS) / math.sqrt(math.pi**2 + math.log(OS) ** 2)
    expected = 2 * zeta * math.sqrt(1e-3 / 1e-6)
    result = size(_file(tmp_path, RLC), "R", "10Ω..200Ω")
    (interval,) = result.intervals
    assert interval.low == pytest.approx(expected, rel=1e-6)
    assert interval.high == 200.0 and interval.high_limit is None  # the end of the range searched


def test_non_monotone_margin_gives_two_intervals(tmp_path):
    # The peak current of a series RLC driven at 5 kHz has a resonance near C = 1/(ω²L) ≈ 1.01 µF
    # (Nilsson & Riedel ch. 14): a peak limit holds below and above it, not around it.
    path = _file(tmp_path, RESONANCE)
    result = size(path, "C", "0.1uF..10uF")
    assert len(result.intervals) == 2
    first, second = result.intervals
    resonance = 1.0 / ((2 * math.pi * 5e3) ** 2 * 1e-3)
    assert first.high < resonance < second.low
    # each inner end is where the limit is met exactly: a single run just outside fails,
    # just inside passes (co.simulate, independent of the batch engine)
    for end, inside in ((first.high, 0.999), (second.low, 1.001)):
        for factor, passes in ((inside, True), (1 / inside, False)):
            waves = co.simulate(path, overrides={"C": end * factor}, method="exact")
            limits = co.check_requirements(co.load(path).requirements, waves)
            assert limits[0].passed is passes


def test_preferred_values_keep_the_tolerance_band_inside(tmp_path):
    result = size(_file(tmp_path, RC), "R1", "1Ω..1kΩ")
    assert result.tolerance == pytest.approx(0.05)
    (e24,) = result.preferred["E24"]
    (interval,) = result.intervals
    assert np.all(e24 * 0.95 >= interval.low) and np.all(e24 * 1.05 <= interval.high)
    assert e24[0] == 5.6 and e24[-1] == 390.0  # 5.1 × 0.95 < 5 Ω; 430 × 1.05 > 434 Ω


def test_no_value_meets_the_limits(tmp_path):
    result = size(_file(tmp_path, RC), "R1", "1Ω..4Ω")
    assert result.intervals == [] and result.exit_code == 1


YIELD_RC = RC.replace("R1 in -- out R ± 5 %", "R1 in -- out R ± 5 % uniform").replace(
    "require final voltage at out > 9 V\n", "")


def test_yield_sizing_matches_the_uniform_distribution(tmp_path):
    # R1 = x (1 + d), d uniform on [-r, r] (the netlist's "± 5 % uniform"); peak = V / (x (1 + d))
    # (Nilsson & Riedel ch. 7) stays below I when d > V/(I x) - 1, so the yield is
    # (r - (V/(I x) - 1)) / (2r) and reaches p at x = V / (I (1 + r (1 - 2p))) (uniform CDF).
    # Latin-hypercube samples put one sample in each of N strata of d, so the empirical
    # yield is within 1/N of the true one: 2r/N = 1e-4 in d, hence rel 2e-4 in x.
    V, I, r, p = 10.0, 2.0, 0.05, 0.95
    result = size(_file(tmp_path, YIELD_RC), "R1", "1Ω..1kΩ", yield_target=p, yield_samples=1000)
    (interval,) = result.intervals
    assert interval.low == pytest.approx(V / (I * (1 + r * (1 - 2 * p))), rel=2e-4)
    assert interval.low_limit.figure == "peak"
    assert interval.high == 1000.0 and interval.high_limit is None
    estimate, low, high = result.yield_details["ends"][result.yield_details["inside_ends"][0][0]]
    assert estimate >= p and low < p < high


def test_yield_needs_tolerances(tmp_path):
    with pytest.raises(CircuitodeError, match="needs tolerances"):
        size(_file(tmp_path, YIELD_RC.replace(" ± 5 % uniform", "")), "R1", "1Ω..1kΩ", yield_target=0.99)


def test_cli_size_with_yield(tmp_path, capsys):
    code = main(["size", str(_file(tmp_path, YIELD_RC)), "--part", "R1", "--range", "1Ω..100Ω",
                 "--yield", "95%", "--samples", "200"])
    text = capsys.readouterr().out
    assert code == 0
    assert "yield target 95 % over 200 Latin-hypercube samples of R1" in text
    assert "95 % Wilson interval" in text


def test_cli_size_prints_interval_ends_and_series(tmp_path, capsys):
    code = main(["size", str(_file(tmp_path, RC)), "--part", "R1", "--range", "1Ω..1kΩ"])
    text = capsys.readouterr().out
    assert code == 0
    assert "every requirement holds for R1 from 5 Ω to 434.3 Ω" in text
    assert "lower end 5 Ω: set by peak of current through R1 < 2 A" in text
    assert "IEC 60063" in text and "E24: 5.6 Ω" in text


@pytest.mark.parametrize("args, words", [
    (["--part", "R_1", "--range", "1Ω..1kΩ"], "--part names 'R_1'"),
    (["--part", "R1", "--range", "1F..2F"], "ohms"),
    (["--part", "R1", "--range", "1Ω"], "LOW..HIGH"),
    (["--part", "R1", "--range", "5Ω..1Ω"], "LOW < HIGH"),
    (["--part", "R1", "--range", "1Ω..1kΩ", "--yield", "100%"], "between 0 % and 100 %"),
])
def test_cli_size_bad_input_is_exit_2(tmp_path, capsys, args, words):
    assert main(["size", str(_file(tmp_path, RC))] + args) == 2
    assert words in capsys.readouterr().err


def test_readme_precharge_sizing_numbers():
    # README "Design studies": the lower end is where 48 V over the series path gives 6 A
    # (Nilsson & Riedel ch. 7: i(0+) = V / R_total with the capacitor at 0 V): R_int 25 mΩ,
    # R_pre, then R_esr 8 mΩ in parallel with R_load 2.2 kΩ.
    from pathlib import Path

    path = Path(__file__).resolve().parent.parent / "netlists" / "precharge.cnet"
    result = size(path, "R_pre", "1Ω..1kΩ")
    (interval,) = result.intervals
    expected = 48.0 / 6.0 - 25e-3 - 1 / (1 / 8e-3 + 1 / 2.2e3)
    assert interval.low == pytest.approx(expected, rel=1e-6)
    assert interval.high_limit.figure == "final" and 22.0 < interval.high < 23.0
    assert list(result.preferred["E12"][0]) == [10, 12, 15, 18]


def test_sizing_a_source_level(tmp_path):
    # pack.value, the dc level of the pre-charge example: the peak R1 current at closing is
    # V / (R_int + R_pre + R_esr ∥ R_load) (Nilsson & Riedel ch. 7), and the settled link is the
    # divider V · R_load / (R_load + R_int + R_pre ∥ R_on) once the bypass is closed (ch. 3).
    from pathlib import Path

    path = Path(__file__).resolve().parent.parent / "netlists" / "precharge.cnet"
    result = size(path, "pack.value", "20V..100V")
    (interval,) = result.intervals
    parallel = lambda a, b: a * b / (a + b)  # noqa: E731
    assert interval.low == pytest.approx(47.0 * (2200 + 25e-3 + parallel(10.0, 2e-3)) / 2200, rel=1e-6)
    assert interval.high == pytest.approx(6.0 * (25e-3 + 10.0 + parallel(8e-3, 2200)), rel=1e-6)
    assert result.unit == "V" and result.preferred == {}
    assert repr(result) == "<SizingResult pack.value: 47 V to 60.2 V>"


def test_yield_refuses_to_drop_a_tolerance_the_part_was_written_with(tmp_path):
    text = RC.replace("param R = 10 Ω", "param R = 10 Ω ± 5 %").replace("out R ± 5 %", "out R")
    with pytest.raises(CircuitodeError, match="tolerance of R reaches no element once R1 is sized"):
        size(_file(tmp_path, text), "R1", "1Ω..1kΩ", yield_target=0.9, yield_samples=50)


def test_a_closing_angle_is_sized_and_printed_in_degrees(capsys):
    """size printed an angle in rad ("searched 0 rad to 3.142 rad") where sweep and --set use
    degrees; the ends printed are the interval's own, converted (180/π deg per rad)."""
    from pathlib import Path

    netlist = Path(__file__).resolve().parents[1] / "netlists" / "reactor_inrush.cnet"
    fit = size(netlist, "K_on.angle", "0deg..180deg")
    assert main(["size", str(netlist), "--part", "K_on.angle", "--range", "0deg..180deg"]) == 0
    text = capsys.readouterr().out
    assert " rad" not in text and "searched 0 deg to 180 deg" in text
    low, high = (co.quantities.format_si(math.degrees(v), "deg") for v in
                 (fit.intervals[0].low, fit.intervals[0].high))
    assert f"for K_on.angle from {low} to {high}" in text
