"""Adaptive Dormand–Prince (scipy's RK45) on a sparse descriptor system that is not stiff.

For ``E w' = A w + B u(t)`` with the differential unknowns first,
``E = diag(E₁₁, 0)``, the algebraic unknowns are ``z = −A₂₂⁻¹ (A₂₁ x + B₂ u)``
and ``E₁₁ x' = A₁₁ x + A₁₂ z + B₁ u``: each right-hand side costs one sparse
LU solve with A₂₂ (factored once per segment) and one with E₁₁.  Steps are taken
one at a time and the outputs inside each step come from the method's own
interpolant, so only ``observe @ w`` at the output times is kept (memory linear
in the system, not n × output rows).  Knows nothing of circuits.
"""
from __future__ import annotations

import numpy as np

from ..errors import IntegrationError
from .base import SegmentResult

__all__ = ["SparseRK45"]


class SparseRK45:
    """RK45 on a :class:`circuitode.solvers.descriptor.DescriptorSegment` whose first
    ``n`` rows are the differential ones; rtol, atol as for solve_ivp."""

    name = "rk45"
    fixed_step = False
    stiff = False
    sparse = True

    #: The reduced matrix E₁₁⁻¹(A₁₁ − A₁₂ A₂₂⁻¹ A₂₁) is formed (sparse) only when
    #: n · K stays below this: forming it costs one solve per state, O(n · K) work.
    budget = 5e7

    def __init__(self, *, rtol: float = 1e-6, atol: float = 1e-9, step: float | None = None, **_ignored):
        self.rtol, self.atol, self.step = float(rtol), float(atol), step

    def solve(self, segment, t_out, observe=None, events=()) -> SegmentResult:
        import scipy.sparse as sp
        from scipy.integrate import RK45
        from scipy.sparse.linalg import splu

        if events:
            raise IntegrationError("the sparse rk45 path does not locate threshold events; "
                                   "use method exact, radau or bdf for threshold switches")
        algebraic = segment.algebraic
        n = int(np.count_nonzero(~algebraic))
        if np.any(algebraic[:n]):
            raise IntegrationError("the differential rows must come first for the sparse rk45 path")
        A, B, E = segment.A.tocsc(), segment.B.tocsc(), segment.E.tocsc()
        A11, A12, A21, A22 = A[:n, :n], A[:n, n:], A[n:, :n], A[n:, n:]
        B1, B2 = B[:n], B[n:]
        E11 = sp.csc_matrix(E[:n, :n])
        G = splu(sp.csc_matrix(A22)) if A.shape[0] > n else None
        m = segment.n_inputs
        if E11.nnz == np.count_nonzero(E11.diagonal()):  # diagonal (no coupled inductors)
            scale = sp.diags(1.0 / E11.diagonal())
            solve_e = scale.__matmul__
        else:
            lu_e = splu(E11)
            scale, solve_e = None, (lambda v: lu_e.solve(np.asarray(v, dtype=float)))

        def algebraic_part(x, u):  # x (n, k), u (m, k) → z (K, k)
            if G is None:
                return np.zeros((0, x.shape[1]))
            rhs = A21 @ x + (B2 @ u if m else 0.0)
            return -G.solve(np.asarray(rhs, dtype=float))

        reduced = _reduced_matrix(A11, A12, A21, G, scale, self.budget)
        held = segment.held_inputs() if m else np.zeros(0)
        if reduced is not None and held is not None:  # x' = A_r x + b: one sparse product per call
            b = solve_e(B1 @ held + A12 @ algebraic_part(np.zeros((n, 1)), held[:, None])[:, 0]) if m \
                else np.zeros(n)
            b = np.asarray(b, dtype=float).reshape(-1)

            def rate(t, x):
                return reduced @ x + b
        else:
            def rate(t, x):
                u = held[:, None] if held is not None else segment.input_values(np.array([t])).T
                z = algebraic_part(x[:, None], u)[:, 0]
                total = A11 @ x + A12 @ z + ((B1 @ u)[:, 0] if m else 0.0)
                return np.asarray(solve_e(total), dtype=float).reshape(-1)

        t_out = np.clip(np.asarray(t_out, dtype=float).reshape(-1), segment.t0, segment.t1)
        rows = segment.A.shape[0] if observe is None else observe.shape[0]
        out = np.empty((t_out.size, rows))

        if observe is not None and G is not None:
            # observe @ [x; z] with z = −G⁻¹(A₂₁ x + B₂ u) is (O_x − Y A₂₁) x − Y B₂ u with
            # Y = O_z G⁻¹: one transposed solve per observed row that touches z, not one per step
            observe = sp.csr_matrix(observe)
            O_x, O_z = observe[:, :n], observe[:, n:]
            touched = np.unique(O_z.tocoo().row)
            Y = np.zeros((observe.shape[0], O_z.shape[1]))
            if touched.size:
                Y[touched] = G.solve(np.asarray(O_z[touched].toarray().T, dtype=float), trans="T").T
            obs_x = O_x - sp.csr_matrix(Y) @ A21
            obs_u = -(sp.csr_matrix(Y) @ B2).toarray() if m else np.zeros((observe.shape[0], 0))

            def record(which, x_cols, t):
                y = obs_x @ x_cols
                if m:
                    y = y + obs_u @ segment.input_values(t).T
                out[which] = np.asarray(y).T
        else:
            def record(which, x_cols, t):
                u = segment.input_values(t).T
                w = np.vstack([x_cols, algebraic_part(x_cols, u)])
                out[which] = (w if observe is None else observe @ w).T

        span = segment.t1 - segment.t0
        solver = RK45(rate, segment.t0, segment.w0[:n].copy(), segment.t1, rtol=self.rtol,
                      atol=self.atol, max_step=min(self.step, span) if self.step else span)
        done = np.searchsorted(t_out, segment.t0, side="right")
        if done:
            record(slice(0, done), np.repeat(segment.w0[:n, None], done, axis=1), t_out[:done])
        steps = 0
        while solver.status == "running":
            message = solver.step()
            steps += 1
            if solver.status == "failed":
                raise IntegrationError(f"method rk45 failed on [{segment.t0:g}, {segment.t1:g}] s: {message}")
            upto = np.searchsorted(t_out, solver.t, side="right")
            if upto > done:
                record(slice(done, upto), solver.dense_output()(t_out[done:upto]), t_out[done:upto])
                done = upto
        x_end = solver.y
        w_end = np.concatenate([x_end, algebraic_part(x_end[:, None], segment.input_values(
            np.array([segment.t1])).T)[:, 0]])
        counters = {"steps": steps, "rhs_evaluations": int(solver.nfev)}
        return SegmentResult(t_out.copy(), out, None, None, w_end, counters)


def _reduced_matrix(A11, A12, A21, G, scale, budget: float, block: int = 256):
    """Sparse E₁₁⁻¹(A₁₁ − A₁₂ G⁻¹ A₂₁) (n × n), from solves of ``block`` columns at a time,
    or None when E₁₁ is not diagonal or n · K exceeds ``budget`` (the operator is used then)."""
    import scipy.sparse as sp

    n = A11.shape[0]
    if scale is None or (G is not None and n * A21.shape[0] > budget):
        return None
    if G is None:
        return sp.csr_matrix(scale @ A11)
    A21 = sp.csc_matrix(A21)
    parts = []
    for start in range(0, n, block):
        cols = A21[:, start:start + block].toarray()
        parts.append(sp.csc_matrix(A12 @ G.solve(cols)))
    coupling = sp.hstack(parts, format="csc") if parts else sp.csc_matrix((n, 0))
    return sp.csr_matrix(scale @ (A11 - coupling))
