"""Frequency response of large circuits from their sparse descriptor equations.

``E w' = A w + B u``, ``y = C w + D u`` (:mod:`circuitode.equations.sparse_statespace`)
gives ``H(jω) = C (jωE − A)⁻¹ B + D`` without eliminating anything: per
frequency one sparse LU of the complex matrix ``jωE − A`` (O(nonzeros of the
factors), never n × n), solved for all inputs at once.  Eliminating the
algebraic unknowns gives exactly the dense ``C (jωI − A_x)⁻¹ B + D`` of
:func:`circuitode.analysis.response.transfer` (checked against it in
tests/test_sparse_response.py to 1e-9).
"""
from __future__ import annotations

import numpy as np

__all__ = ["descriptor_transfer", "sparse_circuit_transfer", "sparse_circuit_response"]


def descriptor_transfer(E, A, B, C, D, omega) -> np.ndarray:
    """H(jω) = C (jωE − A)⁻¹ B + D for every ω; (F, p, m) complex.

    E, A : (N, N) sparse.  B : (N, m) sparse or dense.  C : (p, N).  D : (p, m).
    omega : (F,) rad/s.
    """
    import scipy.sparse as sp
    from scipy.sparse.linalg import splu

    E, A = sp.csc_matrix(E, dtype=complex), sp.csc_matrix(A, dtype=complex)
    B = np.asarray(B.toarray() if sp.issparse(B) else B, dtype=complex)
    C = sp.csr_matrix(C)
    D = np.atleast_2d(np.asarray(D, dtype=float))
    omega = np.atleast_1d(np.asarray(omega, dtype=float))
    out = np.empty((omega.size, C.shape[0], B.shape[1]), dtype=complex)
    for k, w in enumerate(omega):  # one sparse factorisation per frequency: nothing to stack
        X = splu(sp.csc_matrix(1j * w * E - A)).solve(B)
        out[k] = C @ X + D
    return out


def sparse_circuit_transfer(circuit, closed, source: str, probe, omega) -> np.ndarray:
    """(F,) complex response of ``probe`` to the source named ``source`` in configuration
    ``closed``, from the sparse descriptor equations (any size)."""
    from ..equations.sparse_statespace import assemble_sparse

    d = assemble_sparse(circuit, closed, [probe])
    k = [s.name for s in circuit.sources].index(source)
    return descriptor_transfer(d.E, d.A, d.B[:, [k]], d.C, d.D[:, [k]], omega)[:, 0, 0]


def _impedance_descriptor(circuit, node: str, closed):
    """(descriptor, column, sign) of the impedance at ``node``, as the dense
    :func:`circuitode.analysis.response._impedance_system`: a 1 A test current from ground
    into the node (Z = V/I, sign +1), or where that would fix an inductor current a test
    voltage (Z = −1/H with H the admittance, sign −1)."""
    from dataclasses import replace

    from ..equations.sparse_statespace import assemble_sparse
    from ..errors import SingularSystemError
    from ..model import CurrentSource, CurrentThrough, Dc, NodeVoltage, VoltageSource
    from .response import _TEST_SOURCE, ResponseError

    if node not in circuit.nodes or node == circuit.ground:
        raise ResponseError(f"--impedance-at {node!r}: not a node of the circuit other than ground "
                            f"({circuit.ground})")
    others = tuple(e for e in circuit.elements if e.name != _TEST_SOURCE)
    try:
        test = CurrentSource(_TEST_SOURCE, circuit.ground, node, Dc(0.0))
        probed = replace(circuit, elements=others + (test,))
        d = assemble_sparse(probed, closed, [NodeVoltage(node)])
        sign = 1.0
    except SingularSystemError:
        test = VoltageSource(_TEST_SOURCE, node, circuit.ground, Dc(0.0))
        probed = replace(circuit, elements=others + (test,))
        d = assemble_sparse(probed, closed, [CurrentThrough(_TEST_SOURCE)])
        sign = -1.0
    return d, [s.name for s in probed.sources].index(_TEST_SOURCE), sign


def sparse_circuit_response(circuit, *, source=None, probe=None, impedance_at=None, until=None,
                            f_min=None, f_max=None, points: int = 801):
    """:func:`circuitode.analysis.response.circuit_response` for large circuits: the curves from
    the sparse descriptor equations of every reachable configuration; the grid and the pole Q
    from the few poles sparse shift-invert finds (:func:`.sparse_modes.sparse_circuit_modes`).
    Returns (curves, problems) as the dense function does."""
    from ..equations.statespace import describe_configuration
    from ..errors import SingularSystemError
    from ..model import CurrentSource
    from ..model.configurations import reachable_configurations
    from ..equations.sparse_statespace import assemble_sparse
    from .response import ResponseCurve, _ratio_unit, checked_request, find_resonances, grid_from_poles
    from .sparse_modes import sparse_circuit_modes

    names = checked_request(circuit, source, probe, impedance_at)
    poles = {tuple(c.closed): np.array([m.eigenvalue for m in c.modes] +
                                        [np.conj(m.eigenvalue) for m in c.modes], dtype=complex)
             for c in sparse_circuit_modes(circuit, until)}
    found, problems = [], []
    for cfg in reachable_configurations(circuit, until):
        words = describe_configuration(circuit, cfg.closed)
        systems = []
        try:
            if probe is not None:
                d = assemble_sparse(circuit, cfg.closed, [probe])
                k = names.index(source)
                unit = _ratio_unit(probe.unit, "A" if isinstance(circuit.sources[k], CurrentSource) else "V")
                systems.append((f"{probe.label} / {source}", unit, d, k, 1.0, False))
            if impedance_at is not None:
                d, k, sign = _impedance_descriptor(circuit, impedance_at, cfg.closed)
                systems.append((f"impedance at {impedance_at}", "Ω", d, k, sign, True))
        except SingularSystemError as exc:
            problems.append(f"{words}: not analysed: {exc}")
            continue
        found.extend((words, tuple(cfg.closed), system) for system in systems)
    if not found:
        return [], problems
    f = grid_from_poles(np.concatenate(list(poles.values())), f_min, f_max, points)
    curves = []
    for words, closed, (label, unit, d, k, sign, dips) in sorted(found, key=lambda item: item[2][5]):
        def H_of_f(fr, d=d, k=k, sign=sign):
            h = descriptor_transfer(d.E, d.A, d.B[:, [k]], d.C, d.D[:, [k]], 2 * np.pi * np.atleast_1d(fr))[:, 0, 0]
            return h if sign > 0 else -1.0 / h

        curves.append(ResponseCurve(label, unit, f, H_of_f(f), words, closed,
                                    find_resonances(f, H_of_f, None, dips=dips, poles=poles.get(closed))))
    return curves, problems
