"""Fixed-step implicit stepping of sparse descriptor systems ``E w' = A w + B u(t)``.

Shared by :mod:`circuitode.solvers.trapezoidal` and :mod:`circuitode.solvers.trbdf2`.
Rows of ``E`` that are zero (``algebraic``) are constraints ``0 = A w + B u``;
they are enforced at the end of every step, so with a consistent start the
stepping equals the method applied to the ODE left after eliminating the
algebraic unknowns (no spurious oscillation of the algebraic part).  Every
distinct step length costs one sparse LU factorisation of ``E − d h A``; each
step is then one pair of sparse triangular solves, O(nonzeros of the factors).
Knows nothing of circuits.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import splu

from ..errors import CircuitodeError, IntegrationError
from .base import SegmentResult, generator_matrices
from .rk4 import rk4_step_grid

__all__ = ["DescriptorSegment", "DescriptorIntegrator"]


@dataclass(frozen=True)
class DescriptorSegment:
    """``E w' = A w + B u(t)`` on ``t0 <= t <= t1`` from ``w0``.

    E : (N, N) sparse or dense, or None for the identity.  A : (N, N).  B : (N, m).
    inputs : object with ``values(t)`` (nt,) → (nt, m), or None when m = 0.
    w0 : (N,), consistent with the algebraic rows.  algebraic : (N,) bool, or None
    (derived from the zero rows of E).
    """

    E: object
    A: object
    B: object
    inputs: object
    t0: float
    t1: float
    w0: np.ndarray
    algebraic: np.ndarray | None = None

    def __post_init__(self) -> None:
        A = sp.csc_matrix(self.A)
        N = A.shape[0]
        E = sp.identity(N, format="csc") if self.E is None else sp.csc_matrix(self.E)
        B = sp.csc_matrix(self.B) if self.B is not None and np.size(self.B) else sp.csc_matrix((N, 0))
        w0 = np.asarray(self.w0, dtype=float).reshape(-1)
        if A.shape != (N, N) or E.shape != (N, N) or B.shape[0] != N or w0.shape != (N,):
            raise IntegrationError(f"descriptor shapes disagree: E {E.shape}, A {A.shape}, B {B.shape}, "
                                   f"w0 {w0.shape}")
        if not (np.isfinite(self.t0) and np.isfinite(self.t1) and self.t1 > self.t0):
            raise IntegrationError(f"segment [{self.t0}, {self.t1}] s is empty or not finite; give t1 > t0")
        algebraic = self.algebraic
        if algebraic is None:
            algebraic = np.asarray(abs(E).sum(axis=1)).ravel() == 0
        object.__setattr__(self, "E", E)
        object.__setattr__(self, "A", A)
        object.__setattr__(self, "B", B)
        object.__setattr__(self, "w0", w0)
        object.__setattr__(self, "algebraic", np.asarray(algebraic, dtype=bool))

    @property
    def n_inputs(self) -> int:
        return self.B.shape[1]

    def held_inputs(self) -> np.ndarray | None:
        """u (m,) when every input is constant on the segment (its generator has F = 0),
        else None; inputs without generators count as varying."""
        generators = getattr(self.inputs, "generators", None)
        if self.n_inputs == 0:
            return np.zeros(0)
        if generators is None:
            return None
        try:
            gen = generators(self.t0, self.t1)
        except (ValueError, NotImplementedError):
            return None
        if gen is None:
            return None
        F, z0, H = generator_matrices(gen, self.n_inputs)
        return H @ z0 if not np.any(F) else None

    def input_values(self, t: np.ndarray) -> np.ndarray:
        """Inputs (nt, m) at times t, nudged inside the segment as in LinearSegment."""
        t = np.atleast_1d(np.asarray(t, dtype=float))
        if self.n_inputs == 0:
            return np.zeros((t.size, 0))
        span = self.t1 - self.t0
        nudge = min(64 * np.finfo(float).eps * max(abs(self.t0), abs(self.t1), span), span / 4)
        t = np.clip(t, self.t0 + nudge, self.t1 - nudge)
        return np.asarray(self.inputs.values(t), dtype=float).reshape(t.size, self.n_inputs)


class DescriptorIntegrator:
    """Base of the fixed-step descriptor integrators; ``step`` (s) is required.

    Subclasses set ``name``, ``d`` (the matrix ``E − d h A``) and ``_advance``.
    ``solve(segment, t_out, observe)`` returns ``observe @ w`` at the output times
    (all of w when ``observe`` is None), so a large system keeps only what is recorded.
    """

    name = "descriptor"
    d = 0.5
    fixed_step = True
    stiff = True
    sparse = True

    def __init__(self, *, step: float | None = None, **_ignored):
        if step is None or not (np.isfinite(step) and step > 0):
            raise CircuitodeError(f"method {self.name} takes fixed steps and needs a positive step, got {step!r}")
        self.step = float(step)

    def __repr__(self) -> str:
        return f"{type(self).__name__}(step={self.step})"

    def solve(self, segment: DescriptorSegment, t_out, observe=None, events=()) -> SegmentResult:
        if events:
            raise IntegrationError(f"method {self.name} does not locate threshold events; "
                                   "use method exact, radau or bdf for threshold switches")
        t_out = np.clip(np.asarray(t_out, dtype=float).reshape(-1), segment.t0, segment.t1)
        nodes = rk4_step_grid(segment.t0, segment.t1, t_out, self.step)
        h = np.diff(nodes)
        key = np.round(h / self.step, 12)
        lengths, which = np.unique(key, return_inverse=True)
        E, A, B = segment.E, segment.A, segment.B
        differential = (~segment.algebraic).astype(float)
        factors = []
        for j in range(lengths.size):
            hj = float(np.mean(h[which == j]))
            dh = self.d * hj
            # (E − d h A) for the solve; E + d h A on the differential rows for the right side
            explicit = sp.csr_matrix(E + sp.diags(dh * differential) @ A)
            factors.append((hj, (splu(sp.csc_matrix(E - dh * A)), explicit)))
        U = self._input_table(segment, nodes, h)
        # B u only on B's nonzero rows: (input times, r), scattered into the right side per step
        rows = np.unique(B.tocoo().row)
        forcing = U @ B[rows].toarray().T if rows.size else np.zeros((U.shape[0], 0))
        U = (rows, forcing, differential[rows])
        E = sp.csr_matrix(E)
        keep = np.searchsorted(nodes, t_out)
        observe = None if observe is None else sp.csr_matrix(observe)
        out = np.empty((t_out.size, segment.A.shape[0] if observe is None else observe.shape[0]))
        marks = np.zeros(nodes.size, dtype=int) - 1
        marks[keep] = np.arange(keep.size)
        w = segment.w0.copy()
        for k in range(nodes.size):
            if marks[k] >= 0:
                out[marks[k]] = w if observe is None else observe @ w
            if k == h.size:
                break
            hk, lu = factors[which[k]]
            w = self._advance(lu, E, A, B, differential, w, hk, U, k)
        if not np.all(np.isfinite(w)):
            raise IntegrationError(f"method {self.name} produced NaN or infinite values on "
                                   f"[{segment.t0:g}, {segment.t1:g}] s")
        counters = {"steps": int(h.size), "lu_decompositions": len(factors)}
        # marks may repeat a node for repeated output times: fill those rows too
        if np.unique(keep).size != keep.size:
            first = {}
            for row, node in enumerate(keep):
                first.setdefault(node, row)
                out[row] = out[first[node]]
        return SegmentResult(t_out.copy(), out, None, None, w, counters)

    def _input_table(self, segment, nodes, h):
        raise NotImplementedError

    def _advance(self, lu, E, A, B, differential, w, h, U, k):
        """One step of length h from w; ``lu`` is (LU of E − d h A, E + d h diag(differential) A),
        ``U`` is (rows, forcing, differential on rows) with forcing = B u on B's nonzero rows."""
        raise NotImplementedError
