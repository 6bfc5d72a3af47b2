"""The fastest rate of a large sparse descriptor system, without O(n³) work.

For ``E w' = A w + B u`` with the differential unknowns first (``E = diag(E₁₁, 0)``,
E₁₁ nonsingular) the finite eigenvalues are those of the reduced matrix
``E₁₁⁻¹ (A₁₁ − A₁₂ A₂₂⁻¹ A₂₁)`` (n × n), which is never formed: ARPACK's implicitly
restarted Arnoldi method (scipy.sparse.linalg.eigs) only applies it, at the cost of
one sparse LU solve with A₂₂ and one with E₁₁ per product.
"""
from __future__ import annotations

import numpy as np

__all__ = ["largest_rate"]


def largest_rate(E, A, n: int, *, tol: float = 1e-3, maxiter: int = 300) -> float | None:
    """Estimate of max |λ| (1/s) of the descriptor system, or None when ARPACK does not converge.

    E, A : (N, N) sparse; the first ``n`` rows are differential, the rest algebraic.
    """
    import scipy.sparse as sp
    from scipy.sparse.linalg import ArpackNoConvergence, LinearOperator, eigs, splu

    A = sp.csc_matrix(A)
    E11 = splu(sp.csc_matrix(E[:n, :n]))
    A11, A12, A21 = A[:n, :n], A[:n, n:], A[n:, :n]
    A22 = splu(sp.csc_matrix(A[n:, n:])) if A.shape[0] > n else None

    def apply(x):
        x = np.asarray(x, dtype=float).reshape(-1)
        rate = A11 @ x
        if A22 is not None:
            rate = rate - A12 @ A22.solve(np.asarray(A21 @ x, dtype=float))
        return E11.solve(np.asarray(rate, dtype=float))

    if n < 3:  # ARPACK needs k < n − 1; form the tiny matrix
        M = np.column_stack([apply(col) for col in np.eye(n)]) if n else np.zeros((0, 0))
        return float(np.max(np.abs(np.linalg.eigvals(M)), initial=0.0))
    op = LinearOperator((n, n), matvec=apply, dtype=float)
    try:
        lam = eigs(op, k=1, which="LM", tol=tol, maxiter=maxiter, return_eigenvectors=False,
                   v0=np.ones(n))
    except ArpackNoConvergence as exc:
        lam = exc.eigenvalues
    return float(np.max(np.abs(lam))) if np.size(lam) else None
