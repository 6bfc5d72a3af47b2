"""The batched engine against the single-run engine, sample by sample.

Reference: circuitode.transient.simulate(method="exact") run on the same
parameter values, one sample at a time, with figures from circuitode.analysis.measure
(integrals, peaks and minima: what the single run carries beyond its rows).
The batch must agree within 1e-9 relative (issue 5).  Scale-free figures of a
flat or vanishing quantity get an absolute floor of 1e-9 of the signal's own
scale, since their relative error is rounding noise over a near-zero value.
"""
import re

import numpy as np
import pytest

from circuitode.errors import CircuitodeError
from circuitode.analysis.measure import measure
from circuitode.analysis.window_integrals import integral_figure
from circuitode.analysis.between_rows import EXTREMUM_FIGURES, carried_figure
from circuitode.netlist import loads
from circuitode.tolerance.batch import batch_figure_keys, run_chunk
from circuitode.tolerance.engine import simulate_chunk
from circuitode.tolerance.sampling import draw_samples, spreads_with_overrides
from circuitode.transient import simulate

RLC_WITH_TIMED_SWITCH = """
circuit "bypassed inrush resistor into a series RLC"
param R_s = 2 Ω ± 10 %
param L_s = 100 uH ± 10 % uniform
param C_s = 22 uF ± 20 %
param R_b = 10 Ω ± 5 %
ground gnd
voltage_source V1 in -- gnd  step from 0 V to 12 V at 50 us
resistor R0 in -- a  R_b
switch K1 in -- a  closes at 0.2 ms
resistor R1 a -- b  R_s
inductor L1 b -- c L_s initial 0 A
capacitor C1 c -- gnd C_s initial 0 V
resistor R_load c -- gnd 100 Ω
transient until 2 ms step 4 us method exact initial given
record voltage at c, current through L1, power in R1
require peak voltage at c < 20 V
"""

PRECHARGE_WITH_THRESHOLD = """
circuit "link pre-charge with a voltage-triggered bypass"
param R_pre  = 10 Ω ± 5 %
param C_link = 1.5 mF ± 20 % uniform
ground gnd
voltage_source pack   pack -- gnd    constant 48 V
resistor  R_int   pack -- a       25 mΩ
switch    K_pre   a -- b          closes at 1 ms
resistor  R1      b -- link       R_pre
switch    K_main  a -- link       closes when voltage at link > 43 V  on 2 mΩ
capacitor C1      link -- c_esr   C_link  initial 0 V
resistor  R_esr   c_esr -- gnd    8 mΩ
resistor  R_load  link -- gnd     2.2 kΩ
transient until 60 ms step 25 us method exact initial given
record voltage at link, current through R1, current through K_main, power in R1
"""


SPREAD_PACK_VOLTAGE = """
circuit "pre-charge from a pack whose voltage is spread"
param V_pack = 48 V ± 10 %
param R_pre  = 10 Ω ± 5 %
param C_link = 1.5 mF ± 20 % uniform
ground gnd
voltage_source pack   pack -- gnd    step from 0 V to V_pack at 0.5 ms
resistor  R_int   pack -- a       25 mΩ
resistor  R1      a -- link       R_pre
switch    K_main  a -- link       closes when voltage at link > 40 V  on 2 mΩ
capacitor C1      link -- gnd     C_link  initial 0 V
resistor  R_load  link -- gnd     2.2 kΩ
transient until 60 ms step 25 us method exact initial given
record voltage at link, current through R1, current through K_main
"""

ALREADY_MET_AT_START = """
circuit "bypass whose condition holds from the start"
param R_pre  = 10 Ω ± 5 %
param C_link = 1.5 mF ± 20 % uniform
ground gnd
voltage_source pack   pack -- gnd    constant 48 V
resistor  R_int   pack -- a       25 mΩ
resistor  R1      a -- link       R_pre
switch    K_main  a -- link       closes when voltage at link > 3 V  on 2 mΩ
capacitor C1      link -- gnd     C_link  initial 5 V
resistor  R_load  link -- gnd     2.2 kΩ
transient until 5 ms step 25 us method exact initial given
record voltage at link, current through R1, current through K_main
"""

CASCADE = """
circuit "two bypass stages, the second triggered by the first one's current"
param R_pre  = 10 Ω ± 5 %
param C_link = 1.5 mF ± 20 % uniform
ground gnd
voltage_source pack   pack -- gnd    constant 48 V
resistor  R_int   pack -- a       25 mΩ
resistor  R1      a -- link       R_pre
switch    K_a     a -- m          closes when voltage at link > 30 V  on 1 Ω
resistor  R_m     m -- link       1 Ω
switch    K_b     a -- link       closes when current through K_a > 5 A  on 2 mΩ
capacitor C1      link -- gnd     C_link  initial 0 V
resistor  R_load  link -- gnd     2.2 kΩ
transient until 40 ms step 25 us method exact initial given
record voltage at link, current through R1, current through K_b
"""


def _batch_and_reference(text, n=50, seed=11):
    circuit = loads(text)
    table = draw_samples(spreads_with_overrides(circuit), n, "mc", seed)
    probes, keys = batch_figure_keys(circuit)
    res = run_chunk({"circuit": circuit, "names": table.names, "values": table.values, "start": 0,
                     "keys": keys, "probes": probes, "method": "exact"})
    assert res["ok"].all(), set(res["message"])
    ref = np.empty_like(res["figures"])
    peak_time_value = {}
    for i in range(n):  # the reference: one single run per sample
        wf = simulate(loads(text, overrides=dict(zip(table.names, table.values[i]))), method="exact")
        for j, (fig, label) in enumerate(keys):
            y = wf.signals[label]
            # integral figures: the single run's own exact integrals (not the rows' trapezoid);
            # peaks, their instants and minima: located between rows (as the batch does)
            carried = integral_figure(fig, wf, label)
            if carried is None and fig in EXTREMUM_FIGURES:
                carried = carried_figure(fig, wf, label)
            ref[i, j] = carried if carried is not None else measure(fig, wf.t, y, signal_unit=wf.units[label])
            if fig == "time_of_peak":
                peak_time_value[i, j] = (np.interp(res["figures"][i, j], wf.t, y), np.max(y), np.ptp(y))
    return res, ref, keys, peak_time_value


def _assert_agree(res, ref, keys, peak_time_value, window):
    got = res["figures"]
    for j, (fig, label) in enumerate(keys):
        if fig == "time_of_peak":
            # a flat maximum makes the instant ill-conditioned: check the signal there
            for (i, jj), (at, top, swing) in peak_time_value.items():
                if jj == j:
                    same_instant = abs(got[i, j] - ref[i, j]) <= 1e-9 * window
                    assert same_instant or abs(at - top) <= 1e-9 * max(abs(top), swing), (fig, label, i)
            continue
        scale = 100.0 if fig in ("overshoot",) else np.nanmax(np.abs(ref[:, j]))
        assert np.allclose(got[:, j], ref[:, j], rtol=1e-9, atol=1e-9 * scale, equal_nan=True), (fig, label)


def test_fifty_samples_equal_single_runs_with_a_timed_switch():
    _assert_agree(*_batch_and_reference(RLC_WITH_TIMED_SWITCH), window=2e-3)


def test_fifty_samples_equal_single_runs_with_a_threshold_switch():
    res, ref, keys, ptv = _batch_and_reference(PRECHARGE_WITH_THRESHOLD)
    _assert_agree(res, ref, keys, ptv, window=0.06)
    # every sample's bypass closed, at its own instant (later for a larger R·C)
    t_peak = res["figures"][:, keys.index(("time_of_peak", "current through K_main"))]
    assert np.ptp(t_peak) > 1e-3


def test_spread_source_levels_equal_single_runs():
    # the pack voltage varies per sample (SourceBatch: waveforms are linear in their levels)
    res, ref, keys, ptv = _batch_and_reference(SPREAD_PACK_VOLTAGE, n=20)
    _assert_agree(res, ref, keys, ptv, window=0.06)


@pytest.mark.parametrize("text, window", [(ALREADY_MET_AT_START, 5e-3), (CASCADE, 40e-3)])
def test_thresholds_met_at_once_act_at_once_as_in_the_single_run(text, window):
    # a condition already strictly met when a stretch begins (or the instant another
    # switch acts) makes the switch act at that instant, with two rows recorded
    res, ref, keys, ptv = _batch_and_reference(text, n=12)
    _assert_agree(res, ref, keys, ptv, window=window)


def test_threshold_instants_equal_the_single_run_events():
    circuit = loads(PRECHARGE_WITH_THRESHOLD)
    values = {("R1", "resistance"): np.array([9.5, 10.0, 10.5]),
              ("C1", "capacitance"): np.array([1.2e-3, 1.5e-3, 1.8e-3])}
    waves = simulate_chunk(circuit, values, circuit.records)
    for i in range(3):
        wf = simulate(loads(PRECHARGE_WITH_THRESHOLD, overrides={
            "R_pre": values[("R1", "resistance")][i], "C_link": values[("C1", "capacitance")][i]}), method="exact")
        te = [e.time for e in wf.events if e.switch == "K_main"][0]
        # the single run locates to 1e-12 of the window (transient.EVENT_TOL_FRACTION)
        assert abs(waves.event_times[i, 0] - te) <= 2e-12 * 0.06
        # analytic check of the same instant (Nilsson & Riedel ch. 7, RC charging from
        # 1 ms through R1 + R_int, ignoring the 2.2 kΩ bleeder's 0.5 % and the ESR):
        R = values[("R1", "resistance")][i] + 0.025
        C = values[("C1", "capacitance")][i]
        g = 2200.0 / (2200.0 + R)
        analytic = 1e-3 - R * g * C * np.log(1 - 43.0 / (48.0 * g))
        assert te == pytest.approx(analytic, rel=2e-3)


def test_rk4_batch_agrees_with_the_exact_batch_at_a_fine_step():
    circuit = loads(RLC_WITH_TIMED_SWITCH)
    values = {("C1", "capacitance"): np.array([18e-6, 22e-6, 26e-6])}
    exact = simulate_chunk(circuit, values, circuit.records, method="exact")
    rk4 = simulate_chunk(circuit, values, circuit.records, method="rk4")
    # RK4 is fourth order (Butcher ch. 3): at h·|λ| ≈ 0.1 the global error is ~1e-5 relative
    assert np.allclose(rk4.y, exact.y, rtol=0, atol=1e-4 * np.abs(exact.y).max())
    assert not np.array_equal(rk4.y, exact.y)


def test_a_bad_sample_is_recorded_and_the_others_carry_on():
    circuit = loads(RLC_WITH_TIMED_SWITCH)
    values = {("C1", "capacitance"): np.array([22e-6, -1e-6, 22e-6])}
    waves = simulate_chunk(circuit, values, circuit.records)
    assert waves.ok.tolist() == [True, False, True]
    assert "capacitance of C1" in waves.problems[1]
    assert np.array_equal(waves.y[0], waves.y[2])


def test_unknown_batch_method_is_refused():
    circuit = loads(RLC_WITH_TIMED_SWITCH)
    with pytest.raises(CircuitodeError, match="exact, rk4"):
        simulate_chunk(circuit, {("C1", "capacitance"): np.ones(2) * 2e-5}, circuit.records, method="radau")


@pytest.mark.parametrize("text, coarse, window", [
    (RLC_WITH_TIMED_SWITCH, "step 40 us", 2e-3),
    (PRECHARGE_WITH_THRESHOLD, "step 500 us", 0.06),
    (CASCADE, "step 500 us", 40e-3),
])
def test_coarse_steps_locate_the_same_peaks_as_single_runs(text, coarse, window):
    # peaks, their instants, minima and overshoot between rows (tolerance/batch_extrema.py)
    # equal the single run's own located ones at steps 10-20x coarser, threshold switches
    # included (a step a switch splits is searched piece by piece, as the single run's rows
    # at the event split it)
    coarse_text = re.sub(r"(transient until \S+ \S+) step \S+ \S+", rf"\1 {coarse}", text)
    assert coarse_text != text
    _assert_agree(*_batch_and_reference(coarse_text, n=6), window=window)
