"""A few modes of a large circuit: the k slowest and the k least damped, by sparse shift-invert.

Above :data:`circuitode.transient.sparse_driver.SPARSE_STATES` states the mode table
of :mod:`circuitode.analysis.modes` (every eigenvalue with left and right
eigenvectors of a dense matrix, O(n³)) is not computed.  Here the reduced sparse
matrix ``A_r = E₁₁⁻¹(A₁₁ − A₁₂ A₂₂⁻¹ A₂₁)`` (:mod:`circuitode.solvers.schur`) is
handed to ARPACK (scipy.sparse.linalg.eigs) in shift-invert mode (one sparse LU
of ``A_r − σI`` per shift; Saad, *Numerical Methods for Large Eigenvalue
Problems*, ch. 7 on shift-and-invert):

* the k slowest: σ = 0, the eigenvalues of least |λ|;
* the k least damped: shifts σ = jω on the imaginary axis, ω log-spaced from the
  slowest to the fastest |λ| (sparse Arnoldi estimate); the eigenvalues nearest each
  shift are those nearest the axis there, and the k of least ζ among them are kept.
  This finds lightly damped modes of a passive circuit, whose poles lie in the left
  half plane, but only near the shifts: where many modes share nearly the same ζ
  (a long ladder) the least ζ found can lie slightly above the true least (0.4 % on the
  602-state ladder of tests/test_sparse_modes.py); the printed note says so.

Participation factors come from the right eigenvector and the left eigenvector
(two steps of inverse iteration on A_rᴴ), as in the dense table.
"""
from __future__ import annotations

from typing import Sequence

import numpy as np

from ..errors import CircuitodeError
from .modes import ConfigurationModes, Mode, _first_order, _oscillatory

__all__ = ["SHIFTS", "few_modes", "sparse_circuit_modes"]

#: Points on the imaginary axis searched for the least damped modes.
SHIFTS = 8


def _share(A_h, lam: complex, right: np.ndarray) -> np.ndarray:
    """Participation shares |l̄ᵢ rᵢ| / Σ (n,) with l the left eigenvector of λ (inverse iteration)."""
    import scipy.sparse as sp
    from scipy.sparse.linalg import splu

    n = right.size
    shift = np.conj(lam) * (1 + 1e-10) + 1e-12 * max(abs(lam), 1.0)
    lu = splu(sp.csc_matrix(A_h - shift * sp.identity(n, dtype=complex, format="csc")))
    left = np.ones(n, dtype=complex)
    for _ in range(2):
        left = lu.solve(left)
        left /= np.linalg.norm(left)
    factors = np.abs(np.conj(left) * right)
    total = factors.sum()
    return factors / total if total > 0 else np.full(n, 1.0 / n)


def few_modes(reduced, state_names: Sequence[str], *, k: int = 6, fastest: float | None = None,
              tolerance: float = 1e-6) -> tuple[tuple[Mode, ...], tuple[Mode, ...], str]:
    """(slowest, least damped, words) of ``x' = A_r x`` with A_r (n, n) sparse, 1/s.

    slowest : up to k modes of least |λ|.  least damped : up to k modes of least ζ among
    those found near the imaginary axis.  words : one sentence saying how they were found.
    """
    import scipy.sparse as sp
    from scipy.sparse.linalg import ArpackNoConvergence, eigs

    A = sp.csc_matrix(reduced, dtype=complex)
    n = A.shape[0]
    names = tuple(state_names)
    k = max(1, min(k, n - 2))
    A_h = sp.csc_matrix(A.conj().T)

    def near(sigma, count):
        try:
            lam, vec = eigs(A, k=count, sigma=sigma, which="LM", tol=1e-10, maxiter=2000)
        except ArpackNoConvergence as exc:
            lam, vec = exc.eigenvalues, exc.eigenvectors
        return lam, vec

    def modes_of(lam, vec):
        out, seen = [], []
        for j in np.argsort(np.abs(lam), kind="stable"):
            value = complex(lam[j])
            if value.imag < -tolerance * abs(value):
                value = value.conjugate()  # the table lists each pair once, by Im λ > 0
            if any(abs(value - s) <= 1e-8 * max(abs(value), 1.0) for s in seen):
                continue
            seen.append(value)
            share = _share(A_h, value, vec[:, j])
            if abs(value.imag) <= tolerance * abs(value):
                out.append(_first_order(value.real, share, names, 1e-12 * max(abs(value), 1.0)))
            else:
                out.append(_oscillatory(value, share, names, tolerance))
        return out

    slow = modes_of(*near(0.0, min(2 * k, n - 2)))[:k]
    low = min((m.natural_frequency for m in slow if m.natural_frequency > 0), default=1.0)
    high = fastest if fastest and fastest > low else 1e3 * low
    found = []
    for omega in np.geomspace(low, high, SHIFTS):
        found += modes_of(*near(1j * omega, min(k, n - 2)))
    unique = []
    for m in sorted(found, key=lambda m: m.damping_ratio if np.isfinite(m.damping_ratio) else np.inf):
        if not any(abs(m.eigenvalue - u.eigenvalue) <= 1e-8 * max(abs(m.eigenvalue), 1.0) for u in unique):
            unique.append(m)
    damped = tuple(sorted(unique[:k], key=lambda m: m.natural_frequency))
    words = (f"{n} states: only the {len(slow)} slowest and the {len(damped)} least damped modes "
             f"found near {SHIFTS} points jω from {low:.3g} to {high:.3g} rad/s, by sparse "
             f"shift-invert Arnoldi (scipy eigs), not all {n}; a mode of slightly less ζ between "
             "those points can be missed")
    return tuple(slow), damped, words


def sparse_circuit_modes(circuit, until: float | None = None, k: int = 6) -> list[ConfigurationModes]:
    """:func:`circuitode.analysis.modes.circuit_modes` for large circuits: per reachable
    configuration the k slowest and k least damped modes (see :func:`few_modes`), each
    configuration's ``note`` saying so; ``states`` is None (the names are not listed)."""
    import scipy.sparse as sp
    from scipy.sparse.linalg import inv

    from ..equations.sparse_statespace import assemble_sparse
    from ..equations.statespace import describe_configuration
    from ..model.configurations import reachable_configurations
    from ..solvers.schur import reduced_matrix
    from ..solvers.sparse_explicit import SparseIVP
    from ..solvers.sparse_spectrum import largest_rate

    out = []
    for cfg in reachable_configurations(circuit, until):
        d = assemble_sparse(circuit, cfg.closed)
        n = d.n_states
        A = d.A.tocsc()
        E11 = sp.csc_matrix(d.E[:n, :n])
        scale = sp.diags(1.0 / E11.diagonal()) if E11.nnz == np.count_nonzero(E11.diagonal()) else inv(E11)
        reduced = reduced_matrix(A[:n, :n], A[:n, n:], A[n:, :n], A[n:, n:], scale, SparseIVP.budget)
        if reduced is None:
            raise CircuitodeError(f"the {n}-state circuit has a connected resistive block too large to "
                                  "reduce sparsely, so its modes are not computed")
        fastest = largest_rate(d.E, d.A, n, tol=1e-2, maxiter=50)
        slow, damped, words = few_modes(reduced, d.state_names, k=k, fastest=fastest)
        listed = list(slow) + [m for m in damped if not any(
            abs(m.eigenvalue - s.eigenvalue) <= 1e-8 * max(abs(m.eigenvalue), 1.0) for s in slow)]
        listed.sort(key=lambda m: (m.natural_frequency, m.eigenvalue.real))
        out.append(ConfigurationModes(
            closed=tuple(cfg.closed), description=describe_configuration(circuit, cfg.closed),
            first_time=cfg.first_time, cause=cfg.cause, modes=tuple(listed), states=None, note=words))
    return out
