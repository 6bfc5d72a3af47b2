"""Threshold switches in a batch: each sample acts at its own instant.

After every step the samples whose watched quantity turned from "not met" to
"met" are found together; for those samples the instant is located at once
(bracketed Newton iterations on the exact partial-step propagation, from the
secant guess, to ``tol`` seconds), they switch, and the rest of the step is
completed in their new configuration.  As in the single run, the instant is
recorded twice (just before, just after), a condition already strictly met when
a stretch begins — or the instant another switch acts — acts at once, and each
threshold switch acts at most once.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .stepping import Record, Stretch, matvec

__all__ = ["Watch", "fire_at_start", "handle_crossings", "locate"]


@dataclass
class Watch:
    """The threshold switches of a chunk.

    rules : the k ThresholdRules.  rows : (k,) output row each one watches.
    tol : s, how closely an instant is located.  event_times : (N, k) s, filled in
    as switches act (NaN until then).
    """

    rules: list
    rows: list
    tol: float
    event_times: np.ndarray

    def __post_init__(self):
        self.levels = np.array([r.level for r in self.rules])
        self.signs = np.array([1.0 if r.above else -1.0 for r in self.rules])

    @property
    def k(self) -> int:
        return len(self.rules)

    def values(self, y: np.ndarray) -> np.ndarray:
        """(N, k) signed distance to each threshold from outputs y (N, p): met where ≥ 0."""
        return (y[:, self.rows] - self.levels) * self.signs

    def pending(self, code: np.ndarray) -> np.ndarray:
        """(N, k) True where threshold switch j has not acted yet."""
        return ((code[:, None] >> np.arange(self.k)[None, :]) & 1) == 0


def fire_at_start(watch: Watch, stretch: Stretch, a: float, w, y_now, code, ok, G_cur, record: Record):
    """At instant a, switch every sample whose pending threshold is already strictly met
    (repeatedly, for a cascade); updates code, G_cur and y_now in place and records the
    rows just before and after."""
    if not watch.k:
        return
    while True:
        met = watch.pending(code) & (watch.values(y_now) > 0.0) & ok[:, None]
        idx = np.flatnonzero(met.any(axis=1))
        if idx.size == 0:
            return
        which = np.argmax(met[idx], axis=1)  # the first switch in file order acts first
        record.some(idx, np.full(idx.size, a), y_now[idx])
        code[idx] |= (1 << which)
        watch.event_times[idx, which] = a
        G_cur[idx] = stretch.G(code, idx)
        y_now[idx] = matvec(G_cur[idx], w[idx])
        record.some(idx, np.full(idx.size, a), y_now[idx])


def handle_crossings(watch: Watch, stretch: Stretch, crossed, code, w_prev, w, y_now, g_now,
                     t_prev: float, h: float, G_cur, phi_cur: dict, record: Record) -> None:
    """Locate, switch and finish the step for every sample with a crossing.

    crossed : (N, k) bool.  w_prev : states at t_prev; w, y_now, g_now : at t_prev + h
    in the old configurations — updated in place, as are code, G_cur and the per-sample
    step matrices phi_cur, touching only the rows of the samples that switch.
    """
    idx = np.flatnonzero(crossed.any(axis=1))
    start = np.zeros(idx.size)  # offset of each sub-interval's start from t_prev
    w_start = w_prev[idx]
    remaining = crossed[idx]
    while idx.size:
        M, G = stretch.M(code, idx), G_cur[idx]
        tau, which = locate(watch, stretch, M, G, w_start, start, h, remaining, g_now[idx])
        w_e = matvec(stretch.propagate(M, tau - start), w_start)
        y_before = matvec(G, w_e)
        code[idx] |= (1 << which)
        watch.event_times[idx, which] = t_prev + tau
        G_new = stretch.G(code, idx)
        y_after = matvec(G_new, w_e)
        record.some(idx, t_prev + tau, y_before)
        record.some(idx, t_prev + tau, y_after)
        while True:  # another threshold already strictly met at this instant acts at once
            imm = watch.pending(code[idx]) & (watch.values(y_after) > 0.0)
            r = np.flatnonzero(imm.any(axis=1))
            if r.size == 0:
                break
            sub, wh = idx[r], np.argmax(imm[r], axis=1)
            code[sub] |= (1 << wh)
            watch.event_times[sub, wh] = t_prev + tau[r]
            G_new[r] = stretch.G(code, sub)
            record.some(sub, t_prev + tau[r], y_after[r])
            y_after[r] = matvec(G_new[r], w_e[r])
            record.some(sub, t_prev + tau[r], y_after[r])
        G_cur[idx] = G_new
        for length, phi in phi_cur.items():
            phi[idx] = stretch.phi(code, length, idx)
        w_end = matvec(stretch.propagate(stretch.M(code, idx), h - tau), w_e)
        y_end = matvec(G_new, w_end)
        w[idx], y_now[idx] = w_end, y_end
        g_after, g_end = watch.values(y_after), watch.values(y_end)
        g_now[idx] = g_end
        again = watch.pending(code[idx]) & (g_after < 0.0) & (g_end >= 0.0)
        more = again.any(axis=1) & (tau < h)
        idx, start, w_start, remaining = idx[more], tau[more], w_e[more], again[more]


def locate(watch: Watch, stretch: Stretch, M, G, w_start, start, h, crossed, g_end):
    """Earliest crossing offset τ in (start, h] per row (s), and which switch crossed.

    Bracketed Newton iterations on g(τ) = c·Φ(τ − start) w_start − level from the
    secant guess through g(start) and g_end (signed values at the step's end), falling
    back to bisection whenever a Newton step leaves the bracket.
    """
    K, k = crossed.shape
    best_tau = np.full(K, np.inf)
    best_j = np.zeros(K, dtype=np.int64)
    for j in range(k):
        rows = np.flatnonzero(crossed[:, j])
        if rows.size == 0:
            continue
        c = G[rows][:, watch.rows[j], :]
        Mr, wr, base = M[rows], w_start[rows], start[rows]
        level = watch.levels[j]
        lo, hi = base.copy(), np.full(rows.size, h)
        g_lo = np.einsum("ni,ni->n", c, wr) - level
        sign = np.sign(g_lo)
        g_hi = g_end[rows, j] * watch.signs[j]  # back to watched − level
        with np.errstate(divide="ignore", invalid="ignore"):
            secant = lo + (hi - lo) * g_lo / (g_lo - g_hi)
        tau = np.where(np.isfinite(secant) & (secant > lo) & (secant < hi), secant, 0.5 * (lo + hi))
        active = np.ones(rows.size, dtype=bool)
        for _ in range(200):
            if not active.any():
                break
            a = np.flatnonzero(active)
            ws = matvec(stretch.propagate(Mr[a], tau[a] - base[a]), wr[a])
            g = np.einsum("ni,ni->n", c[a], ws) - level
            dg = np.einsum("ni,ni->n", c[a], matvec(Mr[a], ws))
            same = np.sign(g) == sign[a]
            lo[a] = np.where(same, tau[a], lo[a])
            hi[a] = np.where(same, hi[a], tau[a])
            with np.errstate(divide="ignore", invalid="ignore"):
                newton = tau[a] - g / dg
            inside = np.isfinite(newton) & (newton > lo[a]) & (newton < hi[a])
            nxt = np.where(inside, newton, 0.5 * (lo[a] + hi[a]))
            done = (np.abs(nxt - tau[a]) <= watch.tol) | (hi[a] - lo[a] <= watch.tol) | (g == 0)
            tau[a] = np.where(done & (g == 0), tau[a], nxt)
            active[a[done]] = False
        tau = np.clip(tau, base, h)
        better = tau < best_tau[rows]
        best_tau[rows[better]] = tau[better]
        best_j[rows[better]] = j
    return best_tau, best_j
