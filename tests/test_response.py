"""Frequency response of the state space against closed forms and scipy.signal.

Series and parallel RLC formulas: Nilsson & Riedel, Electric Circuits, ch. 14
(frequency-selective circuits); Alexander & Sadiku, Fundamentals of Electric
Circuits, ch. 14 (frequency response).  Reference library: scipy.signal.freqresp
on the same A, B, C, D.
"""
import numpy as np
import pytest
import scipy.signal

from circuitode.analysis.response import ResponseError, circuit_response, transfer
from circuitode.cli import main
from circuitode.equations.statespace import assemble
from circuitode.model import CurrentThrough, NodeVoltage
from circuitode.netlist import loads
from circuitode.netlist.probe_words import ProbeWordsError, probe_from_words

R, L, C = 2.0, 1e-3, 1e-6  # series RLC: f0 ≈ 5.03 kHz, Q ≈ 15.8

SERIES = f"""circuit "series RLC"
ground gnd
voltage_source Vs in -- gnd constant 1 V
resistor R in -- a {R}
inductor L a -- b {L}
capacitor C b -- gnd {C}
"""
# the same loop, no source: the impedance looking into node "top" is R + jωL + 1/(jωC)
SERIES_OPEN = f"""ground gnd
resistor R top -- a {R}
inductor L a -- b {L}
capacitor C b -- gnd {C}
"""
RP = 500.0
PARALLEL = f"""ground gnd
current_source I1 gnd -- a constant 1 A
resistor R a -- gnd {RP}
inductor L a -- gnd {L}
capacitor C a -- gnd {C}
"""


@pytest.mark.filterwarnings("ignore::scipy.signal.BadCoefficients")  # scipy's own ss→tf step warns
def test_transfer_matches_scipy_freqresp_on_same_matrices():
    c = loads(SERIES)
    ss = assemble(c, (), [NodeVoltage("b"), CurrentThrough("R")])
    w = np.geomspace(1e2, 1e7, 300)
    ours = transfer(ss.A, ss.B, ss.C, ss.D, w)
    for row in range(2):
        _, ref = scipy.signal.freqresp((ss.A, ss.B, ss.C[[row]], ss.D[[row]]), w)
        np.testing.assert_allclose(ours[:, row, 0], ref, rtol=1e-10, atol=1e-14)


def test_series_rlc_impedance_magnitude_phase_resonance_and_q():
    c = loads(SERIES_OPEN)
    (curve,), problems = circuit_response(c, impedance_at="top", f_min=100.0, f_max=1e6, points=601)
    assert problems == []
    w = 2 * np.pi * curve.frequency_hz
    X = w * L - 1 / (w * C)
    np.testing.assert_allclose(curve.magnitude, np.sqrt(R**2 + X**2), rtol=1e-9)
    np.testing.assert_allclose(np.radians(curve.phase_deg), np.arctan2(X, R), atol=1e-9)
    (dip,) = curve.resonances
    assert dip.kind == "dip"
    assert dip.frequency_hz == pytest.approx(1 / (2 * np.pi * np.sqrt(L * C)), rel=1e-6)
    assert dip.magnitude == pytest.approx(R, rel=1e-9)
    q = np.sqrt(L / C) / R
    assert dip.pole_q == pytest.approx(q, rel=1e-9)
    assert dip.bandwidth_q == pytest.approx(q, rel=1e-6)  # f0/Δf with Δf between |Z| = √2 R


def test_series_rlc_admittance_seen_by_source_peaks_at_resonance():
    c = loads(SERIES)
    (curve,), _ = circuit_response(c, source="Vs", probe=probe_from_words("current through R", c))
    assert curve.unit == "S"
    (peak,) = curve.resonances
    assert peak.frequency_hz == pytest.approx(1 / (2 * np.pi * np.sqrt(L * C)), rel=1e-6)
    assert peak.magnitude == pytest.approx(1 / R, rel=1e-9)


def test_parallel_rlc_q_and_bandwidth():
    c = loads(PARALLEL)
    (curve,), _ = circuit_response(c, impedance_at="a", points=1201)
    (peak,) = curve.resonances
    w0 = 1 / np.sqrt(L * C)
    q = RP * np.sqrt(C / L)  # Nilsson & Riedel ch. 14
    assert peak.kind == "peak" and peak.magnitude == pytest.approx(RP, rel=1e-9)
    assert peak.pole_q == pytest.approx(q, rel=1e-9)
    assert 2 * np.pi * peak.bandwidth_hz == pytest.approx(w0 / q, rel=1e-6)
    w = 2 * np.pi * curve.frequency_hz
    Z = 1 / (1 / RP + 1 / (1j * w * L) + 1j * w * C)
    np.testing.assert_allclose(curve.values, Z, rtol=1e-9)


def test_response_per_switch_configuration():
    text = SERIES + "resistor R_b b -- gnd 10 Ω\nswitch K b -- c closes at 1 ms\nresistor R_c c -- gnd 1 Ω\n"
    curves, _ = circuit_response(loads(text), source="Vs", probe=NodeVoltage("b"))
    assert [cu.closed for cu in curves] == [(False,), (True,)]
    assert curves[0].magnitude.max() > curves[1].magnitude.max()  # the closed switch damps the peak


def test_bad_requests_are_refused_with_words():
    c = loads(SERIES)
    with pytest.raises(ResponseError, match="sources: Vs"):
        circuit_response(c, source="V9", probe=NodeVoltage("b"))
    with pytest.raises(ResponseError, match="not a node"):
        circuit_response(c, impedance_at="nowhere")
    with pytest.raises(ProbeWordsError, match="did you mean 'b'"):
        probe_from_words("voltage at bb", c)
    with pytest.raises(ProbeWordsError, match="is not a quantity"):
        probe_from_words("volts on b", c)


def test_cli_response_writes_csv_and_plot(tmp_path, capsys):
    path = tmp_path / "rlc.cnet"
    path.write_text(SERIES, encoding="utf-8")
    code = main(["response", str(path), "--from", "Vs", "--to", "voltage at b", "--out", str(tmp_path / "r")])
    out = capsys.readouterr().out
    assert code == 0
    assert "peak" in out and "5.0329 kHz" in out
    assert (tmp_path / "r" / "transfer.png").stat().st_size > 0
    assert (tmp_path / "r" / "response.csv").read_text().count("\n") == 802
    assert main(["response", str(path), "--to", "voltage at b"]) == 2


def test_impedance_at_a_node_held_by_a_voltage_source_is_zero_and_said():
    curves, problems = circuit_response(loads(SERIES), impedance_at="in")
    assert np.all(curves[0].magnitude == 0.0)
    assert len(problems) == 1 and "voltage source holds the node" in problems[0]
