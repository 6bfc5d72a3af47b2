"""Output integrals as extra states of the ODE: ∫ y dt and ∫ y_a y_b dt integrated
alongside the circuit, under the method's own error control.

For ``x' = A x + B u`` with outputs ``y = C x + D u`` the augmented system is

    x' = A x + B u,   q₁' = y,   q₂' = y_a y_b   (one q₂ per requested pair),

started from ``q = 0`` at the segment's start; ``q`` at its end (or at the event
that ended it) is the integrals.  The integrals are then steps of the method
like the states, their local error estimated and kept within ``rtol·|q| +
atol_q`` — instead of quadrature over the interpolant between steps whose
length only the states' error chose.  ``atol_q`` is ``atol·span`` for ∫ y (an
error of atol held over the segment) and ``atol²·span`` for the products, so
the control on the integrals is in practice relative.  The q-equations do not
feed back into x, so the circuit's own steps are changed only where the
integrals need smaller ones.
"""
from __future__ import annotations

from typing import Callable

import numpy as np

__all__ = ["AugmentedIntegrals"]


class AugmentedIntegrals:
    """The augmented right-hand side, Jacobian and tolerances of one segment.

    A : (n, n), B : (n, m).  C : (k, n), D : (k, m), pairs : (p, 2) int (the request).
    inputs : t (s) → u (m,), or None with ``held`` the constant u (m,).
    atol : the states' absolute tolerance.  span : s, the segment's length.
    """

    def __init__(self, A, B, C, D, pairs, inputs: Callable | None, held, atol: float, span: float):
        self.A, self.B, self.C, self.D, self.pairs = A, B, C, D, np.asarray(pairs, dtype=int).reshape(-1, 2)
        self.inputs, self.held = inputs, held
        self.n, self.k, self.p = A.shape[0], C.shape[0], self.pairs.shape[0]
        self.size = self.n + self.k + self.p
        span = max(float(span), np.finfo(float).tiny)
        self.atol = np.concatenate([np.full(self.n, atol), np.full(self.k, atol * span),
                                    np.full(self.p, atol * atol * span)])

    def _u(self, t: float) -> np.ndarray:
        return self.held if self.held is not None else self.inputs(t)

    def start(self, x0: np.ndarray) -> np.ndarray:
        """z₀ = [x₀; 0]."""
        return np.concatenate([np.asarray(x0, dtype=float), np.zeros(self.k + self.p)])

    def rhs(self, t: float, z: np.ndarray) -> np.ndarray:
        """z' for z of shape (size,) or (size, cols) (vectorised)."""
        x = z[:self.n]
        u = self._u(t)
        if x.ndim == 2:
            u = u[:, None]
        dx = self.A @ x + (self.B @ u if u.size else 0.0)
        y = self.C @ x + (self.D @ u if self.D.size else 0.0)
        return np.concatenate([dx, y, y[self.pairs[:, 0]] * y[self.pairs[:, 1]]], axis=0)

    def jacobian(self, t: float, z: np.ndarray) -> np.ndarray:
        """∂z'/∂z (size, size): [[A, 0], [C, 0], [y_b c_a + y_a c_b, 0]]."""
        u = self._u(t)
        y = self.C @ z[:self.n] + (self.D @ u if self.D.size else 0.0)
        J = np.zeros((self.size, self.size))
        J[:self.n, :self.n] = self.A
        J[self.n:self.n + self.k, :self.n] = self.C
        a, b = self.pairs[:, 0], self.pairs[:, 1]
        J[self.n + self.k:, :self.n] = y[b][:, None] * self.C[a] + y[a][:, None] * self.C[b]
        return J

    def split(self, z: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(x (n,), ∫ y (k,), ∫ y_a y_b (p,)) of an augmented state."""
        return z[:self.n], z[self.n:self.n + self.k], z[self.n + self.k:]
