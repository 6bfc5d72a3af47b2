"""Integrals of outputs over a segment: ∫ y dt and ∫ y_a y_b dt, exactly or as extra states.

A run's energy, I²t, rms and mean are integrals of the outputs ``y = C x + D u``
(and of products of two outputs: ``p = v·i``).  Computed from the sampled rows
they are only as good as the step; here they come from the solution itself.

Exact method
------------
With the inputs written by their generator (``u = H z``, ``z' = F z``), the
segment is ``w' = M w`` with ``w = [x; z]`` and every output is ``y = G w``,
``G = [C, D H]`` (see :mod:`.exact`).  With ``Φ(s) = e^{Ms}``

    ∫₀ʰ y ds = ρ(h) w₀,  ρ(h) = ∫₀ʰ G Φ(s) ds,
    ∫₀ʰ y_a y_b ds = w₀ᵀ P_ab(h) w₀,  P_ab(h) = ∫₀ʰ Φ(s)ᵀ g_a g_bᵀ Φ(s) ds

(an observability-type Gramian per pair; it is formed on the output side so
that an output that decays to zero, such as the charging current of a
capacitor, is not obtained as a small difference of large state moments).
On a first short interval ``h₀ = h / 2ᵏ`` with ‖M‖₁ h₀ ≤ 1/2 the integrands
are entire functions of modest size and 10-point Gauss–Legendre quadrature
is exact to rounding; then k doublings

    ρ(2h) = ρ(h) + ρ(h) Φ(h),   P(2h) = P(h) + Φ(h)ᵀ P(h) Φ(h),   Φ(2h) = Φ(h)²

reach h (the integrand over [h, 2h] is the one over [0, h] carried by Φ(h)).
No exponential of −M is ever formed, so a stiff segment (h |λ| = 10⁶) is as
safe as a slow one.  (Doubling of Gramian-type integrals is the same idea as
scaling and squaring of the exponential; the block form of such integrals is
Van Loan, "Computing integrals involving the matrix exponential", IEEE Trans.
Automatic Control, 1978 — cited from memory.)

Other methods
-------------
:func:`quadrature_rates` gives the derivatives of the extra states
``r = ∫ y dt`` and ``s = ∫ y_a y_b dt`` so an integrator can carry them along
with ``x`` under its own error control.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.linalg import expm

__all__ = ["OutputIntegrals", "IntegralValues", "output_moments", "exact_output_integrals",
           "quadrature_rates"]

#: ‖M‖₁ h₀ at most this on the first short interval; the rest is done by doubling.
_SHORT = 0.5
#: Gauss–Legendre nodes on the first short interval (exact to rounding there for ‖M‖ h₀ ≤ 1/2).
_NODES = 10


@dataclass(frozen=True)
class OutputIntegrals:
    """What to integrate on a segment: outputs ``y = C x + D u`` and products of two of them.

    C : (k, n).  D : (k, m).  pairs : (p, 2) int, rows (a, b) ask for ∫ y_a y_b dt.
    """

    C: np.ndarray
    D: np.ndarray
    pairs: np.ndarray

    def __post_init__(self) -> None:
        C = np.atleast_2d(np.asarray(self.C, dtype=float))
        D = np.asarray(self.D, dtype=float).reshape(C.shape[0], -1)
        pairs = np.asarray(self.pairs, dtype=int).reshape(-1, 2)
        object.__setattr__(self, "C", C)
        object.__setattr__(self, "D", D)
        object.__setattr__(self, "pairs", pairs)

    @property
    def size(self) -> int:
        """Number of extra states: k outputs plus p products."""
        return self.C.shape[0] + self.pairs.shape[0]


@dataclass(frozen=True)
class IntegralValues:
    """linear : (k,) ∫ y_j dt.  products : (p,) ∫ y_a y_b dt, in the order of the pairs."""

    linear: np.ndarray
    products: np.ndarray

    def __add__(self, other: "IntegralValues") -> "IntegralValues":
        return IntegralValues(self.linear + other.linear, self.products + other.products)

    @classmethod
    def from_states(cls, extra: np.ndarray, k: int) -> "IntegralValues":
        """Split the extra states [r; s] of :func:`quadrature_rates` (k + p,)."""
        extra = np.asarray(extra, dtype=float).reshape(-1)
        return cls(extra[:k].copy(), extra[k:].copy())


def output_moments(M: np.ndarray, w0: np.ndarray, h: float, G: np.ndarray,
                   pairs: np.ndarray) -> IntegralValues:
    """∫₀ʰ y dt (k,) and ∫₀ʰ y_a y_b dt (p,) for ``w' = M w``, ``w(0) = w0``, ``y = G w``.

    M : (d, d) 1/s.  w0 : (d,).  h : s, ≥ 0.  G : (k, d).  pairs : (p, 2) int.
    Exact up to rounding (see the module docstring for the method).
    """
    d, k, p = M.shape[0], G.shape[0], pairs.shape[0]
    if h <= 0.0 or d == 0:
        return IntegralValues(np.zeros(k), np.zeros(p))
    norm = float(np.max(np.sum(np.abs(M), axis=0)))
    doublings = max(0, int(np.ceil(np.log2(norm * h / _SHORT)))) if norm * h > _SHORT else 0
    h0 = h / 2.0 ** doublings
    nodes, weights = np.polynomial.legendre.leggauss(_NODES)
    s = 0.5 * h0 * (nodes + 1.0)
    weights = 0.5 * h0 * weights
    Y = np.stack([G @ expm(M * si) for si in s])          # (nodes, k, d): y-rows of Φ(s)
    rho = np.einsum("i,ikd->kd", weights, Y)               # ∫ G Φ ds
    P = np.einsum("i,ipd,ipe->pde", weights, Y[:, pairs[:, 0]], Y[:, pairs[:, 1]])
    phi = expm(M * h0)
    for _ in range(doublings):
        rho = rho + rho @ phi
        P = P + np.matmul(phi.T, np.matmul(P, phi))
        phi = phi @ phi
    return IntegralValues(rho @ w0, np.einsum("d,pde,e->p", w0, P, w0))


def exact_output_integrals(request: OutputIntegrals, M: np.ndarray, w0: np.ndarray, h: float,
                           H: np.ndarray) -> IntegralValues:
    """∫ y dt and ∫ y_a y_b dt over ``[0, h]`` for ``w' = M w`` with ``w = [x; z]``, ``u = H z``.

    request : what to integrate (C (k, n), D (k, m), pairs).  M : (n + q, n + q).
    w0 : (n + q,).  h : s.  H : (m, q).
    """
    n = request.C.shape[1]
    q = M.shape[0] - n
    G = np.zeros((request.C.shape[0], n + q))
    G[:, :n] = request.C
    if q and request.D.size:
        G[:, n:] = request.D @ H
    return output_moments(M, np.asarray(w0, dtype=float), float(h), G, request.pairs)


def quadrature_rates(request: OutputIntegrals, x: np.ndarray, u: np.ndarray) -> np.ndarray:
    """Derivatives of the extra states [∫ y; ∫ y_a y_b] for states in columns.

    x : (n, c) states.  u : (m, c) inputs.  Returns (k + p, c).
    """
    y = request.C @ x
    if request.D.size:
        y = y + request.D @ u
    a, b = request.pairs[:, 0], request.pairs[:, 1]
    return np.concatenate([y, y[a] * y[b]], axis=0)
