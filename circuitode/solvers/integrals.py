"""Integrals of outputs over a segment: ∫ y dt and ∫ y_a y_b dt, from the solution itself.

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
are entire functions of modest size (their exponentials a 20-term Taylor
series) and 10-point Gauss–Legendre quadrature is exact to rounding; then k doublings

    ρ(2h) = ρ(h) + ρ(h) Φ(h),   P(2h) = P(h) + Φ(h)ᵀ P(h) Φ(h),   Φ(2h) = Φ(h)²

reach h (the integrand over [h, 2h] is the one over [0, h] carried by Φ(h)).
No exponential of −M is ever formed, so a stiff segment cannot overflow.
Rounding: each doubling carries the previous error along, so the relative
error grows like eps · h‖M‖₁ — 2·10⁻¹⁰ for a 1 ns time constant over 1 ms,
10⁻⁷ over 1 s (an output that is exactly zero in steady state is where it
shows: its ∫ y² picks up rounding at the steady level for the whole window).  (Doubling of Gramian-type integrals is the same idea as
scaling and squaring of the exponential; the block form of such integrals is
Van Loan, "Computing integrals involving the matrix exponential", IEEE Trans.
Automatic Control, 1978 — cited from memory.)

Other methods
-------------
The adaptive and implicit methods integrate the same outputs over their own
dense output (:func:`circuitode.solvers.scipy_ivp._interpolant_integrals`):
what the method says the solution is between its steps, so the integrals
carry the method's error, not the output step's.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["OutputIntegrals", "IntegralValues", "moment_operators", "apply_moments", "output_moments",
           "exact_output_integrals"]

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


@dataclass(frozen=True)
class IntegralValues:
    """linear : (k,) ∫ y_j dt.  products : (p,) ∫ y_a y_b dt, in the order of the pairs."""

    linear: np.ndarray
    products: np.ndarray

    def __add__(self, other: "IntegralValues") -> "IntegralValues":
        return IntegralValues(self.linear + other.linear, self.products + other.products)



def _short_exponentials(M: np.ndarray, s: np.ndarray) -> np.ndarray:
    """e^{M s_j} for M (K, d, d) and times s (K, J), 0 ≤ s, with ‖M s‖₁ ≤ 1/2 → (K, J, d, d).

    Taylor series to 20 terms: the remainder is below 0.5²¹/21! ≈ 1e-26 of the terms kept.
    The terms X^k / k! of X = M σ (σ the row's longest time) are formed once, 20 stacked
    products, and each instant's sum is Σ_k (s_j / σ)^k X^k / k!: one product for all J
    instants instead of 20 per instant."""
    K, J = s.shape
    d = M.shape[-1]
    sigma = np.max(s, axis=1)
    sigma = np.where(sigma > 0, sigma, 1.0)
    X = M * sigma[:, None, None]
    terms = np.empty((K, 21, d, d))
    terms[:, 0] = np.eye(d)
    for k in range(1, 21):
        terms[:, k] = terms[:, k - 1] @ X / k
    coef = (s / sigma[:, None])[:, :, None] ** np.arange(21)      # (K, J, 21), bases in [0, 1]
    return (coef @ terms.reshape(K, 21, d * d)).reshape(K, J, d, d)


def moment_operators(M: np.ndarray, h, G: np.ndarray,
                     pairs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Operators giving the output integrals over [0, h] from any start state.

    M : (K, d, d) 1/s, a stack of systems ``w' = M w``.  h : s, scalar or (K,).
    G : (K, k, d) output rows.  pairs : (p, 2) int.

    Returns
    -------
    rho : (K, k, d), ∫₀ʰ G e^{Ms} ds, so that ∫ y dt = rho @ w0.
    P : (K, p, d, d), ∫₀ʰ e^{Mᵀs} g_a g_bᵀ e^{Ms} ds, so that ∫ y_a y_b dt = w0ᵀ P w0.
    Exact up to rounding (see the module docstring for the method).
    """
    K, d = M.shape[0], M.shape[-1]
    h = np.broadcast_to(np.asarray(h, dtype=float), (K,))
    p = pairs.shape[0]
    if d == 0 or K == 0:
        return np.zeros(G.shape), np.zeros((K, p, d, d))
    norm = np.max(np.sum(np.abs(M), axis=-2), axis=-1) * h
    top = float(np.max(norm))
    doublings = max(0, int(np.ceil(np.log2(top / _SHORT)))) if top > _SHORT else 0
    h0 = h / 2.0 ** doublings
    nodes, weights = np.polynomial.legendre.leggauss(_NODES)
    s = 0.5 * h0[:, None] * (nodes[None, :] + 1.0)                 # (K, J)
    weights = 0.5 * h0[:, None] * weights[None, :]                 # (K, J)
    phis = _short_exponentials(M, np.concatenate([s, h0[:, None]], axis=1))
    Y = G[:, None] @ phis[:, :-1]                                  # (K, J, k, d): rows of G Φ(s)
    rho = np.einsum("nj,njkd->nkd", weights, Y)
    P = np.einsum("nj,njpd,njpe->npde", weights, Y[:, :, pairs[:, 0]], Y[:, :, pairs[:, 1]])
    phi = phis[:, -1]
    for _ in range(doublings):
        rho = rho + rho @ phi
        P = P + np.swapaxes(phi, -1, -2)[:, None] @ P @ phi[:, None]
        phi = phi @ phi
    return rho, P


def apply_moments(rho: np.ndarray, P: np.ndarray, w0: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(∫ y dt (K, k), ∫ y_a y_b dt (K, p)) from operators (K, k, d), (K, p, d, d) and
    start states w0 (K, d)."""
    return (np.einsum("nkd,nd->nk", rho, w0), np.einsum("nd,npde,ne->np", w0, P, w0))


def output_moments(M: np.ndarray, w0: np.ndarray, h: float, G: np.ndarray,
                   pairs: np.ndarray) -> IntegralValues:
    """∫₀ʰ y dt (k,) and ∫₀ʰ y_a y_b dt (p,) for ``w' = M w``, ``w(0) = w0``, ``y = G w``.

    M : (d, d) 1/s.  w0 : (d,).  h : s, ≥ 0.  G : (k, d).  pairs : (p, 2) int.
    """
    pairs = np.asarray(pairs, dtype=int).reshape(-1, 2)
    if h <= 0.0:
        return IntegralValues(np.zeros(G.shape[0]), np.zeros(pairs.shape[0]))
    rho, P = moment_operators(M[None], h, G[None], pairs)
    linear, products = apply_moments(rho, P, np.asarray(w0, dtype=float)[None])
    return IntegralValues(linear[0], products[0])


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
