"""scipy's solve_ivp steppers (RK45, DOP853, BDF, Radau) on a sparse descriptor system.

For ``E w' = A w + B u(t)`` with the differential unknowns first,
``E = diag(E₁₁, 0)``, the algebraic unknowns are ``z = −A₂₂⁻¹ (A₂₁ x + B₂ u)``
and ``E₁₁ x' = A₁₁ x + A₁₂ z + B₁ u``.  The reduced matrix
``E₁₁⁻¹(A₁₁ − A₁₂ A₂₂⁻¹ A₂₁)`` is formed sparse by the connected blocks of A₂₂
(:mod:`circuitode.solvers.schur`), so a right-hand side is one sparse product, as in
a hand-written script, and BDF and Radau get it as their sparse Jacobian.  When it
cannot be formed (``budget``) the explicit methods apply the operator (one sparse LU
solve with A₂₂ per right-hand side); the implicit ones refuse.  Steps are taken one at
a time and the outputs inside each step come from the method's own interpolant, so
only ``observe @ w`` at the output times is kept (memory linear in the system, not
n × output rows).  Knows nothing of circuits.
"""
from __future__ import annotations

import numpy as np

from ..errors import IntegrationError
from .base import SegmentResult

__all__ = ["SparseIVP", "SparseRK45", "SparseDOP853", "SparseBDF", "SparseRadau", "SPARSE_IVP"]


class SparseIVP:
    """A solve_ivp stepper on a :class:`circuitode.solvers.descriptor.DescriptorSegment`
    whose first ``n`` rows are the differential ones; rtol, atol as for solve_ivp."""

    name = "rk45"
    scipy_name = "RK45"
    fixed_step = False
    stiff = False
    sparse = True
    uses_jacobian = False

    #: The dense numbers the reduced matrix may cost in large connected blocks of A₂₂
    #: (:func:`circuitode.solvers.schur.block_inverse_product`).
    budget = 5e7

    def __init__(self, *, rtol: float = 1e-6, atol: float = 1e-9, step: float | None = None, **_ignored):
        self.rtol, self.atol, self.step = float(rtol), float(atol), step
        self._reduced = {}  # id(A) -> (A, reduced): formed once per configuration

    def solve(self, segment, t_out, observe=None, events=()) -> SegmentResult:
        import scipy.integrate
        import scipy.sparse as sp

        if events:
            raise IntegrationError(f"the sparse {self.name} path does not locate threshold events; "
                                   "use method exact, radau or bdf for threshold switches")
        t_out = np.clip(np.asarray(t_out, dtype=float).reshape(-1), segment.t0, segment.t1)
        p = self._prepare(segment, t_out, observe)
        n, reduced, rate, record, algebraic_part, out = p.n, p.reduced, p.rate, p.record, p.algebraic_part, p.out
        span = segment.t1 - segment.t0
        options = {"jac": sp.csc_matrix(reduced)} if self.uses_jacobian else {}
        stepper = getattr(scipy.integrate, self.scipy_name)
        solver = stepper(rate, segment.t0, segment.w0[:n].copy(), segment.t1, rtol=self.rtol,
                         atol=self.atol, max_step=min(self.step, span) if self.step else span, **options)
        done = np.searchsorted(t_out, segment.t0, side="right")
        if done:
            record(slice(0, done), np.repeat(segment.w0[:n, None], done, axis=1), t_out[:done])
        steps = 0
        while solver.status == "running":
            message = solver.step()
            steps += 1
            if solver.status == "failed":
                raise IntegrationError(f"method {self.name} failed on [{segment.t0:g}, {segment.t1:g}] s: {message}")
            upto = np.searchsorted(t_out, solver.t, side="right")
            if upto > done:
                record(slice(done, upto), solver.dense_output()(t_out[done:upto]), t_out[done:upto])
                done = upto
        x_end = solver.y
        w_end = np.concatenate([x_end, algebraic_part(x_end[:, None], segment.input_values(
            np.array([segment.t1])).T)[:, 0]])
        counters = {"steps": steps, "rhs_evaluations": int(solver.nfev),
                    "lu_decompositions": int(getattr(solver, "nlu", 0))}
        return SegmentResult(t_out.copy(), out, None, None, w_end, counters)

    def _prepare(self, segment, t_out, observe):
        """What every stepper on the reduced system needs: n, the reduced matrix (or None),
        ``rate(t, x)``, ``record(rows, x_cols, t)`` into ``out``, ``algebraic_part(x, u)``,
        ``forcing`` (E₁₁⁻¹(B₁ − A₁₂ A₂₂⁻¹ B₂), n × m dense), as attributes of one namespace."""
        import types

        import scipy.sparse as sp
        from scipy.sparse.linalg import splu

        algebraic = segment.algebraic
        n = int(np.count_nonzero(~algebraic))
        if np.any(algebraic[:n]):
            raise IntegrationError(f"the differential rows must come first for the sparse {self.name} path")
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

        key = id(segment.A)
        if key not in self._reduced or self._reduced[key][0] is not segment.A:
            self._reduced[key] = (segment.A, _reduced_matrix(A11, A12, A21, A22, scale, self.budget))
        reduced = self._reduced[key][1]
        if reduced is None and self.uses_jacobian:
            raise IntegrationError(
                f"method {self.name} needs the reduced sparse matrix as its Jacobian, and it is too "
                f"large to form here (more than {self.budget:.0e} dense numbers); use method trbdf2")
        held = segment.held_inputs() if m else np.zeros(0)
        if reduced is not None and held is not None:  # x' = A_r x + b: one sparse product per call
            b = solve_e(B1 @ held + A12 @ algebraic_part(np.zeros((n, 1)), held[:, None])[:, 0]) if m \
                else np.zeros(n)
            b = np.asarray(b, dtype=float).reshape(-1)

            def rate(t, x):
                return reduced @ x + b
        elif reduced is not None:  # varying inputs: one sparse product and the inputs at t
            varying = _forcing(B1, B2, A12, G, solve_e, n, m)

            def rate(t, x):
                return reduced @ x + varying @ segment.input_values(np.array([t]))[0]
        else:
            def rate(t, x):
                u = held[:, None] if held is not None else segment.input_values(np.array([t])).T
                z = algebraic_part(x[:, None], u)[:, 0]
                total = A11 @ x + A12 @ z + ((B1 @ u)[:, 0] if m else 0.0)
                return np.asarray(solve_e(total), dtype=float).reshape(-1)

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

        forcing = _forcing(B1, B2, A12, G, solve_e, n, m)
        return types.SimpleNamespace(n=n, reduced=reduced, rate=rate, record=record,
                                     algebraic_part=algebraic_part, out=out, forcing=forcing)


def _forcing(B1, B2, A12, G, solve_e, n: int, m: int) -> np.ndarray:
    """E₁₁⁻¹(B₁ − A₁₂ A₂₂⁻¹ B₂) (n, m) dense; G the LU of A₂₂ (None when there is no A₂₂)."""
    if not m:
        return np.zeros((n, 0))
    direct = B1.toarray() - A12 @ (G.solve(np.asarray(B2.toarray(), dtype=float)) if G is not None
                                   else np.zeros((0, m)))
    return np.asarray(solve_e(np.asarray(direct, dtype=float)), dtype=float).reshape(n, m)


class SparseRK45(SparseIVP):
    """Dormand–Prince 5(4), scipy's RK45."""


class SparseDOP853(SparseIVP):
    """Dormand–Prince 8(5,3), scipy's DOP853."""

    name, scipy_name = "dop853", "DOP853"


class SparseBDF(SparseIVP):
    """Variable-order BDF (scipy), the reduced sparse matrix as its Jacobian."""

    name, scipy_name, stiff, uses_jacobian = "bdf", "BDF", True, True


class SparseRadau(SparseIVP):
    """Radau IIA of order 5 (scipy), the reduced sparse matrix as its Jacobian."""

    name, scipy_name, stiff, uses_jacobian = "radau", "Radau", True, True


#: The sparse solve_ivp steppers by name.
SPARSE_IVP = {cls.name: cls for cls in (SparseRK45, SparseDOP853, SparseBDF, SparseRadau)}


def _reduced_matrix(A11, A12, A21, A22, scale, budget: float):
    """Sparse E₁₁⁻¹(A₁₁ − A₁₂ A₂₂⁻¹ A₂₁) (n × n) by :func:`circuitode.solvers.schur.reduced_matrix`,
    or None when E₁₁ is not diagonal or the large blocks of A₂₂ exceed ``budget``."""
    from .schur import reduced_matrix

    if scale is None:
        return None
    return reduced_matrix(A11, A12, A21, A22, scale, budget)
