"""Netlist statements build the right Circuit (circuitode.netlist)."""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from circuitode import model as cm
from circuitode import model as src
from circuitode.errors import NetlistError
from circuitode.netlist import load, loads
from circuitode.netlist.build import FIGURE_WORDS, METHOD_NAMES

NETLISTS = Path(__file__).resolve().parent.parent / "netlists"

# ---------------------------------------------------------------------------
# The flavour example of DESIGN.md must parse and build as written.
# ---------------------------------------------------------------------------
DESIGN_FLAVOUR = """\
# Pre-charge of a 48 V motor-controller DC link
circuit "DC-link pre-charge"
param R_pre  = 33 Ω ± 5 %
param C_link = 1.5 mF ± 20 %
ground gnd
voltage_source pack   pack -- gnd  constant 48 V
resistor  R_int   pack -- a     25 mΩ
switch    K_pre   a -- b        closes at 1 ms
resistor  R1      b -- link     R_pre
switch    K_main  a -- link     closes when voltage at link > 43 V  on 2 mΩ
capacitor C1      link -- gnd   C_link  initial 0 V
resistor  R_load  link -- gnd   2.2 kΩ
transient until 60 ms step 5 us method auto
record voltage at link, current through R1, current through K_main
require peak current through R1 < 2 A
"""


def test_design_flavour_example_builds():
    c = loads(DESIGN_FLAVOUR, "flavour.cnet")
    assert c.title == "DC-link pre-charge"
    assert c.ground == "gnd"
    assert [e.name for e in c.elements] == ["pack", "R_int", "K_pre", "R1", "K_main", "C1", "R_load"]
    assert c.element("R_int").resistance == pytest.approx(25e-3)
    assert c.element("R_load").resistance == pytest.approx(2200.0)
    assert c.element("R1").resistance == 33.0
    assert c.element("C1") == cm.Capacitor("C1", "link", "gnd", 1.5e-3, 0.0)
    k_main = c.element("K_main")
    assert k_main.control == cm.ThresholdRule(True, cm.NodeVoltage("link"), True, 43.0)
    assert k_main.on_resistance == pytest.approx(2e-3) and k_main.off_resistance is None
    assert c.element("K_pre").control == cm.TimedSchedule(False, ((1e-3, True),))
    assert c.analysis == cm.Analysis(until=0.06, step=5e-6, method="auto")
    assert c.records == (cm.NodeVoltage("link"), cm.CurrentThrough("R1"), cm.CurrentThrough("K_main"))
    assert c.requirements == (cm.Requirement("peak", cm.CurrentThrough("R1"), "<", 2.0),)
    assert c.spreads["R_pre"] == cm.Spread("R_pre", 33.0, 0.05, "normal")
    assert c.recipes[("R1", "resistance")].names == frozenset({"R_pre"})


# ---------------------------------------------------------------------------
# Elements
# ---------------------------------------------------------------------------


def test_passive_elements_and_reference_direction():
    c = loads(
        "ground g\n"
        "resistor R1 a -- g 4k7\n"
        "capacitor C1 a -- b 100 uF initial -2 V\n"
        "inductor L1 b -- g 2 mH initial 0.5 A\n"
        "inductor L2 b -- a 3 mH\n"
        "coupling K1 L1 with L2 k 0.95\n"
    )
    r, cap, l1, l2 = c.elements
    assert (r.first, r.second, r.resistance) == ("a", "g", 4700.0)
    assert (cap.first, cap.second, cap.capacitance, cap.initial_voltage) == ("a", "b", 1e-4, -2.0)
    assert (l1.inductance, l1.initial_current) == (2e-3, 0.5)
    assert l2.initial_current is None
    assert c.couplings == (cm.Coupling("K1", "L1", "L2", 0.95),)
    assert c.nodes == ("g", "a", "b")


def test_names_may_look_like_keywords():
    # the contextual lexer lets node and element names be any identifier
    c = loads("ground at\nresistor in in -- at 1 k\nresistor step in -- on 2\nresistor on on -- at 3")
    assert [e.name for e in c.elements] == ["in", "step", "on"]
    assert c.element("in").first == "in"


def test_file_without_title_is_named_after_the_file(tmp_path):
    path = tmp_path / "snubber.cnet"
    path.write_text("ground g\nresistor R a -- g 1", encoding="utf-8")
    c = load(path)
    assert c.title == "snubber"
    assert c.source_file == str(path)


# ---------------------------------------------------------------------------
# Sources and waveforms
# ---------------------------------------------------------------------------


def _wave(line: str, kind: str = "voltage_source"):
    return loads(f"ground g\n{kind} S a -- g {line}").element("S").waveform


def test_constant():
    assert _wave("constant 48 V") == src.Dc(48.0)
    assert _wave("constant 2 A", "current_source") == src.Dc(2.0)


def test_step_fields_any_order_and_defaults():
    assert _wave("step from 0 V to 48 V at 1 ms") == src.Step(0.0, 48.0, 1e-3)
    assert _wave("step at 1 ms to 48 V from 5 V") == src.Step(5.0, 48.0, 1e-3)
    assert _wave("step to 12 V") == src.Step(0.0, 12.0, 0.0)  # documented defaults: from 0, at 0


def test_ramp():
    assert _wave("ramp from 0 V to 10 V start 1 ms duration 2 ms") == src.Ramp(0.0, 10.0, 1e-3, 2e-3)


def test_pulse_with_count_and_endless():
    w = _wave("pulses base 0 V top 5 V every 20 us hold 10 us edges 1 us from 0 s repeats 5")
    assert w == src.PulseTrain(0.0, 5.0, 0.0, 1e-6, 1e-6, 10e-6, 20e-6, 5)
    assert isinstance(w.count, int)
    w = _wave("pulses top 5 V every 20 us hold 10 us")
    assert w == src.PulseTrain(0.0, 5.0, 0.0, 0.0, 0.0, 10e-6, 20e-6, None)


def test_pulses_unequal_edges_and_field_order_free():
    w = _wave("pulses repeats 2 from 3 us falling 2 us rising 1 us hold 4 us every 20 us top 5 V base -1 V")
    assert w == src.PulseTrain(-1.0, 5.0, 3e-6, 1e-6, 2e-6, 4e-6, 20e-6, 2)


def test_pulses_duty_is_the_ieee_181_duty_factor():
    # IEEE Std 181-2011 definitions (from memory): pulse duration runs between the 50 % reference-level
    # instants of the leading and trailing edges; duty factor = pulse duration / pulse repetition period.
    w = _wave("pulses base 0 V top 10 V every 100 us duty 30 % rising 4 us falling 10 us")
    t = np.linspace(0.0, 100e-6, 1_000_001)
    above = w.value(t) > 5.0
    duration = above.sum() * (t[1] - t[0])
    assert duration == pytest.approx(0.30 * 100e-6, rel=1e-4)
    # with sharp edges the duty is the share of each period at the top level, as for a toggling switch
    sharp = _wave("pulses top 1 V every 8 us duty 25 %")
    assert sharp.width == pytest.approx(2e-6, rel=1e-12)


def test_sine_phase_in_degrees():
    w = _wave("sine amplitude 325 V frequency 50 Hz phase 90 deg offset 0 V delay 0 s")
    assert w.amplitude == 325.0 and w.frequency == 50.0
    assert w.phase == pytest.approx(math.pi / 2)
    assert _wave("sine amplitude 1 A frequency 1 kHz", "current_source") == src.Sine(1.0, 1000.0, 0.0, 0.0, 0.0)


def test_points():
    w = _wave("points (0 s, 0 V) (1 ms, 5 V) (3 ms, 5 V) (4 ms, 0 V)")
    assert w == src.PiecewiseLinear((0.0, 1e-3, 3e-3, 4e-3), (0.0, 5.0, 5.0, 0.0))


def test_exponential():
    w = _wave("exponential from 0 V to 10 V delay 0 s time_constant 1 ms")
    assert w == src.Exponential(0.0, 10.0, 0.0, 1e-3)


# ---------------------------------------------------------------------------
# Switches
# ---------------------------------------------------------------------------


def _switch(line: str) -> cm.Switch:
    return loads(f"ground g\nresistor R1 a -- g 1\ninductor L1 b -- g 1 mH\nswitch K a -- b {line}").element("K")


def test_timed_sequence():
    k = _switch("closes at 1 ms opens at 4 ms closes at 6 ms")
    assert k.control == cm.TimedSchedule(False, ((1e-3, True), (4e-3, False), (6e-3, True)))
    k = _switch("opens at 2 ms")
    assert k.control == cm.TimedSchedule(True, ((2e-3, False),))
    assert k.initially_closed


def test_toggling_duty_is_a_fraction():
    k = _switch("toggles every 20 us duty 40 % from 0 s")
    assert k.control == cm.PeriodicSchedule(20e-6, 0.4, 0.0)
    assert _switch("toggles duty 25 % every 1 ms").control == cm.PeriodicSchedule(1e-3, 0.25, 0.0)


def test_threshold_rules_and_resistances():
    k = _switch("closes when voltage at a > 43 V on 2 mΩ off 10 MΩ")
    assert k.control == cm.ThresholdRule(True, cm.NodeVoltage("a"), True, 43.0)
    assert (k.on_resistance, k.off_resistance) == (pytest.approx(2e-3), pytest.approx(1e7))
    k = _switch("opens when current through L1 < 0.1 A")
    assert k.control == cm.ThresholdRule(False, cm.CurrentThrough("L1"), False, 0.1)
    assert k.initially_closed
    k = _switch("opens when voltage between a and b >= 5 V off 1 kΩ")
    assert k.control == cm.ThresholdRule(False, cm.VoltageBetween("a", "b"), True, 5.0)
    assert k.on_resistance is None and k.off_resistance == 1000.0


# ---------------------------------------------------------------------------
# Analysis, records, requirements
# ---------------------------------------------------------------------------

BASE = "ground g\nvoltage_source V1 a -- g constant 1 V\nresistor R1 a -- b 1\ncapacitor C1 b -- g 1 uF\n"


def test_transient_settings():
    c = loads(BASE + "transient until 60 ms step 5 us method radau initial steady")
    assert c.analysis == cm.Analysis(until=0.06, step=5e-6, method="radau", initial="steady")
    c = loads(BASE + "transient points 2000 until 1 s")
    assert c.analysis == cm.Analysis(until=1.0, points=2000, method="auto", initial="given")
    assert loads(BASE).analysis is None  # the statement is optional


def test_method_names_match_the_solvers():
    from circuitode.solvers import METHODS
    from circuitode.transient.sparse_driver import SPARSE_METHODS

    assert set(METHOD_NAMES) == set(METHODS) | set(SPARSE_METHODS) | {"auto"}


def test_record_all_probe_kinds_without_repeats():
    c = loads(BASE + "record voltage at b, current through R1, voltage between a and b,\n"
                     "       voltage across C1, power in R1, voltage at b")
    assert c.records == (
        cm.NodeVoltage("b"), cm.CurrentThrough("R1"), cm.VoltageBetween("a", "b"),
        cm.VoltageAcross("C1"), cm.PowerIn("R1"),
    )


@pytest.mark.parametrize(
    "line, figure, probe, limit",
    [
        ("peak current through R1 < 2 A", "peak", cm.CurrentThrough("R1"), 2.0),
        ("minimum voltage at b >= -1 V", "minimum", cm.NodeVoltage("b"), -1.0),
        ("final voltage at b > 0.9 V", "final", cm.NodeVoltage("b"), 0.9),
        ("overshoot voltage at b < 10 %", "overshoot", cm.NodeVoltage("b"), 10.0),  # stored in percent
        ("undershoot voltage at b <= 2 %", "undershoot", cm.NodeVoltage("b"), 2.0),
        ("rise time voltage at b < 3 us", "rise_time", cm.NodeVoltage("b"), 3e-6),
        ("settling time voltage at b < 30 ms", "settling_time", cm.NodeVoltage("b"), 0.03),
        ("rms current through R1 < 1 A", "rms", cm.CurrentThrough("R1"), 1.0),
        ("mean power in R1 < 1 W", "mean", cm.PowerIn("R1"), 1.0),
        ("i2t current through R1 < 0.5 A²s", "i2t", cm.CurrentThrough("R1"), 0.5),
        ("I²t current through R1 < 2 kA2s", "i2t", cm.CurrentThrough("R1"), 2000.0),
        ("energy in R1 < 2 J", "energy", cm.PowerIn("R1"), 2.0),
        ("max slope voltage at b < 5 V/us", "max_slope", cm.NodeVoltage("b"), 5e6),
        ("damping ratio voltage across C1 > 0.3", "damping_ratio", cm.VoltageAcross("C1"), 0.3),
        ("damped frequency voltage at b < 7 kHz", "damped_frequency", cm.NodeVoltage("b"), 7000.0),
    ],
)
def test_requirements(line, figure, probe, limit):
    (req,) = loads(BASE + "require " + line).requirements
    assert req.figure == figure and req.probe == probe
    assert req.limit == pytest.approx(limit, rel=1e-12)
    assert req.figure in cm.FIGURES


def test_every_figure_word_maps_to_a_canonical_figure():
    assert set(FIGURE_WORDS.values()) == set(cm.FIGURES)


# ---------------------------------------------------------------------------
# Expressions and parameters
# ---------------------------------------------------------------------------


def test_resonance_expression():
    # ω0 = 1/√(LC), f0 = ω0/2π: Nilsson & Riedel, "Electric Circuits", ch. 8 (natural
    # response of RLC circuits)
    c = loads("param L = 2 mH\nparam C = 1.5 mF\nparam f0 = 1 / (2 * pi * sqrt(L * C))")
    assert c.parameters["f0"] == pytest.approx(1 / (2 * np.pi * np.sqrt(2e-3 * 1.5e-3)), rel=1e-14)


def test_operator_precedence_and_functions():
    c = loads(
        "param a = -2^2\n"        # unary minus binds looser than ^ (common practice): -(2²)
        "param b = 2^3^2\n"       # ^ groups to the right: 2^(3^2)
        "param c = 10 - 4 - 3\n"  # - groups to the left
        "param d = 2 * 3 + 4 / 8\n"
        "param e = exp(log(5)) + log10(1000) + abs(-2)\n"
    )
    p = c.parameters
    assert (p["a"], p["b"], p["c"], p["d"]) == (-4.0, 512.0, 3.0, 6.5)
    assert p["e"] == pytest.approx(5 + 3 + 2)


def test_params_in_any_order():
    c = loads("param tau = R * C\nparam R = 10 Ω\nparam C = 1.5 mF")
    assert c.parameters["tau"] == pytest.approx(15e-3)


def test_param_units_are_checked_where_used():
    c = loads("ground g\nparam Rv = 4.7 kΩ\nresistor R1 a -- g Rv")
    assert c.element("R1").resistance == 4700.0
    with pytest.raises(NetlistError, match="farads"):
        loads("ground g\nparam Rv = 4.7 kΩ\ncapacitor C1 a -- g Rv")


# ---------------------------------------------------------------------------
# Tolerances and recipes
# ---------------------------------------------------------------------------


def test_spreads_and_distributions():
    c = loads("param R = 33 Ω ± 5 %\nparam C = 1.5 mF +- 20% uniform\nparam L = 1 mH ± 10 % normal")
    assert c.spreads["R"] == cm.Spread("R", 33.0, 0.05, "normal")
    assert c.spreads["C"] == cm.Spread("C", 1.5e-3, 0.2, "uniform")
    assert c.spreads["L"].distribution == "normal"


def test_inline_tolerance_is_keyed_by_element_name():
    c = loads("ground g\nresistor R7 a -- g 4.7 kΩ ± 1 %\ncapacitor C7 a -- g 1 uF ± 10 % uniform")
    assert c.parameters["R7"] == 4700.0
    assert c.spreads["R7"] == cm.Spread("R7", 4700.0, 0.01, "normal")
    assert c.spreads["C7"].distribution == "uniform"
    recipe = c.recipes[("R7", "resistance")]
    assert recipe.names == frozenset({"R7"})
    assert recipe.evaluate({"R7": 4650.0}) == 4650.0


def test_recipes_are_over_spread_names_only_and_vectorise():
    c = loads(
        "ground g\n"
        "param L = 2 mH ± 10 %\n"
        "param C = 1 uF ± 20 %\n"
        "param R0 = 50 Ω\n"                        # no tolerance: folded into the recipe
        "param Z = sqrt(L / C)\n"                  # depends on spreads through an expression
        "resistor Rd a -- g 2 * Z + R0\n"
        "capacitor C1 a -- g C\n"
        "inductor L1 a -- b 1 mH\n"                # fixed: no recipe
        "voltage_source V1 b -- g sine amplitude Z frequency 50 Hz\n"
    )
    recipe = c.recipes[("Rd", "resistance")]
    assert recipe.names == frozenset({"L", "C"})
    assert c.element("Rd").resistance == pytest.approx(2 * np.sqrt(2e-3 / 1e-6) + 50)
    L = np.array([1.8e-3, 2.0e-3, 2.2e-3])
    C = np.array([0.8e-6, 1.0e-6, 1.2e-6])
    np.testing.assert_allclose(recipe.evaluate({"L": L, "C": C}), 2 * np.sqrt(L / C) + 50, rtol=1e-14)
    assert c.recipes[("C1", "capacitance")].names == frozenset({"C"})
    assert ("L1", "inductance") not in c.recipes
    assert c.recipes[("V1", "waveform.amplitude")].names == frozenset({"L", "C"})
    assert set(c.spreads) == {"L", "C"}
    assert c.parameters["Z"] == pytest.approx(np.sqrt(2e-3 / 1e-6))


def test_recipes_for_other_fields():
    c = loads(
        "ground g\nparam V0 = 2 V ± 5 %\nparam Ron = 2 mΩ ± 50 %\n"
        "capacitor C1 a -- g 1 uF initial V0\n"
        "switch K a -- g closes at 1 ms on Ron\n"
        "coupling K9 L1 with L2 k 0.9 ± 2 %\ninductor L1 a -- g 1 mH\ninductor L2 a -- g 1 mH\n"
    )
    assert c.recipes[("C1", "initial_voltage")].names == frozenset({"V0"})
    assert c.recipes[("K", "on_resistance")].names == frozenset({"Ron"})
    assert c.recipes[("K9", "k")].names == frozenset({"K9.k"})
    assert c.spreads["K9.k"].relative == pytest.approx(0.02)


# ---------------------------------------------------------------------------
# Includes and overrides
# ---------------------------------------------------------------------------


def test_include_relative_to_including_file(tmp_path):
    (tmp_path / "lib").mkdir()
    (tmp_path / "lib" / "load.cnet").write_text('include "values.cnet"\nresistor R_load out -- g R_L\n', "utf-8")
    (tmp_path / "lib" / "values.cnet").write_text("param R_L = 12 Ω ± 5 %\n", "utf-8")
    top = tmp_path / "top.cnet"
    top.write_text('ground g\nvoltage_source V out -- g constant 5 V\ninclude "lib/load.cnet"\n', "utf-8")
    c = load(top)
    assert [e.name for e in c.elements] == ["V", "R_load"]
    assert c.element("R_load").resistance == 12.0 and "R_L" in c.spreads


def test_include_cycle_reports_the_chain(tmp_path):
    (tmp_path / "a.cnet").write_text('ground g\ninclude "b.cnet"\n', "utf-8")
    (tmp_path / "b.cnet").write_text('resistor R a -- g 1\ninclude "a.cnet"\n', "utf-8")
    with pytest.raises(NetlistError) as info:
        load(tmp_path / "a.cnet")
    err = info.value
    assert "a.cnet includes b.cnet includes a.cnet" in err.message
    assert err.where.file.endswith("b.cnet") and err.where.line == 2


def test_missing_include_and_missing_file(tmp_path):
    top = tmp_path / "t.cnet"
    top.write_text('ground g\n  include "nowhere.cnet"\n', "utf-8")
    with pytest.raises(NetlistError) as info:
        load(top)
    assert (info.value.where.line, info.value.where.column) == (2, 11)
    assert "does not exist" in info.value.message
    with pytest.raises(NetlistError, match="does not exist"):
        load(tmp_path / "absent.cnet")


def test_overrides_replace_parameters():
    text = "ground g\nparam R_pre = 33 Ω ± 5 %\nparam tau = R_pre * 1 mF\nresistor R1 a -- g R_pre"
    c = loads(text, overrides={"R_pre": "47 Ω"})
    assert c.element("R1").resistance == 47.0
    assert c.parameters["tau"] == pytest.approx(47e-3)
    assert c.spreads["R_pre"] == cm.Spread("R_pre", 47.0, 0.05, "normal")  # tolerance kept, new nominal
    assert loads(text, overrides={"R_pre": 4.7e3}).element("R1").resistance == 4700.0
    assert loads(text, overrides={"R_pre": "4k7"}).element("R1").resistance == 4700.0
    with pytest.raises(NetlistError) as info:
        loads(text, overrides={"R_pr": "47 Ω"})
    assert "R_pr" in info.value.message and "did you mean 'R_pre'" in info.value.hint
    with pytest.raises(NetlistError, match="ohms"):
        loads(text, overrides={"R_pre": "47 F"})


# ---------------------------------------------------------------------------
# The shipped example circuits
# ---------------------------------------------------------------------------

EXAMPLES = sorted(NETLISTS.glob("*.cnet"))


def test_at_least_four_examples():
    names = {p.stem for p in EXAMPLES}
    assert {"precharge", "lc_filter", "cable_ladder", "capacitor_bank"} <= names


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_examples_build_with_analysis_records_and_limits(path):
    c = load(path)
    assert c.analysis is not None and c.records and c.requirements
    assert c.ground is not None
    text = path.read_text(encoding="utf-8")
    assert text.lstrip().startswith("#")  # each begins with its documenting comment


def test_precharge_example_tolerances():
    c = load(NETLISTS / "precharge.cnet")
    assert c.spreads["R_pre"].relative == pytest.approx(0.05)
    assert c.spreads["C_link"] == cm.Spread("C_link", 1.5e-3, 0.2, "uniform")
    figures = {(r.figure, r.probe) for r in c.requirements}
    assert ("peak", cm.CurrentThrough("R1")) in figures
    assert ("i2t", cm.CurrentThrough("R1")) in figures
    assert ("final", cm.NodeVoltage("link")) in figures
    assert isinstance(c.element("K_main").control, cm.ThresholdRule)


def test_cable_ladder_has_twenty_sections():
    c = load(NETLISTS / "cable_ladder.cnet")
    assert len([e for e in c.inductors if e.name.startswith("L_c")]) == 20
    # 0.25 mH/km over 2 km in 20 sections: 25 µH each
    assert c.element("L_c20").inductance == pytest.approx(25e-6)
    assert c.element("C_c0").capacitance == pytest.approx(c.element("C_c1").capacitance / 2)


def test_capacitor_bank_has_two_timed_switches():
    c = load(NETLISTS / "capacitor_bank.cnet")
    timed = [s for s in c.switches if isinstance(s.control, cm.TimedSchedule)]
    assert [s.control.changes[0][0] for s in timed] == [pytest.approx(5e-3), pytest.approx(25e-3)]


# ---------------------------------------------------------------------------
# The language reference's examples
# ---------------------------------------------------------------------------

DOCS = Path(__file__).resolve().parent.parent / "docs" / "language.md"


def _doc_blocks() -> list[str]:
    text = DOCS.read_text(encoding="utf-8")
    return [b for b in text.split("```")[1::2] if "error:" not in b]


def test_every_example_in_the_language_reference_parses():
    from circuitode.netlist.parse import parse_text

    blocks = _doc_blocks()
    assert len(blocks) >= 15
    for block in blocks:
        parse_text(block.strip("\n"), "language.md")  # raises NetlistError on any syntax slip


def test_first_example_of_the_language_reference_builds():
    c = loads(_doc_blocks()[0].strip("\n"))
    assert c.title == "DC-link pre-charge"
    assert c.element("C1").capacitance == pytest.approx(1.5e-3)


def test_error_examples_in_the_language_reference_are_real():
    text = DOCS.read_text(encoding="utf-8")
    for block in [b for b in text.split("```")[1::2] if "error:" in b]:
        head, quoted = block.strip("\n").splitlines()[:2]
        location, message = head.split(": error: ")
        line, column = map(int, location.split(":")[1:])
        # put the quoted statement (shown indented by four spaces) on its line, after a ground
        source = "ground gnd" + "\n" * (line - 1) + quoted[4:]
        with pytest.raises(NetlistError) as info:
            loads(source, location.split(":")[0])
        assert info.value.message == message
        assert (info.value.where.line, info.value.where.column) == (line, column)


# ---------------------------------------------------------------------------
# The grammar is analysed once and cached; an edited grammar is analysed afresh
# ---------------------------------------------------------------------------


def test_grammar_cache_is_never_stale(tmp_path):
    from importlib import resources

    from lark.exceptions import UnexpectedInput

    from circuitode.netlist.lark_parser import CURRENT_TEXT as _CURRENT, build_parser

    grammar = resources.files("circuitode.netlist").joinpath("grammar.lark").read_text(encoding="utf-8")
    cache = tmp_path / "grammar.cache"
    text = "ground g\nvoltage_source V a -- g constant 1 V\n"
    _CURRENT.set(("t", text.split("\n"), text))  # what parse_text sets for the keyword check
    build_parser(grammar, str(cache)).parse(text)
    assert cache.is_file()  # the analysed grammar was stored
    build_parser(grammar, str(cache)).parse(text)  # and is read back
    edited = grammar.replace('"constant"', '"steady"')
    parser = build_parser(edited, str(cache))  # same cache file, different grammar text
    steady = text.replace("constant", "steady")
    _CURRENT.set(("t", steady.split("\n"), steady))
    parser.parse(steady)
    _CURRENT.set(("t", text.split("\n"), text))
    with pytest.raises(UnexpectedInput):
        parser.parse(text)


def test_the_package_parser_caches_in_a_private_folder(tmp_path, monkeypatch):
    import os
    import stat

    from circuitode.netlist.lark_parser import grammar_cache_file as _cache_file

    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    path = _cache_file("grammar text")
    assert path.startswith(str(tmp_path / "circuitode"))  # the user's cache folder, not the shared /tmp
    assert stat.S_IMODE(os.stat(tmp_path / "circuitode").st_mode) == 0o700
    assert _cache_file("other grammar") != path  # a different grammar gets a file of its own


def test_units_of_computed_parameters():
    # Unit algebra of the BIPM SI Brochure (9th ed., tables 2 and 4): Ω·F = s, 1/√(H·F) = 1/s = Hz,
    # √(H/F) = Ω, V·A·s = J; a product that is none of the language's units gets no unit.
    c = loads("ground g\nparam L = 2 mH\nparam C = 10 uF\nparam R = 5 Ω\nparam tau = R * C\n"
              "param f_res = 1 / (2 * pi * sqrt(L * C))\nparam Z0 = sqrt(L / C)\nparam E = 2 V * 3 A * 1 ms\n"
              "param odd = L * 3 V\nparam n = 4\nresistor R1 a -- g R\n")
    assert c.parameter_units == {"L": "H", "C": "F", "R": "Ω", "tau": "s", "f_res": "Hz", "Z0": "Ω", "E": "J",
                                 "odd": None, "n": ""}
    assert c.parameters["tau"] == pytest.approx(50e-6)


def test_a_tolerance_on_a_source_field_is_named_by_the_written_word():
    c = loads("ground g\nvoltage_source V1 a -- g pulses top 5 V ± 5 % every 20 us hold 10 us\n"
              "voltage_source V2 b -- g step to 3 V ± 2 %\nresistor R a -- b 1\nresistor R2 b -- g 1\n")
    assert set(c.spreads) == {"V1.waveform.top", "V2.waveform.to"}  # the names --tol takes
    assert c.recipes[("V1", "waveform.high")].names == frozenset({"V1.waveform.top"})
    from circuitode.output.report import describe_waveform

    words = describe_waveform(c.element("V1").waveform, "V")
    assert words.startswith("pulses base 0 V top 5 V every 20 µs, hold 10 µs")
