"""Stepping a chunk: per-configuration stacked matrices of one stretch, and the record.

A *stretch* is an interval between instants shared by every sample (source
corners, timed switch changes).  On it the inputs are their own linear
generator ``u = H z``, ``z' = F z``, appended to the state, so that

    w = [x; z],   w' = M w,   M = [[A, B H], [0, F]],   y = G w,   G = [C, D H],

each of shape (N, ·, ·) for the N samples of a chunk.  Samples differ in
configuration only through threshold switches; a configuration *code* per
sample (bit j set once threshold switch j has acted) picks each sample's rows.

Runs of equal steps are taken a block at a time by :mod:`.kernel` (the
states, outputs and integral sums at the next K grid instants in one call,
w ← Φ w step by step), instead of K Python-level steps.
"""
from __future__ import annotations

from typing import Callable

import numpy as np

from ..equations.statespace import StateSpaceCache
from .batchexpm import expm_stack, rk4_stack
from .kernel import compact_rows, compiled_for, write_columns

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
    extra_rows : (r, q) more output rows after the probes' rows, reading the generator states
        (the clocks of per-sample timed switches, see timed_switches), or None.
    """

    def __init__(self, method: str, cache: StateSpaceCache, H: np.ndarray, F: np.ndarray,
                 key_for: Callable[[int], tuple], on_assembled: Callable | None = None,
                 extra_rows: np.ndarray | None = None):
        self.method, self.cache, self.H, self.F = method, cache, H, F
        self.extra_rows = extra_rows
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
            p, r = C.shape[1], 0 if self.extra_rows is None else self.extra_rows.shape[0]
            G = np.zeros((N, p + r, n + q))
            G[:, :p, :n] = C
            if q:
                M[:, :n, n:] = B @ self.H
                M[:, n:, n:] = self.F
                G[:, :p, n:] = D @ self.H
            if r:
                G[:, p:, n:] = self.extra_rows
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
    """Each sample's recorded rows, written straight to their place in time order.

    Rows every sample records at the same instant (grid instants, timed switching)
    are *common columns*; the few rows a sample records at its own instants (a
    threshold switch acting: just before and just after) are *extra rows*, each
    placed before the common column ``pos`` it precedes.  A sample's common column
    c therefore lands at c plus the number of its extra rows with ``pos ≤ c``; most
    samples share that offset, so columns are copied in slices per offset.  The rows are
    held quantity-major, (p, N, width), so that each recorded quantity of every sample is
    one contiguous block for the figures that read it (:meth:`finish` returns the (N, p, L)
    view).
    """

    def __init__(self, N: int, capacity: int, extra_capacity: int, p: int, batch: int = 0):
        self.compiled = compiled_for(N, batch)  # copy blocks by the compiled loop (kernel.py)
        self.t_common = np.empty(capacity)
        self.y = np.empty((p, N, capacity + extra_capacity))
        self.t = np.empty((N, capacity + extra_capacity)) if extra_capacity else None
        self.common = 0
        self.extra_capacity = extra_capacity
        self.ext_pos = np.empty((N, max(extra_capacity, 1)), dtype=np.int64)
        self.ext_count = np.zeros(N, dtype=np.int64)

    def _room(self, need: int) -> None:
        """Make room for ``need`` extra rows per sample (a switch with hysteresis acts an
        unknown number of times): capacities double, rows already written are kept."""
        if need <= self.extra_capacity:
            return
        grow = max(need, 2 * self.extra_capacity) - self.extra_capacity
        p, N, width = self.y.shape
        self.y = np.concatenate([self.y, np.empty((p, N, grow))], axis=2)
        if self.t is None:  # no extra row yet: every sample's rows are the common columns
            self.t = np.empty((N, width + grow))
            self.t[:, :self.common] = self.t_common[:self.common]
        else:
            self.t = np.concatenate([self.t, np.empty((N, grow))], axis=1)
        pos = np.empty((N, self.extra_capacity + grow), dtype=np.int64)
        pos[:, :self.ext_pos.shape[1]] = self.ext_pos
        self.ext_pos = pos
        self.extra_capacity += grow

    def all(self, t: float, y: np.ndarray) -> None:
        """One row y (N, p) at instant t for every sample."""
        self.columns(np.array([t], dtype=float), y[:, :, None])

    def columns(self, ts: np.ndarray, Y: np.ndarray) -> None:
        """The next K common columns: instants ts (K,) s and rows Y (N, p, K), every sample."""
        c0, K = self.common, ts.size
        self.t_common[c0:c0 + K] = ts
        self.common += K
        if self.t is None:
            self.y[:, :, c0:c0 + K] = np.swapaxes(Y, 0, 1)
            return
        if self.compiled:
            write_columns(self.y, self.t, Y, ts, c0, self.ext_pos, self.ext_count)
            return
        count = self.ext_count
        last = np.where(count > 0, self.ext_pos[np.arange(count.size), np.maximum(count - 1, 0)], -1)
        moving = last >= c0  # extra rows placed among these columns
        steady = ~moving
        for o in np.unique(count[steady]):
            sel = steady & (count == o)
            if sel.all():
                self.y[:, :, c0 + o:c0 + o + K] = np.swapaxes(Y, 0, 1)
                self.t[:, c0 + o:c0 + o + K] = ts
            else:
                self.y[:, sel, c0 + o:c0 + o + K] = np.swapaxes(Y[sel], 0, 1)
                self.t[sel, c0 + o:c0 + o + K] = ts
        r = np.flatnonzero(moving)
        if r.size:
            cols = c0 + np.arange(K)
            used = np.arange(self.ext_pos.shape[1])[None, :] < count[r, None]  # (R, E)
            before = ((self.ext_pos[r, :, None] <= cols[None, None, :]) & used[:, :, None]).sum(axis=1)
            dest = cols[None, :] + before  # (R, K)
            p, N, width = self.y.shape
            rows = (r[:, None] + N * np.arange(p)[None, :]).reshape(-1, 1)  # (R·p, 1), sample-major
            self.y.reshape(p * N, width)[rows, np.repeat(dest, p, axis=0)] = Y[r].reshape(-1, K)
            self.t[r[:, None], dest] = ts[None, :]

    def some(self, idx: np.ndarray, t: np.ndarray, y: np.ndarray, pos=None) -> None:
        """Rows y (len(idx), p) at instants t (len(idx),) for samples idx only (each once),
        placed before common column pos (scalar or (len(idx),); the next one by default)."""
        self._room(int(self.ext_count[idx].max(initial=0)) + 1)
        k = self.ext_count[idx]
        pos = np.broadcast_to(self.common if pos is None else np.asarray(pos, dtype=np.int64), idx.shape)
        dest = pos + k
        self.t[idx, dest] = t
        self.y[:, idx, dest] = y.T
        self.ext_pos[idx, k] = pos
        self.ext_count[idx] += 1

    def finish(self) -> tuple[np.ndarray, np.ndarray]:
        """t (N, L) s and y (N, p, L).  A sample with fewer extra rows than another is
        padded at the end with copies of its last row (zero-length, changes no figure).
        With the compiled loops the rows are moved to the front of the record's buffer
        (:func:`.kernel.compact_rows`), so each quantity's (N, L) rows are contiguous; the
        record takes no more rows after this."""
        C = self.common
        N = self.y.shape[1]
        E = int(self.ext_count.max(initial=0))
        L = C + E
        if E == 0:
            t = np.broadcast_to(self.t_common[:C], (N, C))
        else:
            for o in np.unique(self.ext_count):
                if o < E:
                    sel = self.ext_count == o
                    self.y[:, sel, C + o:L] = self.y[:, sel, C + o - 1:C + o]
                    self.t[sel, C + o:L] = self.t[sel, C + o - 1:C + o]
            t = self.t[:, :L]
        if self.compiled and L < self.y.shape[2]:  # each quantity's rows one contiguous block
            y = compact_rows(self.y, L)
            self.y = None  # (its layout is spoilt)
            return t, np.swapaxes(y, 0, 1)
        return t, np.swapaxes(self.y[:, :, :L], 0, 1)
