"""Diodes in tolerance batches (circuitode.tolerance.diodes) against single runs.

Reference: circuitode.transient.simulate(method="exact") run on the same values, one
sample at a time (the single run settles its diodes with
circuitode.transient.commutation); the batch must agree within 1e-9 relative on every
figure (issue 9), with an absolute floor of 1e-9 of the quantity's own scale for a
value near zero (a blocking diode's current).  Complementarity is the definition of
the ideal piecewise-linear diode (issue 9, "Checks against the outside").
"""
from pathlib import Path

import numpy as np
from hypothesis import Phase, example, given, settings
from hypothesis import strategies as st
import pytest

from circuitode.analysis.between_rows import EXTREMUM_FIGURES, carried_figure
from circuitode.analysis.measure import measure
from circuitode.analysis.window_integrals import integral_figure
from circuitode.errors import CircuitodeError
from circuitode.model import CurrentThrough, NodeVoltage, VoltageAcross
from circuitode.netlist import load, loads
from circuitode.tolerance.batch import batch_figure_keys, run_chunk
from circuitode.tolerance.engine import simulate_chunk
from circuitode.tolerance.sampling import draw_samples, spreads_with_overrides
from circuitode.transient import simulate

BRIDGE = Path(__file__).resolve().parent.parent / "netlists" / "bridge_rectifier.cnet"

HALF_WAVE = """
circuit "half-wave charger of a hold-up capacitor"
param R_s = 2.2 Ω ± 10 %
param C_h = 470 uF ± 20 % uniform
ground gnd
voltage_source V1 src -- gnd   sine amplitude 24 V frequency 50 Hz
resistor  R1  src -- a   R_s
diode     D1  a -- out  drop 0.7 V on 50 mΩ
capacitor C1  out -- gnd  C_h initial 0 V
resistor  R_load out -- gnd  68 Ω ± 5 %
transient until 60 ms step 20 us method exact
record current through D1, voltage at out, current through R1
require peak current through D1 < 5 A
"""

# Two identical ideal diodes in parallel, stepped on: above the drop either one could
# carry the whole current (the ideal model cannot decide); below it neither conducts.
PARALLEL_PAIR = """
circuit "two ideal diodes in parallel, stepped on"
param V_a = 5 V
ground gnd
voltage_source V1 src -- gnd   step from 0 V to V_a at 1 ms
resistor  R1  src -- a   10 Ω
diode     D1  a -- k    drop 0.7 V
diode     D2  a -- k    drop 0.7 V
resistor  R2  k -- gnd   100 Ω
capacitor C1  k -- gnd   10 uF
transient until 3 ms step 50 us method exact
record current through R1, voltage at k
"""


def _figures_against_single_runs(circuit, text_or_path, n, seed):
    """Batch figures of n samples and the single runs' figures of the same values."""
    table = draw_samples(spreads_with_overrides(circuit), n, "mc", seed)
    probes, keys = batch_figure_keys(circuit)
    res = run_chunk({"circuit": circuit, "names": table.names, "values": table.values, "start": 0,
                     "keys": keys, "probes": probes, "method": "exact"})
    assert res["ok"].all(), set(res["message"])
    ref = np.empty_like(res["figures"])
    scales: dict = {}
    for i in range(n):
        over = dict(zip(table.names, table.values[i]))
        one = load(text_or_path, overrides=over) if isinstance(text_or_path, Path) else \
            loads(text_or_path, overrides=over)
        wf = simulate(one, method="exact")
        for j, (fig, label) in enumerate(keys):
            carried = integral_figure(fig, wf, label)  # the single run's exact integrals
            if carried is None and fig in EXTREMUM_FIGURES:  # and its peaks located between rows
                carried = carried_figure(fig, wf, label)
            ref[i, j] = carried if carried is not None else measure(fig, wf.t, wf.signals[label],
                                                                     signal_unit=wf.units[label])
            scales[label] = max(scales.get(label, 0.0), float(np.max(np.abs(wf.signals[label]))))
    return res["figures"], ref, keys, scales


#: Figures in the unit of their signal: a value near zero (a blocking diode's minimum
#: current, rounding of the solution) gets the floor 1e-9 × the signal's own scale.
_SAME_UNIT = ("peak", "minimum", "final", "mean", "rms", "initial")


def _assert_figures_agree(got, ref, keys, window, scales):
    for j, (fig, label) in enumerate(keys):
        if fig == "time_of_peak":  # an instant: to 1e-9 of the window
            assert np.allclose(got[:, j], ref[:, j], rtol=0, atol=1e-9 * window), (fig, label)
            continue
        finite = np.abs(ref[np.isfinite(ref[:, j]), j])
        scale = max(finite.max(initial=0.0), scales[label] if fig in _SAME_UNIT else 0.0)
        assert np.allclose(got[:, j], ref[:, j], rtol=1e-9, atol=1e-9 * scale, equal_nan=True), (fig, label)


def _rows_agree(chunk, k, w, labels):
    """Sample k's rows equal the single run's (same instants, same values)."""
    n = w.t.size
    assert np.all(chunk.t[k][n:] == chunk.t[k][n - 1])  # padding: copies of the last row
    np.testing.assert_allclose(chunk.t[k][:n], w.t, rtol=0, atol=1e-12)
    for j, label in enumerate(labels):
        ref = w[label]
        scale = np.max(np.abs(ref))
        np.testing.assert_allclose(chunk.signals[j][k][:n], ref, rtol=1e-9, atol=1e-9 * scale, err_msg=label)


def test_half_wave_batch_figures_equal_single_runs():
    # [Reference: single runs] three toleranced parts (R_s, C_h, the load): each sample's
    # conduction angles differ, its figures equal its single run's.
    circuit = loads(HALF_WAVE)
    got, ref, keys, scales = _figures_against_single_runs(circuit, HALF_WAVE, n=8, seed=3)
    _assert_figures_agree(got, ref, keys, 60e-3, scales)


def test_bridge_batch_figures_equal_single_runs():
    # [Reference: single runs] the bridge example with its tolerances: each sample commutates
    # its own four diodes at its own instants (several at once when the bridge starts).
    circuit = load(BRIDGE)
    assert circuit.spreads, "the example carries tolerances"
    got, ref, keys, scales = _figures_against_single_runs(circuit, BRIDGE, n=4, seed=5)
    _assert_figures_agree(got, ref, keys, 100e-3, scales)


def test_bridge_batch_rows_equal_single_runs_and_follow_their_own_sequences():
    # [Reference: single runs] row by row, with each sample's own diode events.
    base = load(BRIDGE)
    R = np.array([3.8, 4.7, 5.6])
    C = np.array([1.8e-3, 2.2e-3, 2.6e-3])
    probes = [CurrentThrough("R_inrush"), CurrentThrough("D1"), CurrentThrough("D4"), VoltageAcross("C_bulk")]
    chunk = simulate_chunk(base, {("R_inrush", "resistance"): R, ("C_bulk", "capacitance"): C}, probes)
    assert chunk.ok.all(), chunk.problems
    instants = set()
    for k in range(R.size):
        one = load(BRIDGE, overrides={"R_ntc": R[k], "C_bulk": C[k]})
        w = simulate(one, probes=probes, method="exact")
        _rows_agree(chunk, k, w, [p.label for p in probes])
        instants.add(tuple(round(e.time, 9) for e in w.events if e.switch.startswith("D"))[:6])
    assert len(instants) == R.size  # the samples did commutate at their own instants


def _complementary(chunk, diodes, labels, k):
    """Sample k: no diode current below −1e-9 of the current scale; where a diode carries
    no current (blocking) its voltage is at most its drop (+1e-9 of the voltage scale)."""
    for name, drop in diodes:
        i = chunk.signals[labels.index(f"current through {name}")][k]
        v = chunk.signals[labels.index(f"voltage across {name}")][k]
        i_scale, v_scale = max(1.0, np.max(np.abs(i))), max(1.0, np.max(np.abs(v)))
        assert i.min() >= -1e-9 * i_scale, (name, i.min())
        blocking = np.abs(i) <= 1e-9 * i_scale
        assert np.all(v[blocking] <= drop + 1e-9 * v_scale), (name, v[blocking].max())


def test_batch_samples_keep_complementarity():
    # Definition of the ideal piecewise-linear diode: conducting, i ≥ 0 (v = V_d + i R_on);
    # blocking, i = 0 and v ≤ V_d — at every row of every sample.
    base = load(BRIDGE)
    names = ["D1", "D2", "D3", "D4"]
    probes = [p for d in names for p in (CurrentThrough(d), VoltageAcross(d))]
    labels = [p.label for p in probes]
    R = np.linspace(3.0, 7.0, 5)
    chunk = simulate_chunk(base, {("R_inrush", "resistance"): R}, probes)
    assert chunk.ok.all()
    for k in range(R.size):
        _complementary(chunk, [(d, 0.9) for d in names], labels, k)
    half = loads(HALF_WAVE)
    probes = [CurrentThrough("D1"), VoltageAcross("D1")]
    chunk = simulate_chunk(half, {("R1", "resistance"): np.array([0.5, 1.0, 2.2, 10.0])}, probes)
    assert chunk.ok.all()
    for k in range(4):
        _complementary(chunk, [("D1", 0.7)], [p.label for p in probes], k)


def test_a_sample_the_diodes_cannot_serve_fails_with_words_and_the_others_carry_on():
    # [Structural] the single run refuses the samples whose step exceeds the drop (two
    # combinations fit, with different currents); the batch records exactly those as
    # failed, with the single run's words, and the others equal their single runs.
    base = loads(PARALLEL_PAIR)
    levels = np.array([0.5, 5.0, 0.3, 12.0])
    probes = [CurrentThrough("R1"), NodeVoltage("k")]
    chunk = simulate_chunk(base, {("V1", "waveform.after"): levels}, probes)
    refused = []
    for k, level in enumerate(levels):
        try:
            w = simulate(loads(PARALLEL_PAIR, overrides={"V_a": level}), probes=probes, method="exact")
        except CircuitodeError as exc:
            refused.append(k)
            assert not chunk.ok[k]
            assert chunk.problems[k] == str(exc)
            assert "several combinations of diode states" in chunk.problems[k]
            continue
        assert chunk.ok[k], chunk.problems.get(k)
        _rows_agree(chunk, k, w, [p.label for p in probes])
    assert refused == [1, 3]


def test_the_tolerance_command_runs_the_bridge_example(tmp_path):
    # [Structural] the refusal is gone: a small batch of the example runs through the
    # command's path (preflight, chunks, summaries), every sample succeeding.
    from circuitode.tolerance.batch import run_batch

    result = run_batch(BRIDGE, samples=40, seed=1, out_dir=tmp_path / "out", progress=False, plots=False)
    assert result.ok.all(), set(result.messages)
    assert np.ptp(result.figures[:, 0]) > 0  # the samples differ


def test_a_turn_off_row_shows_the_located_zero_in_single_runs_and_batches():
    # Definition of the turn-off (issue 9): a conducting diode stops when its current falls
    # to zero.  The event is detected a band (1e-11 of the scale) past zero, so that
    # rounding cannot fire it, and located at the zero itself: the row at the instant
    # shows the current's zero to rounding of the current scale (1e-12 of the peak here;
    # −9.5 nA beside 68 A, the band, before), in the single run and in every sample.
    base = load(BRIDGE)
    probes = [CurrentThrough(d) for d in ("D1", "D2", "D3", "D4")]
    w = simulate(base, probes=probes, method="exact")
    offs = [e for e in w.events if e.switch.startswith("D") and not e.closed]
    assert len(offs) >= 8
    for e in offs:
        i = w[f"current through {e.switch}"]
        rows = np.flatnonzero(w.t == e.time)
        assert rows.size >= 2
        assert np.all(np.abs(i[rows]) <= 1e-12 * np.max(np.abs(i))), (e, i[rows])
    chunk = simulate_chunk(base, {("R_inrush", "resistance"): np.array([3.9, 4.7, 5.6])}, probes)
    assert chunk.ok.all()
    for k in range(3):
        for j in range(4):
            i = chunk.signals[j][k]
            assert i.min() >= -1e-12 * np.max(np.abs(i)), (k, j, i.min())


def test_freewheel_batch_with_held_states_equals_single_runs():
    # [Reference: single runs] a relay coil driven through K, which opens at 0.1 s; its
    # freewheel diode turns on at once (the coil current may not be cut) and off when the
    # current reaches zero, after which the coil current is held at 0 A (a configuration
    # with fewer states).  Each sample (coil resistance, inductance) turns off at its own
    # instant, closed form i0·e^(−t/τ) (Nilsson & Riedel ch. 7) checked in test_diodes.
    import dataclasses

    from test_diodes import relay

    base = relay()
    R = np.array([8.0, 12.0, 20.0])
    L = np.array([0.1, 0.2, 0.4])
    probes = [CurrentThrough("L1"), NodeVoltage("c"), CurrentThrough("D1")]
    chunk = simulate_chunk(base, {("Rc", "resistance"): R, ("L1", "inductance"): L}, probes)
    assert chunk.ok.all(), chunk.problems
    offs = set()
    for k in range(R.size):
        one = dataclasses.replace(base, elements=tuple(
            dataclasses.replace(e, resistance=float(R[k])) if e.name == "Rc" else
            dataclasses.replace(e, inductance=float(L[k])) if e.name == "L1" else e
            for e in base.elements))
        w = simulate(one, probes=probes, method="exact")
        assert [(e.switch, e.closed) for e in w.events] == [("K", False), ("D1", True), ("D1", False)]
        offs.add(round(w.events[2].time, 9))
        _rows_agree(chunk, k, w, [p.label for p in probes])
        after = chunk.t[k] > w.events[2].time + 1e-9  # (past the two rows of the instant)
        assert np.all(chunk.signals[0][k][after] == 0.0)  # held at zero, exactly
    assert len(offs) == R.size


@settings(max_examples=6, deadline=None, phases=(Phase.explicit, Phase.reuse, Phase.generate))
@given(st.lists(st.tuples(st.integers(0, 3), st.integers(0, 3), st.floats(0.0, 1.5),
                          st.floats(0.01, 5.0)), min_size=1, max_size=4),
       st.floats(5.0, 50.0), st.floats(1e-6, 1e-4))
@example([(0, 1, 0.0, 1.0)], 5.0, 6.103515625e-05)  # a 0 V drop switching on the output grid
def test_random_diode_networks_batch_equals_single_runs(diodes, amplitude, capacitance):
    # [Reference: single runs] random networks of up to four diodes between four nodes
    # (the complementarity property test's family in test_diodes): three samples of one
    # resistance, each equal to its single run row by row, and complementary.
    import dataclasses

    from circuitode.model import Analysis, Capacitor, Circuit, Diode, Resistor, Sine, VoltageSource

    nodes = ["src", "n1", "n2", "n3"]
    parts = [VoltageSource("V1", "src", "gnd", Sine(amplitude, 50.0)), Resistor("Rs", "src", "n1", 1.0)]
    parts += [Resistor(f"R{k}", n, "gnd", 100.0 * (k + 1)) for k, n in enumerate(nodes[1:], start=1)]
    parts += [Capacitor(f"C{k}", n, "gnd", capacitance * k) for k, n in enumerate(nodes[2:], start=1)]
    named = []
    for k, (a, b, drop, on) in enumerate(diodes):
        if a != b:
            named.append((f"D{k}", drop))
            parts.append(Diode(f"D{k}", nodes[a], nodes[b], on_resistance=on, drop=drop))
    if not named:
        return
    probes = [p for name, _ in named for p in (CurrentThrough(name), VoltageAcross(name))]
    labels = [p.label for p in probes]
    ckt = Circuit("random", "gnd", tuple(parts), analysis=Analysis(until=0.03, step=2e-4, method="exact"),
                  records=tuple(probes))
    R = np.array([100.0, 60.0, 250.0])
    chunk = simulate_chunk(ckt, {("R1", "resistance"): R}, probes)
    for k, r in enumerate(R):
        one = dataclasses.replace(ckt, elements=tuple(
            dataclasses.replace(e, resistance=float(r)) if e.name == "R1" else e for e in ckt.elements))
        try:
            w = simulate(one, probes=probes)
        except CircuitodeError as exc:  # the batch fails that sample with the same words
            assert not chunk.ok[k] and chunk.problems[k] == str(exc)
            continue
        assert chunk.ok[k], chunk.problems.get(k)
        # a diode may switch exactly at an output instant (at t = 0 or at a sine's zero,
        # drop 0 V): the batch then keeps the grid row beside the event's two rows, an
        # interval of zero length the single run leaves out, so the value after each
        # distinct instant is compared
        t_b, at_b = _after_each_instant(chunk.t[k])
        t_s, at_s = _after_each_instant(w.t)
        np.testing.assert_allclose(t_b, t_s, rtol=0, atol=1e-12)
        for j, label in enumerate(labels):
            ref = w[label][at_s]
            np.testing.assert_allclose(chunk.signals[j][k][at_b], ref, rtol=1e-9,
                                       atol=1e-9 * max(np.max(np.abs(w[label])), 1e-12), err_msg=label)
        _complementary(chunk, named, labels, k)


def _after_each_instant(t):
    """(distinct instants, index of the last row at each): rows closer than 1e-12 s are one."""
    last = np.append(np.diff(t) > 1e-12, True)
    return t[last], np.flatnonzero(last)
