"""Stepping a chunk: per-configuration stacked matrices of one stretch, and the record.

A *stretch* is an interval between instants shared by every sample (source
corners, timed switch changes).  On it the inputs are their own linear
generator ``u = H z``, ``z' = F z``, appended to the state, so that

    w = [x; z],   w' = M w,   M = [[A, B H], [0, F]],   y = G w,   G = [C, D H],

each of shape (N, ·, ·) for the N samples of a chunk.  Samples differ in
configuration only through threshold switches; a configuration *code* per
sample (bit j set once threshold switch j has acted) picks each sample's rows.
"""
from __future__ import annotations

from typing import Callable

import numpy as np

from ..statespace import StateSpaceCache
from .batchexpm import expm_stack, rk4_stack

__all__ = ["matvec", "Stretch", "Record"]


def matvec(P: np.ndarray, w: np.ndarray) -> np.ndarray:
    """Row-wise matrix-vector products: P (N, a, b), w (N, b) → (N, a)."""
    return np.einsum("nij,nj->ni", P, w)


class Stretch:
    """The stacked matrices of one stretch, assembled per configuration when first used.

    method : "exact" (Φ = expm(M h)) or "rk4" (Φ = the RK4 polynomial of M h).
    cache : StateSpaceCache of the chunk (per-sample values, the recorded rows).
    H : (m, q), F : (q, q) the inputs' generator on this stretch.
    key_for : configuration code → tuple of switch states.
    on_assembled : called with each StateSpace the stretch uses (to note failed samples).
    """

    def __init__(self, method: str, cache: StateSpaceCache, H: np.ndarray, F: np.ndarray,
                 key_for: Callable[[int], tuple], on_assembled: Callable | None = None):
        self.method, self.cache, self.H, self.F = method, cache, H, F
        self.key_for = key_for
        self.on_assembled = on_assembled
        self._MG: dict = {}
        self._phi: dict = {}

    def _matrices(self, code: int):
        if code not in self._MG:
            ss = self.cache.get(self.key_for(code))
            if self.on_assembled is not None:
                self.on_assembled(ss)
            A, B, C, D = ss.A, ss.B, ss.C, ss.D
            N, n = A.shape[0], A.shape[1]
            q = self.F.shape[0]
            M = np.zeros((N, n + q, n + q))
            M[:, :n, :n] = A
            G = np.zeros((N, C.shape[1], n + q))
            G[:, :, :n] = C
            if q:
                M[:, :n, n:] = B @ self.H
                M[:, n:, n:] = self.F
                G[:, :, n:] = D @ self.H
            self._MG[code] = (M, G)
        return self._MG[code]

    def _step(self, code: int, h: float) -> np.ndarray:
        if (code, h) not in self._phi:
            self._phi[code, h] = self.propagate(self._matrices(code)[0], h)
        return self._phi[code, h]

    @staticmethod
    def _rows(fetch: Callable[[int], np.ndarray], code: np.ndarray, idx: np.ndarray | None):
        """Row i of fetch(code[i]) for each sample i in idx (all samples when None)."""
        idx = np.arange(code.size) if idx is None else idx
        sub = code[idx]
        out = None
        for c in np.unique(sub):  # one pass per configuration present, not per sample
            arr = fetch(int(c))
            out = np.empty((idx.size,) + arr.shape[1:]) if out is None else out
            sel = sub == c
            out[sel] = arr[idx[sel]]
        return out

    def M(self, code: np.ndarray, idx: np.ndarray | None = None) -> np.ndarray:
        """(K, s, s) system matrices of samples idx in their configurations."""
        return self._rows(lambda c: self._matrices(c)[0], code, idx)

    def G(self, code: np.ndarray, idx: np.ndarray | None = None) -> np.ndarray:
        """(K, p, s) output matrices of samples idx in their configurations."""
        return self._rows(lambda c: self._matrices(c)[1], code, idx)

    def phi(self, code: np.ndarray, h: float, idx: np.ndarray | None = None) -> np.ndarray:
        """(K, s, s) step matrices Φ(h) of samples idx in their configurations."""
        return self._rows(lambda c: self._step(c, h), code, idx)

    def propagate(self, M: np.ndarray, h) -> np.ndarray:
        """Φ for matrices M (K, s, s) and step lengths h (s, scalar or (K,))."""
        Mh = M * np.reshape(h, (-1, 1, 1))
        return expm_stack(Mh) if self.method == "exact" else rk4_stack(Mh)


class Record:
    """Each sample's recorded rows, assembled in time order at the end.

    Rows every sample records at the same instant (grid instants, timed switching)
    go to shared columns; the few rows a sample records at its own instants (a
    threshold switch acting: just before and just after) go to a side buffer with
    the shared column they precede.  ``finish`` interleaves them with one masked
    copy per possible number of preceding extra rows.
    """

    def __init__(self, N: int, capacity: int, extra_capacity: int, p: int):
        self.t_common = np.empty(capacity)
        self.y = np.empty((N, p, capacity))
        self.common = 0
        self.ext_t = np.empty((N, extra_capacity))
        self.ext_y = np.empty((N, p, extra_capacity))
        self.ext_pos = np.empty((N, extra_capacity), dtype=np.int64)
        self.ext_count = np.zeros(N, dtype=np.int64)

    def all(self, t: float, y: np.ndarray) -> None:
        """One row y (N, p) at instant t for every sample."""
        self.t_common[self.common] = t
        self.y[:, :, self.common] = y
        self.common += 1

    def some(self, idx: np.ndarray, t: np.ndarray, y: np.ndarray) -> None:
        """Rows y (len(idx), p) at instants t (len(idx),) for samples idx only."""
        k = self.ext_count[idx]
        self.ext_t[idx, k] = t
        self.ext_y[idx, :, k] = y
        self.ext_pos[idx, k] = self.common
        self.ext_count[idx] += 1

    def finish(self) -> tuple[np.ndarray, np.ndarray]:
        """t (N, L) s and y (N, p, L).  A sample with fewer extra rows than another is
        padded at the end with copies of its last row (zero-length, changes no figure)."""
        C = self.common
        N, p = self.y.shape[:2]
        E = int(self.ext_count.max(initial=0))
        y_common = self.y[:, :, :C]
        if E == 0:
            return np.broadcast_to(self.t_common[:C], (N, C)), y_common
        rows = np.arange(N)
        unused = np.arange(E)[None, :] >= self.ext_count[:, None]
        pos = np.where(unused, C, self.ext_pos[:, :E])
        ext_t = np.where(unused, self.t_common[C - 1], self.ext_t[:, :E])
        ext_y = np.where(unused[:, None, :], y_common[:, :, C - 1:C], self.ext_y[:, :, :E])
        L = C + E
        dest = pos + np.arange(E)[None, :]  # final column of each extra row
        q = np.arange(L)
        before = np.zeros((N, L), dtype=np.int64)  # extra rows placed before column q
        is_extra = np.zeros((N, L), dtype=bool)
        for k in range(E):  # E is small: two per threshold switch
            before += dest[:, k:k + 1] < q[None, :]
            is_extra[rows, dest[:, k]] = True
        t = np.empty((N, L))
        y = np.empty((N, p, L))
        for r in range(E + 1):
            mask = (before[:, r:C + r] == r) & ~is_extra[:, r:C + r]
            np.copyto(t[:, r:C + r], np.broadcast_to(self.t_common[:C], (N, C)), where=mask)
            np.copyto(y[:, :, r:C + r], y_common, where=mask[:, None, :])
        for k in range(E):
            t[rows, dest[:, k]] = ext_t[:, k]
            y[rows, :, dest[:, k]] = ext_y[:, :, k]
        return t, y
