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

__all__ = ["descriptor_transfer", "sparse_circuit_transfer"]


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
