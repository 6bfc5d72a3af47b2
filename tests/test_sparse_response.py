"""Frequency response from the sparse descriptor equations (analysis/sparse_response.py).

* Against the dense C (jωI − A)⁻¹ B + D of analysis/response.py on the same circuit at
  a moderate size (a 300-state ladder): two assemblies, one circuit theory, to 1e-9.
* Series RLC: the current per volt is 1 / (R + jωL + 1/(jωC)) (Nilsson & Riedel,
  Electric Circuits, ch. 14 on frequency response).
"""
from __future__ import annotations

import numpy as np
import pytest

import circuitode as co
from circuitode.analysis.response import transfer
from circuitode.analysis.sparse_response import sparse_circuit_transfer
from circuitode.equations.statespace import assemble
from circuitode.model import CurrentThrough, NodeVoltage

from ladder_text import C_SEC, L_SEC, Z0, ladder  # noqa: F401  (shared with the other sparse tests)


def test_sparse_response_equals_the_dense_one_at_300_states():
    circuit = co.loads(ladder(150))
    omega = 2 * np.pi * np.geomspace(100.0, 1e6, 60)
    for probe in (NodeVoltage("n150"), NodeVoltage("n3"), CurrentThrough("R_s")):
        ss = assemble(circuit, (), [probe])
        k = ss.input_names.index("V1")
        dense = transfer(ss.A, ss.B[:, [k]], ss.C, ss.D[:, [k]], omega)[:, 0, 0]
        sparse = sparse_circuit_transfer(circuit, (), "V1", probe, omega)
        scale = np.max(np.abs(dense))
        assert scale > 0.1
        np.testing.assert_allclose(sparse, dense, rtol=0, atol=1e-9 * scale)


def test_series_rlc_current_per_volt():
    R, L, C = 2.0, 1e-3, 10e-6
    circuit = co.loads("\n".join([
        'circuit "series RLC"', "ground g", "voltage_source V1 a -- g constant 1 V",
        f"resistor R1 a -- b {R!r} Ω", f"inductor L1 b -- c {L!r} H", f"capacitor C1 c -- g {C!r} F",
        "transient until 1 ms"]) + "\n")
    omega = 2 * np.pi * np.geomspace(10.0, 1e5, 41)
    got = sparse_circuit_transfer(circuit, (), "V1", CurrentThrough("R1"), omega)
    want = 1.0 / (R + 1j * omega * L + 1.0 / (1j * omega * C))  # Nilsson & Riedel ch. 14
    np.testing.assert_allclose(got, want, rtol=1e-10)


def test_the_response_job_of_a_large_circuit_goes_sparse_and_equals_the_dense_curve():
    """A 602-state ladder (above the 500-state sparse threshold): `response` takes the sparse
    descriptor path (no dense n × n per frequency); its transfer and its impedance curves equal
    the dense ones of the same circuit at the same grid to 1e-9.  At 0.01 Hz the impedance at
    n0 is the resistive network with the source shorted: R_s ∥ (301 × 50 mΩ + R_t) (Ohm's law,
    series and parallel resistances, Nilsson & Riedel ch. 3)."""
    from circuitode.analysis.response import _impedance_system, circuit_response

    circuit = co.loads(ladder(301))
    assert len(circuit.state_names) > 500
    probe = NodeVoltage("n301")
    curves, problems = circuit_response(circuit, source="V1", probe=probe, impedance_at="n0",
                                        f_min=0.01, f_max=2e4, points=25)
    assert not problems
    omega = 2 * np.pi * curves[0].frequency_hz
    transfer_curve = next(c for c in curves if c.label.startswith("voltage at n301"))
    ss = assemble(circuit, (), [probe])
    k = ss.input_names.index("V1")
    dense = transfer(ss.A, ss.B[:, [k]], ss.C, ss.D[:, [k]], omega)[:, 0, 0]
    np.testing.assert_allclose(transfer_curve.values, dense, rtol=0, atol=1e-9 * np.max(np.abs(dense)))
    impedance = next(c for c in curves if c.label == "impedance at n0")
    A, B, C, D, sign = _impedance_system(circuit, "n0", ())
    assert sign > 0
    dense_z = transfer(A, B, C, D, omega)[:, 0, 0]
    np.testing.assert_allclose(impedance.values, dense_z, rtol=0, atol=1e-9 * np.max(np.abs(dense_z)))
    resistive = 1.0 / (1.0 / Z0 + 1.0 / (301 * 0.05 + Z0))
    assert abs(impedance.values[0]) == pytest.approx(resistive, rel=1e-3)
