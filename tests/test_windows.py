"""Figures over part of a run: ``require FIGURE PROBE from A to B``, ``after A``, ``before B``.

Checks against closed forms (each source named beside it), the batch against
single runs, and the located refusals of windows that hold nothing or reach
outside the run.
"""
import math

import numpy as np
import pytest

from circuitode.analysis.limits import check_requirements
from circuitode.analysis.measure import MeasurementError, measure
from circuitode.analysis.windows import run_figure
from circuitode.errors import NetlistError
from circuitode.netlist import loads
from circuitode.tolerance.batch import batch_figure_keys, run_chunk
from circuitode.tolerance.sampling import draw_samples, spreads_with_overrides
from circuitode.transient import simulate

V, R, C = 5.0, 1e3, 1e-6
TAU = R * C

RC = """
voltage_source V1 in -- gnd constant 5 V
resistor R1 in -- out 1 kΩ
capacitor C1 out -- gnd 1 uF
ground gnd
transient until 5 ms step {step} method {method} initial rest
require i2t current through R1 from 0 s to 1 ms < 0.2 A²s
require energy in R1 from 0 s to 1 ms < 1 J
require mean current through R1 from 1 ms to 3 ms > 0 A
"""


@pytest.mark.parametrize("step", ["0.7 ms", "10 us"])
def test_rc_i2t_over_the_first_time_constant_is_the_closed_form(step):
    # Nilsson & Riedel ch. 7: i(t) = (V/R) e^{-t/τ}, so ∫₀^τ i² dt = V²C/(2R) (1 − e^{−2}) (integrated
    # by hand), the energy in R over [0, τ] is R times it, and the mean over [τ, 3τ] is
    # V C (e^{−1} − e^{−3}) / (2τ).  Exact method: exact to rounding whatever the step, even with
    # window ends (1 ms, 3 ms) that are not on the 0.7 ms grid.
    w = simulate(loads(RC.format(step=step, method="exact")))
    i2t = V**2 * C / (2 * R) * (1 - math.exp(-2))
    assert run_figure("i2t", w, "current through R1", 0.0, 1e-3) == pytest.approx(i2t, rel=1e-12)
    assert run_figure("energy", w, "power in R1", 0.0, 1e-3) == pytest.approx(R * i2t, rel=1e-12)
    mean = V * C * (math.exp(-1) - math.exp(-3)) / (2 * TAU)
    assert run_figure("mean", w, "current through R1", 1e-3, 3e-3) == pytest.approx(mean, rel=1e-12)
    results = check_requirements(loads(RC.format(step=step, method="exact")).requirements, w)
    assert [r.value for r in results] == pytest.approx([i2t, R * i2t, mean], rel=1e-12)
    assert results[0].requirement.label.startswith("i2t of current through R1, 0 s – 1 ms <")


@pytest.mark.parametrize("method, rel", [("radau", 1e-5), ("bdf", 1e-4), ("rk45", 1e-5), ("rk4", 1e-3)])
def test_other_methods_reach_the_closed_form_to_their_accuracy(method, rel):
    # Same closed form (Nilsson & Riedel ch. 7); the factors are those the methods reach on the
    # whole window with rtol 1e-6 (rk4 from the rows' trapezoid at τ/100).
    w = simulate(loads(RC.format(step="10 us", method=method)))
    i2t = V**2 * C / (2 * R) * (1 - math.exp(-2))
    assert run_figure("i2t", w, "current through R1", 0.0, 1e-3) == pytest.approx(i2t, rel=rel)


SERIES_RLC = """
param L = 1 mH
param C = 1 uF
voltage_source V1 in -- gnd constant 10 V
resistor R1 in -- a 6.324555320336759 Ω
inductor L1 a -- b L
capacitor C1 b -- gnd C
ground gnd
transient until 2 ms step {step} method exact initial rest
"""


def test_peak_inside_a_window_is_the_second_maximum_of_the_step_response():
    # Series RLC step (Nilsson & Riedel ch. 8; Ogata ch. 5): v_C(t) = V (1 − e^{−σt}(cos ω_d t +
    # σ/ω_d sin ω_d t)) has its maxima at t = kπ/ω_d, k odd, with v = V (1 + e^{−σkπ/ω_d}).
    # After the first minimum (2π/ω_d) the peak is the second maximum, k = 3, located between rows
    # with a step of T_d/7.
    L, C, R = 1e-3, 1e-6, 6.324555320336759  # ζ = R/2 √(C/L) = 0.1
    sigma, wn = R / (2 * L), 1 / math.sqrt(L * C)
    wd = math.sqrt(wn**2 - sigma**2)
    td = 2 * math.pi / wd
    w = simulate(loads(SERIES_RLC.format(step=f"{td / 7} s")))
    label = "voltage at b"
    t3, v3 = 3 * math.pi / wd, 10.0 * (1 + math.exp(-sigma * 3 * math.pi / wd))
    assert run_figure("peak", w, label, 2 * math.pi / wd) == pytest.approx(v3, rel=1e-9)
    assert run_figure("time_of_peak", w, label, 2 * math.pi / wd) == pytest.approx(t3, rel=1e-9)
    # the whole run's peak is the first maximum, k = 1
    assert run_figure("peak", w, label) == pytest.approx(10.0 * (1 + math.exp(-sigma * math.pi / wd)), rel=1e-9)


REENERGISED = """
circuit "filter re-energised by a second switch event"
param L = 1 mH
param C = 1 uF
param Rtotal = 2 * 0.62 * sqrt(L / C)
param Rlow = 2 * 0.05 * sqrt(L / C)
voltage_source V1 in -- gnd constant 10 V
switch K0 in -- a closes at 0 s
resistor R1 a -- b Rlow
resistor R2 b -- c Rtotal - Rlow
switch K1 b -- c opens at 1 ms
inductor L1 c -- d L
capacitor C1 d -- gnd C
ground gnd
transient until 3 ms step {step} initial rest
require damping ratio voltage at d > 0.05
require damping ratio voltage at d after 1 ms > 0.3
"""


@pytest.mark.parametrize("step", ["1 us", "4 us"])
def test_damping_ratio_after_a_second_event_is_the_textbook_zeta(step):
    # Series RLC: ζ = R/2 √(C/L) (Nilsson & Riedel ch. 8).  Until 1 ms the filter rings with
    # ζ = 0.05; at 1 ms K1 opens and the same filter, now with ζ = 0.62, rings from where it
    # was.  Over the whole run the two ringings superpose and ζ is not measurable; after 1 ms
    # it is the second configuration's ζ.  Tolerance 10⁻⁴ (the log decrement from the rows,
    # each extremum refined by a parabola; steps of T_d/250 and T_d/60 measured 1.3·10⁻⁷ and
    # 2.6·10⁻⁵).
    circuit = loads(REENERGISED.format(step=step))
    w = simulate(circuit)
    whole, after = check_requirements(circuit.requirements, w)
    assert not whole.passed and math.isnan(whole.value)
    assert after.passed and after.value == pytest.approx(0.62, rel=1e-4)
    assert after.requirement.label.startswith("damping ratio of voltage at d, after 1 ms >")
    # the first configuration's ζ over its own stretch
    assert run_figure("damping_ratio", w, "voltage at d", None, 1e-3) == pytest.approx(0.05, rel=1e-4)


def test_window_ends_are_rows_and_see_the_inside_of_the_window():
    # At a switching instant two rows share the time (before, after): a window starting there
    # begins with the row after, one stopping there ends with the row before.
    circuit = loads(REENERGISED.format(step="7 us"))
    w = simulate(circuit)
    label = "current through L1"
    assert np.count_nonzero(w.t == 1e-3) == 2
    assert run_figure("final", w, label, None, 1e-3) == w.signals[label][np.flatnonzero(w.t == 1e-3)[0]]
    # measure() on rows takes the same window (its rows alone)
    t, y = w.t, w.signals[label]
    assert float(measure("final", t, y, signal_unit="A", window=(None, 1e-3))) == y[np.flatnonzero(t == 1e-3)[0]]
    with pytest.raises(MeasurementError, match="start before it stops"):
        measure("peak", t, y, signal_unit="A", window=(2e-3, 1e-3))


BATCH = """
circuit "bypassed inrush resistor into a series RLC"
param R_s = 2 Ω ± 10 %
param L_s = 100 uH ± 10 % uniform
param C_s = 22 uF ± 20 %
ground gnd
voltage_source V1 in -- gnd  step from 0 V to 12 V at 50 us
resistor R0 in -- a  10 Ω
switch K1 in -- a  closes when voltage at c > 6 V
resistor R1 a -- b  R_s
inductor L1 b -- c L_s initial 0 A
capacitor C1 c -- gnd C_s initial 0 V
resistor R_load c -- gnd 100 Ω
transient until 2 ms step 4 us method exact initial given
record voltage at c, current through L1
require i2t current through L1 from 0.1 ms to 0.43 ms < 1 A²s
require energy in R1 after 0.3 ms < 1 J
require mean voltage at c before 0.77 ms > 0 V
require peak voltage at c after 0.5 ms < 30 V
require final current through L1 from 0.2 ms to 0.6 ms < 30 A
require settling time voltage at c after 0.3 ms < 2 ms
"""


def test_batch_windowed_figures_equal_single_runs():
    # Reference: one single run per sample (exact method), the integrals from its exact per-segment
    # integrals, the other figures on its rows inside the window, as the batch measures them.
    # The threshold switch acts at a different instant in each sample, so the window's rows differ
    # from sample to sample.  Agreement to 1e-9 relative (the batch engine's promise, issue 5).
    circuit = loads(BATCH)
    table = draw_samples(spreads_with_overrides(circuit), 12, "mc", 3)
    probes, keys = batch_figure_keys(circuit)
    res = run_chunk({"circuit": circuit, "names": table.names, "values": table.values, "start": 0,
                     "keys": keys, "probes": probes, "method": "exact"})
    assert res["ok"].all(), set(res["message"])
    windowed = {r.quantity: r for r in circuit.requirements}
    columns = [j for j, (_, label) in enumerate(keys) if label in windowed]
    assert len(columns) == 6
    for i in range(table.values.shape[0]):
        one = loads(BATCH, overrides=dict(zip(table.names, table.values[i])))
        w = simulate(one, method="exact")
        for j in columns:
            fig, label = keys[j]
            r = windowed[label]
            if fig in ("i2t", "energy", "mean"):
                ref = run_figure(fig, w, r.probe.label, r.start, r.stop)
            else:
                ref = float(measure(fig, w.t, w.signals[r.probe.label], signal_unit=r.probe.unit,
                                    window=(r.start, r.stop)))
            assert res["figures"][i, j] == pytest.approx(ref, rel=1e-9, abs=1e-15), (fig, label, i)


BASE = "ground g\nvoltage_source V1 a -- g constant 1 V\nresistor R1 a -- b 1\ncapacitor C1 b -- g 1 uF\n"


@pytest.mark.parametrize("line, column, message, hint", [
    ("require peak voltage at b from 3 ms to 2 ms < 3 V", 27, r"window of this requirement is empty",
     r"earlier instant after 'from'"),
    ("require peak voltage at b after 20 ms < 3 V", 27, r"starts at 20 ms, outside the run \(0 s to 10 ms\)",
     r"run longer"),
    ("require i2t current through R1 from 0 s to 11 ms < 3 A²s", 32, r"stops at 11 ms, outside the run",
     r"between 0 s and 10 ms"),
    ("require peak voltage at b after 2 V < 3 V", 33, r"in seconds \(s\); got V", None),
    ("require peak voltage at b from 1 ms till 2 ms < 3 V", 37, r"expected 'to' between the two instants",
     r"from 0 s to 10 ms"),
])
def test_bad_windows_are_located(line, column, message, hint):
    # our own wording (DEVELOPERS.md, "Errors a user sees"): file:line:col, the line, a hint
    text = BASE + "transient until 10 ms\n" + line
    with pytest.raises(NetlistError) as info:
        loads(text, "t.cnet")
    err = info.value
    assert (err.where.line, err.where.column) == (6, column), str(err)
    assert __import__("re").search(message, err.message), err.message
    if hint:
        assert __import__("re").search(hint, err.hint), err.hint
    assert str(err).startswith(f"t.cnet:6:{column}: error:")


def test_a_window_outside_a_shorter_run_is_refused_before_it_runs():
    # 'until' given to the run (not in the netlist): the window is checked against it, at its place.
    circuit = loads(BASE + "require peak voltage at b after 20 ms < 3 V", "t.cnet")
    with pytest.raises(NetlistError, match=r"t\.cnet:5:27: error: the window of this requirement starts at 20 ms"):
        simulate(circuit, until=10e-3)


KEYWORD_NAMES = """
ground gnd
voltage_source V1 from -- gnd step from 0 V to 5 V at 1 ms
resistor to from -- after 1 kΩ
capacitor before after -- gnd 1 uF
transient until 5 ms step 0.3 ms method exact
require peak voltage at after after 1 ms < 6 V
require energy in to before 3 ms < 1 J
"""


def test_nodes_and_elements_may_be_named_like_the_window_words():
    # 'from', 'to', 'after', 'before' stay free as names, and 'from … to …' stays a field of the
    # step waveform.  The 5 V step at 1 ms charges 1 µF through 1 kΩ: by 3 ms (2τ after it) the
    # resistor has taken ½CV²(1 − e^{−4}) (Nilsson & Riedel ch. 7, integrated by hand).
    circuit = loads(KEYWORD_NAMES)
    results = check_requirements(circuit.requirements, simulate(circuit))
    assert [r.requirement.quantity for r in results] == ["voltage at after, after 1 ms", "power in to, before 3 ms"]
    assert results[1].value == pytest.approx(0.5 * C * V**2 * (1 - math.exp(-4)), rel=1e-12)
    assert results[0].value < V and all(r.passed for r in results)
