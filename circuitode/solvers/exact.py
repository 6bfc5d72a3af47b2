"""Exact discretisation of a linear time-invariant segment by the matrix exponential.

The inputs on the segment are written as the output of their own linear
generator, ``u = H z``, ``z' = F z`` (piecewise-constant, piecewise-linear,
sine and exponential sources all have one).  Appending ``z`` to the state gives
an autonomous system ``w' = M w`` with

    M = [[A, B H],
         [0,  F ]],      w = [x; z],

whose solution is ``w(t + h) = expm(M h) w(t)`` exactly.  (Block-triangular
augmentation for forced linear systems: Van Loan, "Computing integrals
involving the matrix exponential", IEEE Trans. Automatic Control, 1978 — cited
from memory; scipy.linalg.expm is a Padé scaling-and-squaring.)  One
exponential is computed per distinct interval length, so a uniform output grid
costs one ``expm`` per segment, and a configuration that recurs with the same
step (periodic switching) none.

Events are detected by a sign change of g between consecutive check points
(the output times, each interval split equally so that no part exceeds a
quarter period of the fastest oscillation of M) and located by Brent's method
on the exact propagation from the last check point, then polished by Newton
steps on the same propagation (g′ = c·(M w)), so the instant is the crossing
to rounding rather than to ``event_tol``: a fast mode (ns) moves the state
by its slope × ``event_tol`` otherwise, and the batch engine, which locates by
Newton, would differ from the single run by that much.
"""
from __future__ import annotations

import numpy as np
from scipy.linalg import expm

from ..errors import IntegrationError
from .base import Integrator, SegmentResult, event_values, first_crossing, generator_matrices
from .roots import brent_root
from .integrals import exact_output_integrals

__all__ = ["Exact", "augmented_matrix", "MAX_CHECK_POINTS"]

#: Cap on the check points used to look for event crossings in one segment.
MAX_CHECK_POINTS = 100_000
#: Steps propagated between looks for an event crossing (so a run stops soon after one).
_BLOCK = 256
#: Step exponentials remembered per integrator (oldest dropped first), and their memory cap.
_CACHE_SIZE = 64
_CACHE_BYTES = 32_000_000


def augmented_matrix(A: np.ndarray, B: np.ndarray, F: np.ndarray, H: np.ndarray) -> np.ndarray:
    """M = [[A, B H], [0, F]], shape (n + q, n + q)."""
    n, q = A.shape[0], F.shape[0]
    M = np.zeros((n + q, n + q))
    M[:n, :n] = A
    if q:
        M[:n, n:] = B @ H
        M[n:, n:] = F
    return M


class Exact(Integrator):
    """Matrix-exponential propagation; exact at every output time up to rounding."""

    name = "exact"
    exact = True
    integrates_outputs = True

    def _solve_segment(self, segment, t_out, events, integrals=None):
        n, m = segment.n_states, segment.n_inputs
        t0, t1 = segment.t0, segment.t1
        if m:
            gen = segment.inputs.generators(t0, t1)
            if gen is None:
                raise IntegrationError(
                    "these inputs have no exact linear generator; use method radau or rk45"
                )
            F, z0, H = generator_matrices(gen, m)
        else:
            F, z0, H = np.zeros((0, 0)), np.zeros(0), np.zeros((0, 0))
        M = augmented_matrix(segment.A, segment.B, F, H)
        w0 = np.concatenate([segment.x0, z0])

        grid = np.unique(np.concatenate([[t0], t_out, [t1]]))
        if events:
            grid = self._refine(grid, M)
        steps, which, computed = self._step_matrices(M, grid, t1 - t0)
        counters = {"steps": 0, "expm_calls": computed}
        w = np.empty((grid.size, M.shape[0]))
        w[0] = w0
        event_time = event_index = None
        done = 0  # rows of w filled beyond the first
        while done < grid.size - 1:
            stop = min(done + _BLOCK, grid.size - 1)
            for k in range(done, stop):
                w[k + 1] = steps[which[k]] @ w[k]
            counters["steps"] += stop - done
            hit = None
            if events:  # rows done … stop, overlapping the previous block by one row
                rows = w[done:stop + 1]
                hit = first_crossing(events, event_values(events, rows[:, :n], rows[:, n:] @ H.T))
            if hit is not None:
                k, first = done + hit[0], hit[1]
                g_start = event_values(events, w[k:k + 1, :n], w[k:k + 1, n:] @ H.T)[0]
                s_, event_index, w_end, calls = self._locate(
                    M, w[k], g_start, grid[k + 1] - grid[k], events, n, H, first)
                counters["expm_calls"] += calls
                event_time = grid[k] + s_
                break
            done = stop
        else:
            w_end = w[-1]
        idx = np.searchsorted(grid, t_out)
        if event_time is not None:
            keep = t_out < event_time
            idx, t_out = idx[keep], t_out[keep]
        found = None
        if integrals is not None:  # ∫ y and ∫ y_a y_b from t0 to where the segment ended
            reach = (event_time if event_time is not None else t1) - t0
            found = exact_output_integrals(integrals, M, w0, reach, H)
        return SegmentResult(t_out.copy(), w[idx, :n], event_time, event_index, w_end[:n].copy(),
                             counters, found)

    def _step_matrices(self, M, grid, span):
        """(expm(M h) for each distinct interval length h (k, d, d), index of each interval's
        matrix).  Exponentials are remembered per (M, h) for the life of this integrator, so
        a configuration that recurs (periodic switching) reuses them; returns also how many
        were newly computed."""
        dt = np.diff(grid)
        key = np.round(dt / span * 1e15)
        lengths, which = np.unique(key, return_inverse=True)
        steps = np.empty((lengths.size, M.shape[0], M.shape[0]))
        cache = self.__dict__.setdefault("_expm_cache", {})
        fingerprint = (M.shape, M.tobytes())  # exact match, not merely equal hashes
        room = min(_CACHE_SIZE, max(4, _CACHE_BYTES // max(M.nbytes, 1)))
        computed = 0
        for j in range(lengths.size):
            h = float(np.mean(dt[which == j]))
            entry = (fingerprint, h)
            if entry not in cache:
                if len(cache) >= room:
                    cache.pop(next(iter(cache)))
                cache[entry] = expm(M * h)
                computed += 1
            steps[j] = cache[entry]
        return steps, which, computed

    def _refine(self, grid, M):
        """Split each interval of ``grid`` into equal parts no longer than a quarter period
        of the fastest oscillation of M, so no crossing hides between check points.
        Equal parts keep a uniform grid uniform (one exponential still serves)."""
        if M.shape[0] == 0:
            return grid
        known = self.__dict__.setdefault("_omega_cache", {})
        fingerprint = (M.shape, M.tobytes())
        if fingerprint not in known:
            if len(known) >= _CACHE_SIZE:
                known.pop(next(iter(known)))
            known[fingerprint] = float(np.max(np.abs(np.linalg.eigvals(M).imag)))
        omega = known[fingerprint]
        if omega == 0.0:
            return grid
        gaps = np.diff(grid)
        spacing = max(np.pi / (2 * omega), (grid[-1] - grid[0]) / MAX_CHECK_POINTS)
        counts = np.maximum(np.ceil(gaps / spacing - 1e-9), 1).astype(int)
        if np.all(counts == 1):
            return grid
        first = np.repeat(np.cumsum(counts) - counts, counts)
        part = (np.arange(counts.sum()) - first) / np.repeat(counts, counts)
        fine = np.repeat(grid[:-1], counts) + np.repeat(gaps, counts) * part
        return np.append(fine, grid[-1])

    def _locate(self, M, w_start, g_start, h, events, n, H, first):
        """Earliest crossing within one interval by Brent's method on expm(M s) w_start."""
        calls = 0

        def state(s):
            nonlocal calls
            calls += 1
            return expm(M * s) @ w_start

        best = None
        for j, event in enumerate(events):
            def g(s, event=event):
                ws = state(s)
                return float(event.value(ws[:n], ws[n:] @ H.T)[0])

            end = g(h)
            if event.met(np.array([g_start[j]]))[0] or not event.met(np.array([end]))[0]:
                continue
            s = brent_root(g, 0.0, h, xtol=self.event_tol, rtol=4 * np.finfo(float).eps)
            rate = lambda s_, event=event: _rate(event, M, state(s_), n, H)
            s = _newton_polish(g, rate, s, h)
            if event.located_at is not None:  # back from the detection band to the limit
                s = _back_to(lambda s_, g=g, event=event: g(s_) + event.level - event.located_at,
                             rate, s)
            if best is None or s < best[0]:
                best = (s, j)
        if best is None:  # re-evaluation rounded the crossing away: take the interval's end
            best = (h, first)
        s, j = best
        return s, j, state(s), calls


def _rate(event, M: np.ndarray, ws: np.ndarray, n: int, H: np.ndarray) -> float:
    """dg/ds of a linear event at the augmented state ws (its level drops out)."""
    dw = M @ ws
    return float(dw[:n] @ event.c + ((dw[n:] @ H.T) @ event.d if event.d.size else 0.0))


def _newton_polish(g, rate, s: float, h: float, steps: int = 2) -> float:
    """Up to ``steps`` Newton steps from Brent's s (s) inside [0, h]; s itself when a step
    would leave the interval or the slope vanishes."""
    for _ in range(steps):
        slope = rate(s)
        if slope == 0.0 or not np.isfinite(slope):
            return s
        nxt = s - g(s) / slope
        if not 0.0 <= nxt <= h or nxt == s:
            return s
        s = nxt
    return s


def _back_to(g0, rate, s: float, steps: int = 3) -> float:
    """Newton steps from s (s) toward the root of g0 at or before it, kept in [0, s]."""
    top = s
    for _ in range(steps):
        slope = rate(s)
        if slope == 0.0 or not np.isfinite(slope):
            return s
        nxt = min(max(s - g0(s) / slope, 0.0), top)
        if nxt == s:
            return s
        s = nxt
    return s
