"""Reading and printing SI quantities (circuitode.quantities)."""
from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from circuitode.errors import NetlistError
from circuitode.quantities import (
    PREFIXES, UNITS, check_unit, format_si, parse_quantity, read_quantity, si_scale, split_unit,
)

# BIPM, "The International System of Units (SI)", 9th edition (2019), table 7
# (SI prefixes): pico 1e-12, nano 1e-9, micro 1e-6, milli 1e-3, kilo 1e3,
# mega 1e6, giga 1e9.  Symbols are case-sensitive (m milli, M mega); the micro
# sign is µ, written u where that letter is unavailable (common practice).
BIPM_TABLE_7 = {"p": 1e-12, "n": 1e-9, "µ": 1e-6, "m": 1e-3, "k": 1e3, "M": 1e6, "G": 1e9}


@pytest.mark.parametrize("prefix, factor", sorted(BIPM_TABLE_7.items()))
def test_prefixes_match_bipm_table_7(prefix, factor):
    assert PREFIXES[prefix] == factor
    # the decimal scaling is exact: 4.7 kΩ is the float nearest to 4700, not 4.7 * 1000
    assert parse_quantity(f"4.7 {prefix}F") == float(f"4.7e{round(math.log10(factor))}")


def test_micro_has_three_spellings():
    # u (ASCII), U+00B5 micro sign, U+03BC Greek mu: the same prefix (common practice)
    assert parse_quantity("100 uF") == parse_quantity("100 \u00b5F") == parse_quantity("100 \u03bcF") == 1e-4


def test_prefixes_are_case_sensitive():
    # BIPM SI Brochure 9th ed., table 7: m = milli, M = mega
    assert parse_quantity("2 mΩ") == pytest.approx(2e-3)
    assert parse_quantity("2 MΩ") == pytest.approx(2e6)
    with pytest.raises(NetlistError, match="case-sensitive"):
        parse_quantity("2 KΩ")


def test_meg_is_not_a_prefix():
    with pytest.raises(NetlistError, match="capital M"):
        parse_quantity("10 meg")


@pytest.mark.parametrize(
    "code, value",
    [
        # IEC 60062:2016, the letter-and-digit code for resistance and capacitance
        # values (clause number from memory: clause 4): the letter stands at the
        # place of the decimal point and gives the multiplier; R is the unit
        # multiplier for ohms.
        ("4k7", 4.7e3),
        ("2m2", 2.2e-3),
        ("4R7", 4.7),
        ("4n7", 4.7e-9),
        ("1M5", 1.5e6),
        ("6p8", 6.8e-12),
        ("3u3", 3.3e-6),
        ("10k0", 10e3),
    ],
)
def test_iec_60062_letter_codes(code, value):
    assert parse_quantity(code) == pytest.approx(value, rel=1e-15)


def test_iec_code_r_means_ohms():
    assert read_quantity("4R7").unit == "Ω"
    assert parse_quantity("4R7 Ω", "Ω") == pytest.approx(4.7)
    with pytest.raises(NetlistError, match="marks a value in ohms"):
        parse_quantity("4R7 F")
    with pytest.raises(NetlistError, match="farads"):
        parse_quantity("4R7", "F", "a capacitor's value")


@pytest.mark.parametrize(
    "text, unit, value",
    [
        ("48 V", "V", 48.0),
        ("2 mH", "H", 2e-3),
        ("10 ms", "s", 10e-3),
        ("50 Hz", "Hz", 50.0),
        ("1.5 kA", "A", 1500.0),
        ("33 ohm", "Ω", 33.0),
        ("33 ohms", "Ω", 33.0),
        ("33 \u2126", "Ω", 33.0),  # the ohm sign U+2126
        ("2 J", "J", 2.0),
        ("5 kW", "W", 5000.0),
        ("0.5 A²s", "A²s", 0.5),
        ("0.5 A2s", "A²s", 0.5),
        ("3 kA²s", "A²s", 3000.0),
        ("5 kV/ms", "V/s", 5e6),
        ("2 A/us", "A/s", 2e6),
        ("-2 mA", "A", -2e-3),
        ("1e-3 F", "F", 1e-3),
        (".5 V", "V", 0.5),
    ],
)
def test_units_and_values(text, unit, value):
    assert parse_quantity(text, unit) == pytest.approx(value, rel=1e-15)


def test_percent_is_a_fraction_and_takes_no_prefix():
    assert parse_quantity("40 %", "%") == pytest.approx(0.40)
    with pytest.raises(NetlistError, match="no prefix"):
        parse_quantity("4 m%")


def test_degrees_become_radians():
    # 1° = (π/180) rad: BIPM SI Brochure 9th ed., table 8 (non-SI units accepted
    # for use with the SI; table number from memory)
    assert parse_quantity("90 deg", "rad") == pytest.approx(math.pi / 2)
    assert parse_quantity("180 °", "rad") == pytest.approx(math.pi)
    assert parse_quantity("1 rad", "rad") == 1.0


def test_an_angle_given_without_its_unit_is_refused():
    """A netlist refuses a bare closing angle; --set and --vary read '30' as 30 rad (1719 deg)
    until they did the same."""
    with pytest.raises(NetlistError, match="needs its unit") as info:
        parse_quantity("30", "rad", "the value given for 'K_on.angle'")
    assert "deg" in info.value.hint
    assert parse_quantity("30", "Ω") == 30.0  # other units still take a bare number as SI


def test_wrong_kind_of_unit_names_the_expected_unit():
    with pytest.raises(NetlistError) as info:
        parse_quantity("1 H", "F", "a capacitor's value")
    assert "a capacitor's value is in farads (F); got H" in str(info.value)


def test_unknown_units_are_refused():
    for bad in ("4 kg", "4 Ohm", "4 mdeg", "4 V/kg"):
        with pytest.raises(NetlistError):
            parse_quantity(bad)
    with pytest.raises(NetlistError, match="not a quantity"):
        parse_quantity("four volts")


def test_out_of_range_is_refused():
    with pytest.raises(NetlistError, match="out of range"):
        parse_quantity("1e400 V")


def test_unit_without_prefix_and_bare_prefix():
    assert split_unit("") == (1.0, None)
    assert split_unit("k") == (1e3, None)
    assert split_unit("Hz") == (1.0, "Hz")
    assert split_unit("MHz") == (1e6, "Hz")


def test_check_unit_accepts_unwritten_units():
    check_unit(None, "F", "a capacitor's value")  # a plain number is taken as SI
    check_unit("F", None, "anything")
    with pytest.raises(NetlistError, match="plain number"):
        check_unit("V", "", "a coupling factor k")


@pytest.mark.parametrize(
    "value, unit, text",
    [
        (0.0047, "F", "4.7 mF"),
        (1500, "Ω", "1.5 kΩ"),
        (48.0, "V", "48 V"),
        (2.5e-7, "s", "250 ns"),
        (-2.5e-7, "s", "-250 ns"),
        (999.96, "V", "1 kV"),  # rounding to 4 digits carries into the next prefix
        (0.0, "A", "0 A"),
        (12.5, "%", "12.5 %"),
        (3.2e3, "A²s", "3.2 kA²s"),
        (1e-12, "F", "1 pF"),
        (6.8e-6, "H", "6.8 µH"),
    ],
)
def test_format_si(value, unit, text):
    assert format_si(value, unit) == text


def test_format_si_digits():
    assert format_si(1234.5678, "Ω", digits=3) == "1.23 kΩ"
    assert format_si(1234.5678, "Ω", digits=6) == "1.23457 kΩ"


@settings(max_examples=200, deadline=None)
@given(
    mantissa=st.floats(min_value=1.0, max_value=999.0, allow_nan=False),
    exponent=st.sampled_from([-12, -9, -6, -3, 0, 3, 6, 9]),
    unit=st.sampled_from(["Ω", "F", "H", "V", "A", "s", "Hz", "J", "W"]),
    sign=st.sampled_from([1.0, -1.0]),
)
def test_format_then_parse_round_trip(mantissa, exponent, unit, sign):
    value = sign * mantissa * 10.0**exponent
    back = parse_quantity(format_si(value, unit, digits=6), unit)
    assert back == pytest.approx(value, rel=1e-5)  # six significant digits printed


def test_si_scale_for_plot_axes():
    assert si_scale(np.array([0.0, 0.03, 0.06])) == (1e3, "m")  # a 60 ms window reads in ms
    factor, prefix = si_scale([1.2e4, -2.5e4])
    assert (factor, prefix) == (1e-3, "k")
    assert si_scale([0.0, 0.0]) == (1.0, "")
    assert si_scale([]) == (1.0, "")
    assert si_scale([np.nan, 5e-6]) == (1e6, "µ")


def test_every_unit_is_known_to_the_grammar():
    # the lexer's unit pattern and the unit table must agree, prefix by prefix
    from circuitode.netlist import loads

    for unit, spec in UNITS.items():
        written = [unit] + ([p + unit for p in PREFIXES] if spec.prefixable else [])
        for text in written:
            c = loads(f"param x = 2 {text}")
            assert c.parameters["x"] == pytest.approx(parse_quantity(f"2 {text}")), text


def test_iec_code_takes_no_second_prefix():
    # IEC 60062:2016 letter code: the letter is the multiplier, so a further prefix is a slip
    assert parse_quantity("4k7 Ω", "Ω") == 4700.0
    for bad in ("4k7 kΩ", "4k7k", "2m2 mF"):
        with pytest.raises(NetlistError, match="already holds its prefix"):
            parse_quantity(bad)
