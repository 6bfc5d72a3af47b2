"""The exact solution of a large sparse descriptor system, by the action of the matrix exponential.

On a segment the algebraic unknowns are eliminated into the sparse reduced system
``x' = A_r x + B_r u`` (:mod:`circuitode.solvers.sparse_explicit`,
:mod:`circuitode.solvers.schur`), and the inputs have an exact linear generator
``u = H g``, ``g' = F g`` (constants, ramps, sines).  The augmented system
``[x; g]' = [[A_r, B_r H], [0, F]] [x; g]`` is then solved by
``scipy.sparse.linalg.expm_multiply`` (Al-Mohy & Higham, SIAM J. Sci. Comput. 33
(2011): truncated Taylor series with scaling, to double precision) on the
uniform output grid of the segment, without forming any n × n exponential.
Its accuracy against the dense exact method is measured in
tests/test_sparse_transient.py (1e-9 at 1,000 states).  Knows nothing of circuits.
"""
from __future__ import annotations

import numpy as np

from ..errors import IntegrationError
from .base import SegmentResult, generator_matrices
from .sparse_explicit import SparseIVP

__all__ = ["SparseExact", "NORM_SPAN_LIMIT"]

#: expm_multiply's work grows as ‖M‖₁ · t (its Taylor series is stepped like an explicit
#: method, Al-Mohy & Higham 2011, sec. 3); above this many units the segment is refused.
NORM_SPAN_LIMIT = 2e5


class SparseExact(SparseIVP):
    """Exact on each segment up to rounding (expm_multiply); needs generable inputs and
    the reduced sparse matrix."""

    name = "exact"
    stiff = True
    exact = True
    uses_jacobian = True  # it needs the reduced matrix: refuse rather than apply the operator

    def solve(self, segment, t_out, observe=None, events=()) -> SegmentResult:
        import scipy.sparse as sp
        from scipy.sparse.linalg import expm_multiply

        if events:
            raise IntegrationError("the sparse exact path does not locate threshold events; "
                                   "use method exact below the sparse size, or radau or bdf")
        t_out = np.clip(np.asarray(t_out, dtype=float).reshape(-1), segment.t0, segment.t1)
        p = self._prepare(segment, t_out, observe)
        n, m = p.n, segment.n_inputs
        F, g0, H = np.zeros((0, 0)), np.zeros(0), np.zeros((m, 0))
        if m:
            gen = segment.inputs.generators(segment.t0, segment.t1) \
                if getattr(segment.inputs, "generators", None) else None
            if gen is None:
                raise IntegrationError("the sparse exact method needs inputs with an exact linear "
                                       "generator on every segment; use method trbdf2 or rk45")
            F, g0, H = generator_matrices(gen, m)
        q = g0.size
        M = sp.bmat([[p.reduced, sp.csr_matrix(p.forcing @ H) if q else None],
                     [None, sp.csr_matrix(F) if q else None]], format="csr") if q else sp.csr_matrix(p.reduced)
        v0 = np.concatenate([segment.w0[:n], g0])
        span = segment.t1 - segment.t0
        norm = float(abs(M).sum(axis=0).max()) if M.nnz else 0.0
        if norm * span > NORM_SPAN_LIMIT:
            raise IntegrationError(
                f"method exact on a large circuit applies the matrix exponential by a series whose work "
                f"grows with ‖A‖₁·t = {norm:.3g} 1/s × {span:.3g} s = {norm * span:.3g} (limit "
                f"{NORM_SPAN_LIMIT:.0e}): the circuit is too stiff for it; use method bdf (adaptive, to rtol) "
                "or trbdf2")
        times = np.append(t_out - segment.t0, span)
        values = _at_times(M, v0, times, expm_multiply)  # (len(times), n + q)
        x = values[:, :n]
        if t_out.size:
            p.record(slice(0, t_out.size), x[:-1].T, t_out)
        x_end = x[-1]
        w_end = np.concatenate([x_end, p.algebraic_part(x_end[:, None], segment.input_values(
            np.array([segment.t1])).T)[:, 0]])
        return SegmentResult(t_out.copy(), p.out, None, None, w_end, {"steps": int(times.size)})


def _at_times(M, v0, times, expm_multiply) -> np.ndarray:
    """exp(t M) v0 at ``times`` (s, ascending, from 0), rows; uniform runs in one call each."""
    out = np.empty((times.size, v0.size))
    start = 0
    while start < times.size:
        stop = start + 1
        if stop < times.size and times[stop] - times[start] > 1e-12 * max(times[-1], 1e-300):
            h = times[stop] - times[start]
            stop += 1
            while stop < times.size and abs(times[stop] - times[stop - 1] - h) <= 1e-9 * h:
                stop += 1
        if stop - start == 1:
            out[start] = expm_multiply(M * times[start], v0) if times[start] > 0 else v0
        else:
            out[start:stop] = expm_multiply(M, v0, start=times[start], stop=times[stop - 1],
                                            num=stop - start, endpoint=True)
        start = stop
    return out
