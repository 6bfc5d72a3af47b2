"""States per configuration: the companion network of a configuration that ties its states.

An ideal switch changes which capacitor voltages and inductor currents are
free.  While an ideal switch in series with an inductor is open, the node
between them is reached only through the inductor, and its current is held
(``i_L = 0``; for several inductors around such a node group, their net
current).  While a closed ideal switch parallels capacitors, their voltages
around the loop are tied (``v_C1 - v_C2 = 0``).  In such a configuration the
MNA matrix ``M`` of the companion network (:mod:`circuitode.equations.companion`)
is singular, and this module solves it.

Method (dense, per sample; N samples as stacks)
-----------------------------------------------
``M s = R_x x + R_u u`` with ``s`` the node potentials and branch currents.

1. The singular value decomposition ``M = U Σ Vᵀ`` splits off the k null
   directions, k known from the graph (one per held node group, one per tied
   loop: :attr:`Layout.n_constraints`).  The left null vectors ``Y`` give the
   consistency conditions ``Yᵀ(R_x x + R_u u) = 0``, i.e. ``P x + Q u = 0``.
   Only homogeneous constraints (``Q = 0``) are accepted; the graph already
   admits only node groups behind open ideal switches joined through inductors
   and loops of capacitors and closed ideal switches, and ``Q`` is checked
   numerically (a current source in a held cut set is refused).
2. For ``x`` on the constraint, ``s = s_p + V_r w`` with ``s_p = M⁺ (R_x x + R_u u)``
   (minimum norm) and ``V_r`` the right null vectors: the potential of a node
   group cut off, the current circulating in a tied loop.  ``w`` follows from
   the differentiated constraint ``P dx/dt = 0`` with ``dx/dt = F s``
   (``F``: ``i_C / C`` and ``L⁻¹ v_L``), a k × k solve
   ``(P F V_r) w = −P F s_p``.  This is what sets the algebraic node voltages:
   the node between an inductor and an open contactor sits at the source-side
   voltage, because ``v_L = L di/dt = 0``.  A singular ``P F V_r`` means a part
   that no constraint determines (truly floating) and is refused.
3. The constraints are Kirchhoff sums with ±1 coefficients: column-pivoted
   QR of ``P`` picks one dependent state per constraint, the others stay free
   and keep their names (a held inductor current, one capacitor of a tied
   pair).  ``T`` maps the free states ``z`` to the full vector, ``x = T z``,
   ``T[free] = I``, other rows 0 or ±1; ``S`` selects the free rows, and
   ``Π = T S`` projects onto the constraint.  By construction every column of
   ``F Z`` lies in ``null(P)``, so the full-vector matrices are
   ``A = Π (F Z_x) Π``, ``B = Π F Z_u`` (the left projector only removes
   rounding, so that a held current stays exactly 0), ``C = (…) Π``, ``D``:
   the rest of the engine keeps speaking the full vector of capacitor
   voltages and inductor currents, and ``A_r = S A T`` (the configuration's
   own state count, no fake modes, its states named) serves modes and
   stiffness estimates.  The full vector stays on the constraint exactly when
   the state entering the configuration satisfies
   ``P x = 0``; :mod:`circuitode.equations.entry` checks that at every entry.

Limits: the SVD is dense, O(K³) per sample for K MNA unknowns; it is used only
for configurations with constraints (a few hundred unknowns are fine).
"""
from __future__ import annotations

from typing import Callable

import numpy as np

from ..errors import SingularSystemError

__all__ = ["solve_constrained", "free_basis", "NULL_TOLERANCE"]

#: Singular values below this fraction of the largest count as zero; constraint
#: residuals (Q) below it as exact.
NULL_TOLERANCE = 1e-9


def free_basis(P: np.ndarray, k: int) -> tuple[np.ndarray, np.ndarray]:
    """The free states of constraints ``P x = 0`` and the map from them to the full vector.

    P : (·, n) constraint rows of rank k.  Column-pivoted QR picks k dependent
    states (pivots); the others are free.  Returns T (n, n - k) with ``x = T z``,
    ``T[free] = I``, and free (n - k,) indices.  Kirchhoff constraints have ±1
    coefficients, so T holds 0 and ±1 (rounding removed).
    """
    n = P.shape[1]
    if k == 0:
        return np.eye(n), np.arange(n)
    import scipy.linalg  # loads slowly; only circuits with constraints need it (check often has none)

    P = np.linalg.svd(P)[2][:k]  # an orthonormal basis of the rows
    _, _, pivots = scipy.linalg.qr(P, pivoting=True, mode="economic")
    dependent = np.sort(pivots[:k])
    free = np.setdiff1d(np.arange(n), dependent)
    T = np.zeros((n, n - k))
    T[free, np.arange(n - k)] = 1.0
    if k:
        T[dependent] = -np.linalg.solve(P[:, dependent], P[:, free])
    T[np.abs(T) < 1e-9] = 0.0
    T[np.abs(np.abs(T) - 1.0) < 1e-9] = np.sign(T[np.abs(np.abs(T) - 1.0) < 1e-9])
    return T, free


def solve_constrained(M: np.ndarray, rhs: np.ndarray, k: int, kc: int, n: int,
                      rates: Callable[[np.ndarray], np.ndarray], where: str):
    """Solve a companion network whose MNA matrix has k structural null directions.

    Parameters
    ----------
    M : (N, K, K) MNA matrices.  rhs : (K, n + m) one column per state and input.
    k : number of null directions, from the graph: kc constraints plus one per node
        group cut off by blocking ideal diodes.
    kc : number of independent constraints on the states.
    n : number of states (capacitor voltages then inductor currents).
    rates : maps solutions (N, K + 1, c) (last row: ground, 0) to dx/dt, (N, n, c).
    where : words for the configuration, for messages.

    Returns
    -------
    Z : (N, K + 1, n + m), the solution for each unit state and input on the
        constraint (state columns meaningful in ``range(T)``), ground row 0.
    T : (n, n - k) map from the free states to the full vector (see :func:`free_basis`).
    free : (n - k,) indices of the free states in the full vector.

    Raises
    ------
    SingularSystemError : a non-homogeneous constraint (a current source or a
        voltage source inside what the constraint ties) or a part that no
        constraint determines.
    """
    N, K, _ = M.shape
    r = K - k
    U, sv, Vh = np.linalg.svd(M)
    scale = sv[:, :1]
    if np.any(sv[:, r:] > NULL_TOLERANCE * scale) or (r and np.any(sv[:, r - 1] <= NULL_TOLERANCE * scale[:, 0])):
        raise SingularSystemError(
            f"the circuit {where} is singular in a way its wiring does not explain "
            "(check for extreme resistance ratios); add a resistance across the open switches")
    Y = U[:, :, r:]  # (N, K, k) left null vectors
    Vnull = np.swapaxes(Vh[:, r:, :], 1, 2)  # (N, K, k) right null vectors
    YR = np.swapaxes(Y, 1, 2) @ rhs  # (N, k, n + m)
    P, Q = YR[:, :, :n], YR[:, :, n:]
    if Q.size and np.max(np.abs(Q)) > NULL_TOLERANCE * max(1.0, float(np.max(np.abs(P), initial=0.0))):
        raise SingularSystemError(
            f"the circuit {where} has no solution: a source drives into what an open ideal "
            "switch cuts off (a current source in series with an open switch, or a voltage "
            "source across a tied capacitor loop); add an off-resistance or a parallel resistor")
    Zp = np.swapaxes(Vh[:, :r, :], 1, 2) @ ((np.swapaxes(U[:, :, :r], 1, 2) @ rhs) / sv[:, :r, None])
    FV = rates(np.concatenate([Vnull, np.zeros((N, 1, k))], axis=1))
    PFV = P @ FV  # (N, k, k), of rank kc
    Up, sv_pfv, Vhp = np.linalg.svd(PFV)
    top = np.maximum(sv_pfv[:, :1], 1e-300)
    if kc and np.any(sv_pfv[:, kc - 1:kc] <= NULL_TOLERANCE * top):
        raise SingularSystemError(
            f"the circuit {where} has a part whose voltages no capacitor or inductor "
            "determines (a floating part behind open switches); add a resistor from it to ground "
            "or an off-resistance to the switch")
    Zp_full = np.concatenate([Zp, np.zeros((N, 1, Zp.shape[2]))], axis=1)
    # rank kc: a group cut off by blocking diodes adds a null direction that no constraint
    # fixes (its common potential); the pseudo-inverse leaves it at minimum norm
    pinv = np.swapaxes(Vhp[:, :kc], 1, 2) @ (np.swapaxes(Up[:, :, :kc], 1, 2) / sv_pfv[:, :kc, None])
    H = -pinv @ (P @ rates(Zp_full))  # (N, k, n + m)
    Z = Zp + Vnull @ H
    Z = np.concatenate([Z, np.zeros((N, 1, Z.shape[2]))], axis=1)
    T, free = free_basis(P[0], kc)
    if n and kc and np.max(np.abs(P @ T), initial=0.0) > 1e-6 * max(1.0, float(np.max(np.abs(P)))):
        raise SingularSystemError(
            f"the circuit {where}: the constraints on its states differ between samples; "
            "run the samples one at a time")
    return Z, T, free
