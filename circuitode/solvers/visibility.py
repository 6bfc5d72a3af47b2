"""Which modes of ``x' = A x`` the outputs ``y = C x`` see, and the fastest of them.

A mode (eigenvalue λ with eigenvector v) appears in an output only if
``C v ≠ 0``; a fast mode that no recorded quantity sees cannot spoil a figure
however coarse the output step.  Used to decide whether the output step
resolves what the recorded quantities do (h·|λ| > 1: the step is longer than
the mode's time constant or than 1/ω of its ringing).
"""
from __future__ import annotations

import numpy as np

__all__ = ["fastest_seen_rate", "fastest_seen_ringing", "SEEN"]

#: A mode counts as seen when |C v| exceeds this fraction of ‖C‖·‖v‖.
SEEN = 1e-6


def fastest_seen_rate(A: np.ndarray, C: np.ndarray) -> float:
    """Largest |λ| (1/s) among the modes of A that some row of C sees; 0 when none.

    A : (n, n) 1/s.  C : (k, n).

    Examples
    --------
    >>> A = np.diag([-1.0, -1e9])
    >>> fastest_seen_rate(A, np.array([[1.0, 0.0]]))      # the fast mode is not seen
    1.0
    >>> fastest_seen_rate(A, np.array([[1.0, 1.0]]))
    1000000000.0
    """
    lam = _seen_eigenvalues(A, C)
    return float(np.max(np.abs(lam), initial=0.0))


def fastest_seen_ringing(A: np.ndarray, C: np.ndarray) -> float:
    """Largest |Im λ| (rad/s) among the modes of A that some row of C sees; 0 when none rings.

    A : (n, n) 1/s.  C : (k, n).

    Examples
    --------
    >>> fastest_seen_ringing(np.array([[0.0, 1.0], [-4.0, 0.0]]), np.array([[1.0, 0.0]]))
    2.0
    """
    lam = _seen_eigenvalues(A, C)
    return float(np.max(np.abs(lam.imag), initial=0.0))


def _seen_eigenvalues(A: np.ndarray, C: np.ndarray) -> np.ndarray:
    """The eigenvalues of A whose modes some row of C sees (complex, 1/s)."""
    A = np.atleast_2d(np.asarray(A, dtype=float))
    C = np.asarray(C, dtype=float).reshape(-1, A.shape[0]) if A.size else np.zeros((0, 0))
    if A.shape[0] == 0 or C.shape[0] == 0:
        return np.zeros(0, dtype=complex)
    lam, V = np.linalg.eig(A)
    scale = np.linalg.norm(C) * np.linalg.norm(V, axis=0)
    seen = np.max(np.abs(C @ V), axis=0) > SEEN * np.where(scale > 0, scale, 1.0)
    return lam[seen]
