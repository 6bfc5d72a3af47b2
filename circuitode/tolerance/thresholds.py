"""Threshold switches in a batch: each sample acts at its own instant.

After every step the samples whose watched quantity turned from "not met" to
"met" are found together; for those samples the instant is located at once
(bracketed Newton iterations on the exact partial-step propagation, from the
secant guess, to ``tol`` seconds), they switch, and the rest of the step is
completed in their new configuration.  As in the single run, the instant is
recorded twice (just before, just after), a condition already strictly met when
a stretch begins — or the instant another switch acts — acts at once, and each
threshold switch acts at most once; one with hysteresis acts each time its
present clause is met (its bit in the code is its state, flipped each time).
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
    #: called as enter(samples, states w = [x; z] (K, s), instants (K,)) after samples switch
    #: (or a settled column crosses): returns the states x (K, n) put on their new
    #: configuration's constraint (failing the impossible ones)
    enter: object = None
    #: (k,) output row of each switch's back clause (a diode watches its current once on);
    #: None: the same row as ``rows``
    back_rows: list | None = None
    #: (k,) bool, True for a column that is settled by ``enter`` rather than flipped (a
    #: diode: :mod:`.diodes` finds the consistent combination); None: none
    settled: np.ndarray | None = None
    #: (N, k) signed margin past each level before a crossing counts (a diode's band);
    #: None: none
    margin: np.ndarray | None = None
    #: (N,) bool, the samples still running (a failed one is switched no more); None: all
    ok: np.ndarray | None = None

    def __post_init__(self):
        self.levels = np.array([r.level for r in self.rules])
        self.signs = np.array([1.0 if r.above else -1.0 for r in self.rules])
        # a switch with hysteresis acts each time: in its moved state it watches its back clause
        self.repeats = np.array([bool(r.repeats) for r in self.rules], dtype=bool)
        self.back_levels = np.array([r.move(r.closes).level for r in self.rules])
        self.back_signs = np.array([1.0 if r.move(r.closes).above else -1.0 for r in self.rules])
        self.back_rows = list(self.rows) if self.back_rows is None else list(self.back_rows)
        self.settled = np.zeros(self.k, dtype=bool) if self.settled is None else np.asarray(self.settled)

    @property
    def k(self) -> int:
        return len(self.rules)

    def moved(self, code: np.ndarray) -> np.ndarray:
        """(N, k) True where threshold switch j is in its moved state (bit j of code)."""
        return ((code[:, None] >> np.arange(self.k)[None, :]) & 1) == 1

    def clause(self, code: np.ndarray, idx: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
        """(levels, signs), each (N, k): the condition each sample's switch j watches now
        (levels moved by the margin of samples idx; all samples when None)."""
        back = self.moved(code) & self.repeats[None, :]
        levels = np.where(back, self.back_levels, self.levels)
        signs = np.where(back, self.back_signs, self.signs)
        if self.margin is not None:
            levels = levels + signs * (self.margin if idx is None else self.margin[idx])
        return levels, signs

    def watched_rows(self, code: np.ndarray) -> np.ndarray:
        """(N, k) output row each sample's switch j watches now."""
        back = self.moved(code) & self.repeats[None, :]
        return np.where(back, np.asarray(self.back_rows, dtype=np.int64)[None, :],
                        np.asarray(self.rows, dtype=np.int64)[None, :])

    def values(self, y: np.ndarray, code: np.ndarray, idx: np.ndarray | None = None) -> np.ndarray:
        """(N, k) signed distance to each watched condition from outputs y (N, p), the
        samples idx (all when None) in states ``code`` (N,): met where ≥ 0; (N, k, K)
        from y (N, p, K)."""
        levels, signs = self.clause(code, idx)
        if self.back_rows != self.rows:
            rows = self.watched_rows(code)
            if y.ndim == 3:
                return (np.take_along_axis(y, rows[:, :, None], axis=1) - levels[:, :, None]) * signs[:, :, None]
            return (np.take_along_axis(y, rows, axis=1) - levels) * signs
        if y.ndim == 3:
            return (y[:, self.rows] - levels[:, :, None]) * signs[:, :, None]
        return (y[:, self.rows] - levels) * signs

    def pending(self, code: np.ndarray) -> np.ndarray:
        """(N, k) True where threshold switch j may still act (always, with hysteresis)."""
        return ~self.moved(code) | self.repeats[None, :]


def fire_at_start(watch: Watch, stretch: Stretch, a: float, w, y_now, code, ok, G_cur, record: Record):
    """At instant a, switch every sample whose pending threshold is already strictly met
    (repeatedly, for a cascade); updates code, G_cur and y_now in place and records the
    rows just before and after."""
    if not watch.k:
        return
    while True:
        met = watch.pending(code) & (watch.values(y_now, code) > 0.0) & ok[:, None] & ~watch.settled[None, :]
        idx = np.flatnonzero(met.any(axis=1))
        if idx.size == 0:
            return
        which = np.argmax(met[idx], axis=1)  # the first switch in file order acts first
        record.some(idx, np.full(idx.size, a), y_now[idx])
        code[idx] ^= (1 << which)  # acts (or, with hysteresis, moves back)
        watch.event_times[idx, which] = a
        if watch.enter is not None:
            n = w.shape[1] - stretch.F.shape[0]
            w[idx, :n] = watch.enter(idx, w[idx], np.full(idx.size, a))
        G_cur[idx] = stretch.G(code, idx)
        y_now[idx] = matvec(G_cur[idx], w[idx])
        record.some(idx, np.full(idx.size, a), y_now[idx])


def handle_crossings(watch: Watch, stretch: Stretch, idx: np.ndarray, crossed: np.ndarray, code,
                     w_prev: np.ndarray, g_end: np.ndarray, t_prev, h: float, record: Record, pos=None,
                     tally=None, extrema=None):
    """Locate, switch and finish one step for the samples idx, each with a crossing in it.

    idx : (K,) samples.  crossed : (K, k) bool, which pending thresholds turned.
    w_prev : (K, s) states at the step's start t_prev (s, scalar or (K,)); g_end : (K, k)
    signed values at its end t_prev + h in the old configurations.  pos : the record's
    common column the step ends on (scalar or (K,); the next one by default).
    Updates code, the event times and the record; returns (w_end, y_end, g_end) of the
    K samples at the step's end in their new configurations.  The caller refreshes any
    per-sample matrices it holds for the samples idx.  tally : a
    :class:`~circuitode.tolerance.batch_integrals.ChunkIntegrals` to which the
    integrals over the pieces of the step (before and after each switch) are added.
    extrema : a :class:`~circuitode.tolerance.batch_extrema.ChunkExtrema` told of the same
    pieces (peaks between rows are searched in them too).
    """
    K = idx.size
    t_prev = np.broadcast_to(np.asarray(t_prev, dtype=float), (K,))
    pos = np.broadcast_to(record.common if pos is None else np.asarray(pos), (K,))
    out_w = np.empty_like(w_prev)
    out_y = None
    g_now = np.array(g_end, dtype=float)
    rows = np.arange(K)  # the rows still being worked on
    start = np.zeros(K)  # offset of each sub-interval's start from t_prev
    w_start = w_prev
    remaining = crossed
    while rows.size:
        sub = idx[rows]
        M, G = stretch.M(code, sub), stretch.G(code, sub)
        tau, which = locate(watch, stretch, M, G, w_start, start, h, remaining, g_now[rows], code[sub], sub)
        w_e = matvec(stretch.propagate(M, tau - start), w_start)
        if tally is not None:  # the piece before the switch, in the old configuration
            tally.fresh(sub, M, G, w_start, tau - start)
        y_before = matvec(G, w_e)
        t_event, at = t_prev[rows] + tau, pos[rows]
        if extrema is not None:  # the piece before the switch, in the old configuration
            extrema.piece(sub, code[sub], G, M, w_start, w_e, tau - start, t_prev[rows] + start)
        flip = ~watch.settled[which]  # a diode is settled by watch.enter, not flipped
        code[sub[flip]] ^= (1 << which[flip])
        watch.event_times[sub, which] = t_event
        if watch.enter is not None:
            n = w_e.shape[1] - stretch.F.shape[0]
            w_e[:, :n] = watch.enter(sub, w_e, t_event)
        G_new = stretch.G(code, sub)
        y_after = matvec(G_new, w_e)
        record.some(sub, t_event, y_before, at)
        record.some(sub, t_event, y_after, at)
        while True:  # another threshold already strictly met at this instant acts at once
            imm = watch.pending(code[sub]) & (watch.values(y_after, code[sub], sub) > 0.0) & ~watch.settled[None, :]
            r = np.flatnonzero(imm.any(axis=1))
            if r.size == 0:
                break
            wh = np.argmax(imm[r], axis=1)
            code[sub[r]] ^= (1 << wh)
            watch.event_times[sub[r], wh] = t_event[r]
            if watch.enter is not None:  # (and the diodes settle again)
                n = w_e.shape[1] - stretch.F.shape[0]
                w_e[r, :n] = watch.enter(sub[r], w_e[r], t_event[r])
            G_new[r] = stretch.G(code, sub[r])
            record.some(sub[r], t_event[r], y_after[r], at[r])
            y_after[r] = matvec(G_new[r], w_e[r])
            record.some(sub[r], t_event[r], y_after[r], at[r])
        M_new = stretch.M(code, sub)
        w_end = matvec(stretch.propagate(M_new, h - tau), w_e)
        y_end = matvec(G_new, w_end)
        if out_y is None:
            out_y = np.empty((K, y_end.shape[1]))
        out_w[rows], out_y[rows] = w_end, y_end
        g_after, g_e = watch.values(y_after, code[sub], sub), watch.values(y_end, code[sub], sub)
        g_now[rows] = g_e
        again = watch.pending(code[sub]) & (g_after < 0.0) & (g_e >= 0.0)
        if watch.ok is not None:
            again &= watch.ok[sub][:, None]
        more = again.any(axis=1) & (tau < h)
        if tally is not None:  # the rest of the step, for the samples that switch no more
            tally.fresh(sub[~more], M_new[~more], G_new[~more], w_e[~more], h - tau[~more])
        if extrema is not None:
            last = ~more
            extrema.piece(sub[last], code[sub[last]], G_new[last], M_new[last], w_e[last], w_end[last],
                          h - tau[last], t_event[last])
        rows, start, w_start, remaining = rows[more], tau[more], w_e[more], again[more]
    return out_w, out_y, g_now


def locate(watch: Watch, stretch: Stretch, M, G, w_start, start, h, crossed, g_end, code, idx=None):
    """Earliest crossing offset τ in (start, h] per row (s), and which switch crossed.

    Bracketed Newton iterations on g(τ) = c·Φ(τ − start) w_start − level from the
    secant guess through g(start) and g_end (signed values at the step's end), falling
    back to bisection whenever a Newton step leaves the bracket.  idx : the samples of
    the rows (for their margins).
    """
    K, k = crossed.shape
    levels, signs = watch.clause(code, idx)  # (K, k): the condition each row watches
    watched = watch.watched_rows(code)  # (K, k)
    best_tau = np.full(K, np.inf)
    best_j = np.zeros(K, dtype=np.int64)
    for j in range(k):
        rows = np.flatnonzero(crossed[:, j])
        if rows.size == 0:
            continue
        c = G[rows, watched[rows, j], :]
        Mr, wr, base = M[rows], w_start[rows], start[rows]
        level = levels[rows, j]
        lo, hi = base.copy(), np.full(rows.size, h)
        g_lo = np.einsum("ni,ni->n", c, wr) - level
        sign = np.sign(g_lo)
        g_hi = g_end[rows, j] * signs[rows, j]  # back to watched − level
        with np.errstate(divide="ignore", invalid="ignore"):
            secant = lo + (hi - lo) * g_lo / (g_lo - g_hi)
        tau = np.where(np.isfinite(secant) & (secant > lo) & (secant < hi), secant, 0.5 * (lo + hi))
        active = np.ones(rows.size, dtype=bool)
        for _ in range(200):
            if not active.any():
                break
            a = np.flatnonzero(active)
            ws = matvec(stretch.propagate(Mr[a], tau[a] - base[a]), wr[a])
            g = np.einsum("ni,ni->n", c[a], ws) - level[a]
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
        if watch.margin is not None and idx is not None:  # detected past the margin, located at
            tau = _back_to_level(watch, stretch, Mr, wr, c, base, tau,  # the level itself
                                 level - signs[rows, j] * watch.margin[idx[rows], j])
        better = tau < best_tau[rows]
        best_tau[rows[better]] = tau[better]
        best_j[rows[better]] = j
    return best_tau, best_j


def _back_to_level(watch: Watch, stretch: Stretch, M, w_start, c, base, tau, raw, steps: int = 3):
    """Newton steps from τ toward the crossing of the unshifted level ``raw`` (K,) at or
    before it, kept in [base, τ] (a diode's event: detected a band past its limit, located
    at the limit, as the single run's exact method)."""
    top = tau.copy()
    for _ in range(steps):
        ws = matvec(stretch.propagate(M, tau - base), w_start)
        g = np.einsum("ni,ni->n", c, ws) - raw
        dg = np.einsum("ni,ni->n", c, matvec(M, ws))
        with np.errstate(divide="ignore", invalid="ignore"):
            nxt = tau - g / dg
        nxt = np.where(np.isfinite(nxt), np.clip(nxt, base, top), tau)
        if np.all(nxt == tau):
            break
        tau = nxt
    return tau
