"""Malformed netlists: each gets our own located, plain-worded NetlistError — never a traceback."""
from __future__ import annotations

import re
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from circuitode.model import Circuit
from circuitode.errors import NetlistError
from circuitode.netlist import loads
from circuitode.netlist.lark_parser import cached_parser as _parser

BASE = "ground g\nvoltage_source V1 a -- g constant 1 V\nresistor R1 a -- b 1\ncapacitor C1 b -- g 1 uF\n"  # 4 lines

# (netlist text, line, column, a regex the message must contain, a regex the hint must contain or None)
CASES = [
    ("resistr R1 a -- g 5", 1, 1, r"unknown statement 'resistr'", r"did you mean 'resistor'"),
    ("ground g\nresistor R1 a - g 5", 2, 15, r"expected '--' between the two nodes", None),
    ("ground g\nresistor R1 a -- g 5 kg", 2, 22, r"unknown unit 'kg'", r"prefixes are p n u"),
    ("ground g\nresistor R1 a -- g", 2, 19, r"ends too early; expected a value", None),
    ("ground g\ncapacitor C1 a -- g 10 mH", 2, 21, r"a capacitor's value is in farads \(F\); got H", None),
    ("ground g\nresistor R1 a -- g 10 meg", 2, 23, r"unknown unit 'meg'", r"capital M"),
    ('circuit "unterminated', 1, 9, r"not closed", None),
    ("param x = 3 $ 4", 1, 13, r"unexpected character '\$'", None),
    (BASE + "require peek voltage at b < 3 V", 5, 9, r"unexpected 'peek'", r"did you mean 'peak'"),
    (BASE + "require peak voltage at b < 3 A", 5, 29, r"in volts \(V\); got A", None),
    (BASE + "require overshoot voltage at b < 10", 5, 34, r"overshoot needs its unit", r"percent"),
    (BASE + "record voltage at bb", 5, 19, r"there is no node 'bb'", r"did you mean 'b'"),
    (BASE + "record current through R2", 5, 24, r"there is no element 'R2'", r"R1"),
    (BASE + "require i2t voltage at b < 3 A²s", 5, 13, r"i2t is taken of a current", None),
    ("param a = b\nparam b = c * 2\nparam c = a + 1", 3, 11, r"circle: a → b → c → a", None),
    ("param x = y2 + 1\nparam y = 2", 1, 11, r"unknown name 'y2'", r"did you mean 'y'"),
    ("param x = sqr(4)", 1, 11, r"unknown function 'sqr'", r"did you mean 'sqrt'"),
    (BASE + "voltage_source V2 b -- g sinus amplitude 1 V frequency 1 Hz", 5, 26, r"unknown waveform 'sinus'",
     r"did you mean 'sine'"),
    (BASE + "voltage_source V2 b -- g sine amplitude 1 V", 5, 26, r"needs the field 'frequency'", None),
    (BASE + "voltage_source V2 b -- g sine amplitude 1 V frequency 1 Hz amplitud 3 V", 5, 60,
     r"no field 'amplitud'", r"did you mean 'amplitude'"),
    (BASE + "current_source I2 b -- g constant 3 V", 5, 35, r"in amperes \(A\); got V", None),
    (BASE + "switch K a -- b closes at 2 ms closes at 3 ms", 5, 32, r"already closed", None),
    (BASE + "switch K a -- b closes at 2 ms opens at 1 ms", 5, 41, r"times must increase", None),
    (BASE + "switch K a -- b opens when power in R1 > 3 W", 5, 28, r"cannot watch a power", None),
    (BASE + "switch K a -- b toggles every 1 ms duty 140 %", 5, 41, r"duty must lie strictly between", None),
    # a word after a name ending in a digit (R1) is no unit: it said "unknown unit 'between'"
    (BASE + "require peak current through R1 between 1 ms and 2 ms < 1 A", 5, 33,
     r"unexpected 'between'; expected a window", r"'from A to B', 'after A' or 'before B'"),
    (BASE + "require peak current through R1 form 1 ms to 2 ms < 1 A", 5, 33,
     r"unexpected 'form'; expected a window", r"'from A to B'"),
    (BASE + "resistor R2 a -- b 10ohmz", 5, 22, r"unknown unit 'ohmz'", None),
    # a period ≤ 0 s gave no end of toggle instants: `run` looped for ever (-1 ms) or failed inside (0 s)
    (BASE + "switch K a -- b toggles every -1 ms duty 40 %", 5, 31, r"toggling period must be positive", None),
    (BASE + "switch K a -- b toggles every 0 s duty 40 %", 5, 31, r"toggling period must be positive", None),
    # point-on-wave closing: the angle of a sine source, in degrees or radians
    (BASE + "switch K a -- b closes on angle 90 deg of V1", 5, 43, r"closes on an angle of 'V1', which is not a sine source",
     r"declare a 'sine' source"),
    (BASE + "switch K a -- b closes on angle 5 ms of V1", 5, 33, r"closing angle is in degrees", None),
    (BASE + "voltage_source V2 b -- g sine amplitude 1 V frequency 0 Hz\nswitch K a -- b closes on angle 90 deg of V2", 6, 43,
     r"frequency is 0 Hz: its phase never comes round", r"positive frequency"),
    (BASE + "switch K a -- b closes on angle 90 of V1", 5, 33, r"closing angle needs its unit", r"e\.g\. 90 deg"),
    (BASE + "switch K a -- b closes on angle of V1", 5, 33, r"the angle is missing: a value with its unit",
     r"closes on angle 90 deg of V1"),
    (BASE + "switch K a -- b opens on angle of", 5, 32, r"the angle is missing", r"opens on angle 90 deg of"),
    (BASE + "transient until 10 ms method rk5", 5, 23, r"unknown method 'rk5'", r"rk45"),
    (BASE + "transient step 1 us", 5, 1, r"needs its end time", r"until"),
    (BASE + "transient until 1 ms\ntransient until 2 ms", 6, 1, r"second 'transient'", None),
    (BASE + "resistor R1 b -- g 5", 5, 10, r"'R1' is already used", r"t\.cnet:3:10"),
    (BASE + "coupling K R1 with C1 k 0.5", 5, 12, r"joins two inductors; 'R1' is a resistor", None),
    ("param x = 1 / 0", 1, 11, r"does not evaluate to a finite number", r"division by zero"),
    ("param x = (1 + 2", 1, 17, r"ends too early; expected '\)'", None),
    ("param x = 1 ± 5", 1, 15, r"tolerance is written in percent", None),
    ("param x = 1 ± 5 % gaussian", 1, 19, r"unknown distribution 'gaussian'", r"'normal' or 'uniform'"),
    (BASE + "voltage_source Vw b -- g points (0 s, 0 V) (2 ms, 1 V) (1 ms, 0 V)", 5, 57, r"times must increase", None),
    ("ground g\nground h", 2, 8, r"ground node is declared twice", None),
    (BASE + "resistor R2 a -- b 5 initial 3 V", 5, 30, r"resistor has no initial value", None),
    ("ground gg\nresistor R1 a -- g 1", 1, 8, r"'gg' is not connected", r"did you mean 'g'"),
    ("param x = 2 ohm\nparam x = 3 ohm", 2, 7, r"'x' is defined twice", r"t\.cnet:1:7"),
    (BASE + "transient until 1 ms step 1 us points 100", 5, 32, r"either 'step' or 'points'", None),
    (BASE + "voltage_source V2 b -- g pulses top 5 V every 2 us hold 1 us repeats 2.5", 5, 70,
     r"whole number", None),
    (BASE + "require energy in R9 < 2 J", 5, 19, r"no element 'R9'", None),
    (BASE + "require peak voltage at b 3 V", 5, 27, r"unexpected '3'; expected .*comparison", None),
    (BASE + "  switch K a -- b closes at 1 ms opns at 2 ms", 5, 34, r"unexpected 'opns'", r"did you mean 'opens'"),
    ("ground g\ncapacitor C1 a -- g 4R7", 2, 21, r"farads \(F\); got Ω", None),
    ("ground g\n\n# a comment\nresistor R1 a -- g 5 ± 5 %  # fine\nresistor R2 a -- g 1 KΩ", 5, 22,
     r"unknown unit 'KΩ'", r"case-sensitive"),
    (BASE + "switch K a -- b closes when voltage at b > 3 A", 5, 44, r"switching level is in volts", None),
    (BASE + "record voltage across g", 5, 23, r"no element 'g'", None),
    ("param x = 1.2.3", 1, 11, r"'1\.2\.3' is not a number", r"one decimal point"),
    ("ground g\nvoltage_source V a -- g", 2, 24, r"ends too early; expected a waveform \(constant, step", None),
    # The former source and coupling words are not accepted; the hint names the word that replaced them.
    (BASE + "voltage_source V2 b -- g dc 3 V", 5, 26, r"unknown waveform 'dc'", r"did you mean 'constant'"),  # former words: keep
    (BASE + "voltage_source V2 b -- g pwl (0 s, 0 V) (1 ms, 1 V)", 5, 26, r"unknown waveform 'pwl'",  # former words: keep
     r"did you mean 'points'"),
    (BASE + "voltage_source V2 b -- g pulse high 5 V width 1 us period 2 us", 5, 26, r"unknown waveform 'pulse'",  # former words: keep
     r"did you mean 'pulses'"),
    (BASE + "voltage_source V2 b -- g pulses top 5 V every 2 us width 1 us", 5, 52, r"no field 'width'",
     r"did you mean 'hold'"),
    (BASE + "voltage_source V2 b -- g pulses high 5 V every 2 us hold 1 us", 5, 33, r"no field 'high'",
     r"did you mean 'top'"),
    (BASE + "inductor L1 a -- g 1 mH\ninductor L2 b -- g 1 mH\ncoupling K1 L1 L2 k 0.9", 7, 16,  # former words: keep
     r"'with' between them", r"coupling M1 L1 with L2"),
    (BASE + "voltage_source V2 b -- g pulses top 5 V every 2 us", 5, 26, r"needs 'hold' .* or 'duty'", None),
    (BASE + "voltage_source V2 b -- g pulses top 5 V every 2 us hold 1 us duty 50 %", 5, 62, r"either 'hold' or 'duty'",
     None),
    (BASE + "voltage_source V2 b -- g pulses top 5 V every 2 us hold 1 us edges 1 ns falling 2 ns", 5, 73,
     r"'edges' already sets both", r"rising T1 falling T2"),
    (BASE + "voltage_source V2 b -- g pulses top 5 V every 2 us hold 1.5 us rising 1 us", 5, 57,
     r"longer than its period", r"rising \+ hold \+ falling = 2\.5 µs"),
    (BASE + "voltage_source V2 b -- g pulses top 5 V every 2 us duty 10 % edges 1 us", 5, 57,
     r"shorter than half the two edges", None),
    ("param x = 4k7k", 1, 11, r"already holds its prefix", None),
    ("param v = 2 V\nparam x = 1 + (v - 2 A)", 2, 16, r"cannot subtract volts \(V\) and amperes \(A\)", None),
    (BASE + "record voltage atb", 5, 16, r"'atb' is not a word of this statement", r"space after 'at'"),
    (BASE + "transient until 5 ms\nrequire peak voltage at b from 3 ms to 2 ms < 3 V", 6, 27,
     r"window of this requirement is empty", r"earlier instant after 'from'"),
    (BASE + "transient until 5 ms\nrequire i2t current through R1 after 6 ms < 1 A²s", 6, 32,
     r"starts at 6 ms, outside the run \(0 s to 5 ms\)", r"run longer"),
    (BASE + "require peak voltage at b from 1 ms until 2 ms < 3 V", 5, 37, r"expected 'to' between the two instants",
     r"from 0 s to 10 ms"),
]


def _lark_names() -> set[str]:
    lark_classes = {"UnexpectedToken", "UnexpectedCharacters", "UnexpectedEOF", "UnexpectedInput", "VisitError",
                    "LarkError", "Token(", "Tree(", "Traceback", "lark"}
    return {t.name for t in _parser().terminals if len(t.name) >= 3} | lark_classes


@pytest.mark.parametrize("text, line, column, gist, hint", CASES, ids=[f"case{i}" for i in range(len(CASES))])
def test_located_plain_error(text, line, column, gist, hint):
    with pytest.raises(NetlistError) as info:
        loads(text, "t.cnet")
    err = info.value
    assert err.where is not None
    assert (err.where.file, err.where.line, err.where.column) == ("t.cnet", line, column)
    assert err.where.text == text.splitlines()[line - 1]
    assert re.search(gist, err.message), err.message
    if hint is not None:
        assert err.hint and re.search(hint, err.hint), err.hint
    shown = str(err)
    assert shown.startswith(f"t.cnet:{line}:{column}: error: ")
    # the caret sits under the reported column
    quoted, caret = shown.splitlines()[1:3]
    assert caret.index("^") == column - 1 + 4 and quoted.strip() == text.splitlines()[line - 1].strip()
    for name in _lark_names():
        assert name not in shown, f"lark's name {name!r} leaked into: {shown}"


def test_there_are_at_least_twenty_distinct_cases():
    assert len({c[0] for c in CASES}) >= 20


def test_unknown_override_has_no_location_but_a_suggestion():
    with pytest.raises(NetlistError) as info:
        loads("param R_pre = 10 Ω", overrides={"R_per": 5.0})
    assert info.value.where is None and "did you mean 'R_pre'" in info.value.hint


def test_include_in_text_resolves_from_the_current_folder(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    with pytest.raises(NetlistError) as info:
        loads('ground g\ninclude "parts.cnet"', "<text>")
    assert info.value.where.line == 2 and "does not exist" in info.value.message


# ---------------------------------------------------------------------------
# Property: whatever the text, the result is a Circuit or a NetlistError.
# ---------------------------------------------------------------------------

NETLISTS = Path(__file__).resolve().parent.parent / "netlists"
EXAMPLE_TEXTS = [(p, p.read_text(encoding="utf-8")) for p in sorted(NETLISTS.glob("*.cnet"))]
PIECES = [
    "resistor", "capacitor", "inductor", "switch", "voltage_source", "current_source", "coupling", "param",
    "ground", "record", "require", "transient", "include", "circuit", " -- ", " = ", " ± ", " +- ", " % ",
    "(", ")", ",", "^", "*", "/", "-", "+", "<", ">=", " 4k7", " 1e-3", " 2 mH", " Ω", " µF", "\n", "\t", "#",
    '"', " at ", " when ", " closes", " opens", " toggles", " on ", " off ", " k ", " with ", " points ", " constant ", " pulses ", " sine ",
    "initial", "until", "step", "points", "method", "energy in", "voltage at", "current through", " a", " b",
    " g", "1", "0", "9999999999999999999", "1e999", ".", "R2", "\u2126", "²", "\r\n",
]


LARK_NAMES = _lark_names()


def _outcome(text: str, filename: str) -> None:
    try:
        result = loads(text, filename)
    except NetlistError as err:
        shown = str(err)  # the message itself must render, in our words only
        assert not any(name in shown for name in LARK_NAMES), shown
        return
    assert isinstance(result, Circuit)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.sampled_from(PIECES), max_size=40).map("".join))
def test_random_text_is_a_circuit_or_a_netlist_error(text):
    _outcome(text, "<text>")


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    example=st.sampled_from(range(len(EXAMPLE_TEXTS))),
    edits=st.lists(
        st.tuples(st.sampled_from(["delete", "insert", "replace", "drop_line", "swap_lines"]),
                  st.integers(min_value=0, max_value=10**6), st.sampled_from(PIECES)),
        min_size=1, max_size=4,
    ),
)
def test_mutated_examples_are_a_circuit_or_a_netlist_error(example, edits):
    path, text = EXAMPLE_TEXTS[example]
    for kind, position, piece in edits:
        if kind in ("drop_line", "swap_lines"):
            lines = text.split("\n")
            i = position % len(lines)
            if kind == "drop_line":
                del lines[i]
            else:
                j = (position // 7) % len(lines)
                lines[i], lines[j] = lines[j], lines[i]
            text = "\n".join(lines)
            continue
        i = position % (len(text) + 1)
        if kind == "delete":
            text = text[:i] + text[i + 1 + position % 5:]
        elif kind == "insert":
            text = text[:i] + piece + text[i:]
        else:
            text = text[:i] + piece + text[i + len(piece):]
    _outcome(text, str(path))  # the real path, so includes resolve


def test_toggling_switch_former_words_point_to_the_pulses_words():
    """`toggles` speaks the words of `pulses`; its former words get their successor as the hint."""
    from circuitode.errors import NetlistError
    from circuitode.netlist import loads
    for former, successor in (("period", "every"), ("start", "from")):
        text = ("voltage_source V1 a -- gnd constant 1 V\nresistor R1 b -- gnd 1 kΩ\n"
                f"switch S1 a -- b toggles every 1 ms duty 50 % {former} 1 ms\n" if former == "start" else
                "voltage_source V1 a -- gnd constant 1 V\nresistor R1 b -- gnd 1 kΩ\n"
                f"switch S1 a -- b toggles {former} 1 ms duty 50 %\n")
        with pytest.raises(NetlistError) as caught:
            loads(text)
        assert f"did you mean '{successor}'" in str(caught.value)


def test_run_of_a_toggling_switch_without_a_positive_period_is_exit_2(tmp_path, capsys):
    """`run` refuses it at its place before any work (it used to loop for ever in the bounds check)."""
    from circuitode.cli import main

    path = tmp_path / "toggle.cnet"
    path.write_text(BASE + "switch K a -- b toggles every -10 us duty 40 %\ntransient until 1 ms step 1 us\n",
                    encoding="utf-8")
    assert main(["run", str(path), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert "toggle.cnet:5:31: error: a toggling period must be positive" in err and "Traceback" not in err
