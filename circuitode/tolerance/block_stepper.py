"""Block stepping of one chunk through one stretch: runs of equal grid steps at once.

Between two instants shared by every sample, :class:`BlockStepper` takes runs of
equal recorded steps in blocks of up to :data:`MAX_BLOCK` steps: the states, outputs
and integral sums at the next K instants are one call of the block kernel
(:func:`.kernel.block_steps`, w ← Φ w step by step, the block's arrays within
:data:`POWER_TABLE_BYTES`), and threshold crossings are found from the whole block's outputs at
once and handed to :func:`.thresholds.handle_crossings`; partial steps go one by
one.  It updates each sample's configuration code, the record and, with the
exact method, the running integrals, and the candidates for peaks between rows
(:mod:`.batch_extrema`); it knows nothing of the circuit itself.
"""
from __future__ import annotations

import numpy as np

from .batch_extrema import ChunkExtrema
from .batch_integrals import ChunkIntegrals
from .kernel import block_steps
from .stepping import Record, Stretch, matvec
from .thresholds import Watch, handle_crossings

__all__ = ["BlockStepper", "MAX_BLOCK", "POWER_TABLE_BYTES", "SAME_STEP"]

#: Bytes the states and outputs of one block may take (N·K·(s + p) doubles), and the
#: longest block (grid steps taken by one stacked product).
POWER_TABLE_BYTES = 16e6
MAX_BLOCK = 256
#: Steps whose lengths agree to this fraction are one run of equal steps (grid instants
#: differ from multiples of the step only by rounding, about 1e-12 of it).
SAME_STEP = 1e-9


class BlockStepper:
    """Steps the samples of one chunk through one stretch, updating code and the record.

    Runs of equal recorded steps go in blocks of up to K steps (one kernel call;
    crossings found from the whole block's
    outputs at once); other steps (a stretch's partial first or last step) one by one.
    """

    def __init__(self, stretch: Stretch, watch: Watch, code, ok, G_cur, record: Record,
                 tally: ChunkIntegrals | None = None, extrema: ChunkExtrema | None = None,
                 batch: int = 0):
        self.stretch, self.watch, self.code, self.ok = stretch, watch, code, ok
        self.batch = batch  # samples of the whole batch (chooses the kernel, see kernel.block_steps)
        self.G_cur, self.record, self.tally, self.extrema = G_cur, record, tally, extrema
        self.moments: dict = {}  # (configuration code, step length) → integral operators
        self.phi: dict = {}  # step length → (N, s, s), each sample's configuration

    def run(self, w, g_prev, a: float, stops, lengths, recorded):
        """Step from instant a through stops (each with its length; recorded: (steps,) bool,
        a row goes to the record).  Returns (w, y, g) at the last stop."""
        N, s = w.shape
        p = self.G_cur.shape[1]
        k_max = int(min(MAX_BLOCK, max(1, POWER_TABLE_BYTES // (N * (s + p) * 8))))
        t_prev, i, count = a, 0, stops.size
        y = None
        while i < count:
            h = float(lengths[i])
            run = 1
            if k_max > 1 and recorded[i]:
                same = recorded[i:] & (np.abs(lengths[i:] - h) <= SAME_STEP * h)
                run = same.size if same.all() else int(np.argmin(same))
            if run >= 2:
                h_run = float((stops[i + run - 1] - t_prev) / run)  # no drift over the run
                K = min(k_max, run)
                for first in range(i, i + run, K):
                    ts = stops[first:min(first + K, i + run)]
                    w, y, g_prev = self.block(w, g_prev, t_prev, h_run, ts, K)
                    t_prev = float(ts[-1])
                i += run
            else:
                w, y, g_prev = self.step(w, g_prev, t_prev, h, stops[i] if recorded[i] else None)
                t_prev = float(stops[i])
                i += 1
        return w, y, g_prev

    def refresh(self, idx: np.ndarray) -> None:
        """Samples idx changed configuration: their rows of every held matrix follow."""
        st, code = self.stretch, self.code
        self.G_cur[idx] = st.G(code, idx)
        for h, phi in self.phi.items():
            phi[idx] = st.phi(code, h, idx)

    def count(self, starts, col_code, h: float, sums=None) -> None:
        """Add the integrals of steps of length h from states starts (N, K, s) (or a callable
        giving the rows asked for), each in the configuration col_code (N, K) (−1: a step
        split by a switch, counted where it was split).  sums: (S1, S2), the block's
        Σ w and Σ w wᵀ per sample (:func:`.kernel.block_steps`), used for the samples
        that stayed in one configuration through the block."""
        if self.tally is None:
            return
        present = col_code[col_code >= 0]
        codes = np.flatnonzero(np.bincount(present)) if present.size else present
        plain = np.zeros(col_code.shape[0], dtype=bool)
        if sums is not None:
            plain = (col_code[:, :1] >= 0).ravel() & (col_code == col_code[:, :1]).all(axis=1)
        rest = np.flatnonzero(~plain)
        if rest.size:
            part = starts(rest) if callable(starts) else starts[rest]
        for c in codes:
            key = (int(c), h)
            if key not in self.moments:
                full = np.full(self.code.size, c)
                self.moments[key] = self.tally.operators(self.stretch.M(full), self.stretch.G(full), h)
            rho, P = self.moments[key]
            if sums is not None:
                self.tally.sums(rho, P, sums[0], sums[1], np.flatnonzero(plain & (col_code[:, 0] == c)))
            if rest.size:
                self.tally.steps(rho[rest], P[rest], part, col_code[rest] == c, rest)

    def step(self, w, g_prev, t_prev: float, h: float, t_row):
        """One step of length h for every sample; a row at t_row unless it is None."""
        watch = self.watch
        col_code = self.code.copy()[:, None]
        if h not in self.phi:
            self.phi[h] = self.stretch.phi(self.code, h)
        w_new = matvec(self.phi[h], w)
        y = matvec(self.G_cur, w_new)
        g = watch.values(y, self.code)
        if watch.k:
            turned = (g_prev < 0.0) & (g >= 0.0)
            if turned.any() and (crossed := turned & watch.pending(self.code) & self.ok[:, None]).any():
                idx = np.flatnonzero(crossed.any(axis=1))
                w_e, y_e, g_e = handle_crossings(watch, self.stretch, idx, crossed[idx], self.code,
                                                 w[idx], g[idx], t_prev, h, self.record,
                                                 tally=self.tally, extrema=self.extrema)
                col_code[idx, 0] = -1
                self.refresh(idx)
                w_new[idx], y[idx], g[idx] = w_e, y_e, g_e
        self.count(w[:, None], col_code, h)
        if self.extrema is not None:  # peaks between the rows
            self.extrema.steps(np.stack([w, w_new], axis=1), col_code, h, t_prev)
        if t_row is not None:
            self.record.all(float(t_row), y)
        return w_new, y, g

    def block(self, w, g_prev, t_start: float, h: float, ts, K: int):
        """len(ts) ≤ K recorded steps of length h from t_start, every sample at once.

        States at the block's instants are Φ^j w; a sample whose pending threshold is
        crossed in step j switches there (:func:`handle_crossings`), and its later
        instants are recomputed from the new state in its new configuration.
        """
        watch, code, record = self.watch, self.code, self.record
        Kb = ts.size
        if h not in self.phi:
            self.phi[h] = self.stretch.phi(code, h)
        # (N, Kb, s), (N, p, Kb) and the sums of the start states, one compiled pass
        W, Y, S1, S2 = block_steps(self.phi[h], self.G_cur, w, Kb, sums=self.tally is not None,
                                     batch=self.batch)
        g = watch.values(Y, code)  # (N, k, Kb)
        col_code = np.repeat(code[:, None], Kb, axis=1)  # each step's configuration
        t_before = np.concatenate([[t_start], ts[:-1]])
        if watch.k:
            cols = np.arange(Kb)
            settled = np.full(w.shape[0], -1)  # instants up to here are final, per sample
            c0 = record.common
            while True:
                prev = np.concatenate([g_prev[:, :, None], g[:, :, :-1]], axis=2)
                turned = (prev < 0.0) & (g >= 0.0)
                if not turned.any():
                    break
                turned &= (watch.pending(code) & self.ok[:, None])[:, :, None]
                turned &= (cols[None, :] > settled[:, None])[:, None, :]
                hit = turned.any(axis=1)  # (N, Kb)
                idx = np.flatnonzero(hit.any(axis=1))
                if idx.size == 0:
                    break
                j = np.argmax(hit[idx], axis=1)  # each sample's first step with a crossing
                w_prev = np.where((j > 0)[:, None], W[idx, np.maximum(j - 1, 0)], w[idx])
                w_e, y_e, g_e = handle_crossings(watch, self.stretch, idx, turned[idx, :, j], code,
                                                 w_prev, g[idx, :, j], t_before[j], h, record, c0 + j,
                                                 tally=self.tally, extrema=self.extrema)
                self.refresh(idx)
                W[idx, j], Y[idx, :, j], g[idx, :, j] = w_e, y_e, g_e
                later = cols[None, :] > j[:, None]  # (R, Kb): instants after the switch
                col_code[idx] = np.where(later, code[idx, None], col_code[idx])
                col_code[idx, j] = -1
                if later.any():
                    tail = block_steps(self.phi[h][idx], self.G_cur[idx], w_e, Kb - 1, sums=False,
                                       batch=self.batch)[0]
                    back = np.clip(cols[None, :] - j[:, None] - 1, 0, None)
                    W_idx = np.where(later[:, :, None], np.take_along_axis(tail, back[:, :, None], axis=1), W[idx])
                    W[idx] = W_idx
                    Y_new = self.G_cur[idx] @ np.swapaxes(W_idx, 1, 2)
                    Y[idx] = np.where(later[:, None, :], Y_new, Y[idx])
                    g[idx] = watch.values(Y[idx], code[idx], idx)
                settled[idx] = j
        self.count(lambda r: np.concatenate([w[r, None], W[r, :-1]], axis=1), col_code, h,
                   sums=None if S1 is None else (S1, S2))
        if self.extrema is not None:  # peaks between the rows
            self.extrema.steps(np.concatenate([w[:, None], W], axis=1), col_code, h, t_before)
        record.columns(np.asarray(ts, dtype=float), Y)
        return W[:, -1], Y[:, :, -1], g[:, :, -1]

