"""Peaks and minima of a chunk located between output rows, per sample, as the engine steps.

The batched counterpart of :mod:`circuitode.transient.extrema`.  Every step the
engine takes lies inside one linear stretch, in one configuration per sample, so
from the state at its start the exact solution on the step is

    w(s) = e^{Ms} w_0,   y(s) = g·w(s),   dy/ds = g M e^{Ms} w_0     (0 ≤ s ≤ h)

(``M`` the stretch's augmented matrix, inputs written by their generator).  A
maximum lies inside the step when dy/ds > 0 at its start and < 0 at its end
(a minimum: the reverse).  While stepping, :class:`ChunkExtrema` keeps, per
sample, recorded quantity and direction, the step of the stretch with such a
sign change whose end rows are largest (all samples at once, from the block's
states); at the end of each stretch it locates the root of dy/ds in those steps
by a safeguarded Newton iteration on stacked matrix exponentials (bisection
whenever Newton would leave the bracket), all candidates together, and keeps the
largest value found.  With the exact method the states are exact, so the peak and
its instant are exact to rounding whatever the output step; with rk4 they inherit
the method's state error, as in the single run.

Where the step is longer than an eighth of the period 2π/ω of the fastest ringing the
recorded rows see (ω the largest seen |Im λ| of the stretch's augmented matrices over
the samples, :data:`circuitode.solvers.visibility.SEEN`), a whole swing
may begin and end inside one step: each step is then searched at :data:`PER_PERIOD`
sub-points per period (e^{M s_j} stacked over samples once per configuration and step
length, applied to every step's start state at once), and the best sub-interval with a
sign change of the slope is the candidate (as the single run,
:mod:`circuitode.transient.extrema`).  The sub-points are capped
(:data:`MAX_PER_STEP`, :data:`SUB_BYTES`); ``ChunkExtrema.capped`` says when.

Only the best candidate step per stretch is located, and only when its end rows
reach the best value located so far (a true peak between two rows that both lie
below an earlier located peak is not looked for; the single run looks at the six
largest local maxima of the rows).  A step split by a threshold switch is searched
piece by piece (before and after the switch, :meth:`ChunkExtrema.piece`, told by
:func:`.thresholds.handle_crossings`).  :func:`extremum_figures` combines the
located values with the rows (never below the rows' own extremes).
"""
from __future__ import annotations

from typing import Sequence

import numpy as np

from ..analysis.figures.step import has_step
from ..solvers.visibility import SEEN
from .batchexpm import expm_stack

__all__ = ["ChunkExtrema", "EXTREMUM_FIGURES", "extremum_figures", "hermite_guess", "locate_roots"]

#: Figures read from the located extrema (as :data:`circuitode.analysis.between_rows.EXTREMUM_FIGURES`).
EXTREMUM_FIGURES = ("peak", "time_of_peak", "minimum", "overshoot")

_SIGNS = (1.0, -1.0)
_ITERATIONS = 80
#: A Newton step below this fraction of the interval ends the search (the error after it is
#: of its square, far below rounding).
_STEP_TOL = 1e-12
#: Sub-points per period 2π/|Im λ| of the fastest seen ringing where the steps are coarser.
PER_PERIOD = 8
#: Caps of the sub-point search: sub-points per step, and bytes of the stacked sub-point
#: exponentials of one configuration and step length.
MAX_PER_STEP = 256
SUB_BYTES = 64e6


class ChunkExtrema:
    """Running located maxima and minima of output rows ``rows`` for N samples.

    value : (N, r, 2) the best located sign·y (direction 0: maximum, 1: minimum), −inf
    where none was located.  when : (N, r, 2) s, its instant.
    """

    def __init__(self, N: int, rows: Sequence[int]):
        self.rows = np.asarray(rows, dtype=int)
        shape = (N, self.rows.size, 2)
        self.value = np.full(shape, -np.inf)
        self.when = np.full(shape, np.nan)
        self.stretch = None
        self.capped = False  # the sub-point search was thinned by its caps somewhere

    def begin(self, stretch) -> None:
        """A new stretch (see :class:`.stepping.Stretch`): its candidates start afresh."""
        N, r = self.value.shape[:2]
        self.stretch = stretch
        self.score = np.full((N, r, 2), -np.inf)
        self.code = np.zeros((N, r, 2), dtype=np.int64)
        self.h = np.zeros((N, r, 2))
        self.t0 = np.zeros((N, r, 2))
        self.ends = np.zeros((4, N, r, 2))  # y and dy/ds at the step's two ends (the first guess)
        self.w = None
        self._gm: dict = {}
        self._sub: dict = {}

    def _outputs(self, c: int):
        """[G; G M] (N, 2r, s) of configuration c for every sample: values and slopes."""
        if c not in self._gm:
            full = np.full(self.value.shape[0], c)
            G = self.stretch.G(full)[:, self.rows]
            self._gm[c] = np.concatenate([G, G @ self.stretch.M(full)], axis=1)
        return self._gm[c]

    def steps(self, points: np.ndarray, col_code: np.ndarray, h: float, t_left) -> None:
        """K steps of length h (s) for every sample: states at the K + 1 instants that bound
        them, points (N, K + 1, s) (step k from points[:, k] to points[:, k + 1]), each step's
        configuration col_code (N, K) (−1: split by a switch, not searched), t_left (K,) s the
        steps' starting instants."""
        if self.rows.size == 0 or self.stretch is None:
            return
        N, K, s = points.shape[0], points.shape[1] - 1, points.shape[2]
        if self.w is None:
            self.w = np.zeros(self.value.shape + (s,))
        t_left = np.broadcast_to(np.asarray(t_left, dtype=float), (K,))
        across = np.swapaxes(points, 1, 2)  # (N, s, K + 1)
        codes = np.unique(col_code)
        for c in codes[codes >= 0]:
            use = None if codes.size == 1 else (col_code == c)[:, None, :]  # (N, 1, K)
            sub = self._subpoints(int(c), h)
            if sub is not None:  # the step does not resolve the fastest seen ringing
                self._swings(sub, int(c), h, points, use, t_left)
                continue
            both = self._outputs(int(c)) @ across  # (N, 2r, K + 1): values, slopes at the bounds
            y, d = both[:, :self.rows.size], both[:, self.rows.size:]
            for k, sign in enumerate(_SIGNS):
                inside = (sign * d[:, :, :-1] > 0) & (sign * d[:, :, 1:] < 0)
                if use is not None:
                    inside &= use
                score = np.where(inside, np.maximum(sign * y[:, :, :-1], sign * y[:, :, 1:]), -np.inf)
                j = np.argmax(score, axis=2)  # (N, r)
                best = np.take_along_axis(score, j[:, :, None], axis=2)[:, :, 0]
                better = best > self.score[:, :, k]
                if not better.any():
                    continue
                n, r = np.nonzero(better)
                self.score[n, r, k] = best[n, r]
                self.code[n, r, k] = c
                self.h[n, r, k] = h
                self.t0[n, r, k] = t_left[j[n, r]]
                self.w[n, r, k] = points[n, j[n, r]]
                jj = j[n, r]
                self.ends[:, n, r, k] = (y[n, r, jj], y[n, r, jj + 1], d[n, r, jj], d[n, r, jj + 1])

    def _subpoints(self, c: int, h: float):
        """(P, E (P + 1, N, s, s), [G; G M] E (P + 1, N, 2r, s)) for steps of length h (s) in
        configuration c when h is longer than PER_PERIOD-th of the fastest seen period, else None."""
        key = (c, h)
        if key not in self._sub:
            full = np.full(self.value.shape[0], c)
            M = self.stretch.M(full)
            G = self.stretch.G(full)[:, self.rows]
            rate = float(np.max(_seen_rate(M, G), initial=0.0))
            wanted = int(np.ceil(PER_PERIOD * h * rate / (2 * np.pi)))
            if wanted <= 1:
                self._sub[key] = None
            else:
                N, s = M.shape[0], M.shape[1]
                room = int(SUB_BYTES // (8 * N * s * (s + 2 * self.rows.size))) - 1
                P = max(2, min(wanted, MAX_PER_STEP, room))
                self.capped |= P < wanted
                E = _powers(expm_stack(M * (h / P)), P)  # (P + 1, N, s, s): e^{M j h/P}
                self._sub[key] = (P, E, self._outputs(c)[None] @ E)
        return self._sub[key]

    def _swings(self, sub, c: int, h: float, points: np.ndarray, use, t_left) -> None:
        """Candidates from the sub-points of K steps (see :meth:`steps`): per sample, row and
        direction the sub-interval with a slope sign change whose end values are largest."""
        P, E, GE = sub
        r = self.rows.size
        starts = np.swapaxes(points[:, :-1], 1, 2)  # (N, s, K)
        N, K = starts.shape[0], starts.shape[2]
        best = np.full((N, r, 2), -np.inf)
        at = np.zeros((N, r, 2, 2), dtype=np.int64)  # step k and sub-point j of the best
        ends = np.zeros((4, N, r, 2))
        prev = None
        for j in range(P + 1):  # over the sub-points; samples and steps at once
            both = GE[j] @ starts  # (N, 2r, K)
            y, d = both[:, :r], both[:, r:]
            if prev is not None:
                y0, d0 = prev
                for k, sign in enumerate(_SIGNS):
                    inside = (sign * d0 > 0) & (sign * d < 0)
                    if use is not None:
                        inside &= use
                    score = np.where(inside, np.maximum(sign * y0, sign * y), -np.inf)
                    kk = np.argmax(score, axis=2)  # (N, r)
                    top = np.take_along_axis(score, kk[:, :, None], axis=2)[:, :, 0]
                    n, q = np.nonzero(top > best[:, :, k])
                    best[n, q, k] = top[n, q]
                    at[n, q, k] = np.stack([kk[n, q], np.full(n.size, j - 1)], axis=1)
                    m = kk[n, q]
                    ends[:, n, q, k] = (y0[n, q, m], y[n, q, m], d0[n, q, m], d[n, q, m])
            prev = (y, d)
        n, q, k = np.nonzero(best > self.score)
        if n.size == 0:
            return
        step, j = at[n, q, k, 0], at[n, q, k, 1]
        self.score[n, q, k] = best[n, q, k]
        self.code[n, q, k] = c
        self.h[n, q, k] = h / P
        self.t0[n, q, k] = t_left[step] + j * (h / P)
        self.w[n, q, k] = np.einsum("ist,it->is", E[j, n], points[n, step])
        self.ends[:, n, q, k] = ends[:, n, q, k]

    def piece(self, idx: np.ndarray, codes: np.ndarray, G: np.ndarray, M: np.ndarray, w0: np.ndarray,
              w1: np.ndarray, length: np.ndarray, t0: np.ndarray) -> None:
        """Pieces of a step split by a switch, one per sample idx (each once): configuration
        codes (K,), output and system matrices G (K, p, s), M (K, s, s), states at both ends
        w0, w1 (K, s), lengths (K,) s, starting instants t0 (K,) s.  A piece longer than
        PER_PERIOD-th of its fastest seen period is searched at sub-points (as :meth:`steps`)."""
        if self.rows.size == 0 or self.stretch is None or idx.size == 0:
            return
        if self.w is None:
            self.w = np.zeros(self.value.shape + (w0.shape[1],))
        Gr = G[:, self.rows]
        GM = Gr @ M
        length = np.asarray(length, dtype=float)
        t0 = np.asarray(t0, dtype=float)
        wanted = int(np.ceil(PER_PERIOD * np.max(length * _seen_rate(M, Gr), initial=0.0) / (2 * np.pi)))
        P = max(1, min(wanted, MAX_PER_STEP))
        self.capped |= P < wanted
        W = (_powers(expm_stack(M * (length / P)[:, None, None]), P) @ w0[:, :, None])[..., 0]
        W[0], W[-1] = w0, w1  # states at the sub-points, (P + 1, K, s)
        y, d = np.einsum("krs,jks->jkr", Gr, W), np.einsum("krs,jks->jkr", GM, W)  # (P + 1, K, r)
        for k, sign in enumerate(_SIGNS):
            inside = (sign * d[:-1] > 0) & (sign * d[1:] < 0) & (length > 0)[None, :, None]
            score = np.where(inside, np.maximum(sign * y[:-1], sign * y[1:]), -np.inf)  # (P, K, r)
            jj = np.argmax(score, axis=0)  # (K, r): the best sub-interval of each piece
            score = np.take_along_axis(score, jj[None], axis=0)[0]
            a, r = np.nonzero(score > self.score[idx, :, k])
            n, j = idx[a], jj[a, r]
            self.score[n, r, k] = score[a, r]
            self.code[n, r, k] = codes[a]
            self.h[n, r, k] = length[a] / P
            self.t0[n, r, k] = t0[a] + j * length[a] / P
            self.w[n, r, k] = W[j, a]
            self.ends[:, n, r, k] = (y[j, a, r], y[j + 1, a, r], d[j, a, r], d[j + 1, a, r])

    def finish(self) -> None:
        """Locate the stretch's candidates that may beat the best so far; keep the larger."""
        if self.stretch is None or self.w is None:
            self.stretch = None
            return
        n, j, d = np.nonzero(np.isfinite(self.score) & (self.score >= self.value))
        if n.size:
            M = np.empty((n.size,) + self.w.shape[-1:] * 2)
            G = np.empty((n.size, self.w.shape[-1]))
            for c in np.unique(self.code[n, j, d]):  # one pass per configuration present
                sel = self.code[n, j, d] == c
                full = np.full(self.value.shape[0], c)
                M[sel] = self.stretch.M(full, n[sel])
                G[sel] = self.stretch.G(full, n[sel])[np.arange(sel.sum()), self.rows[j[sel]]]
            sign = np.where(d == 0, 1.0, -1.0)
            y0, y1, d0, d1 = self.ends[:, n, j, d]
            s, y = locate_roots(M, self.w[n, j, d], G, self.h[n, j, d], sign,
                                hermite_guess(y0, y1, d0, d1, self.h[n, j, d]))
            found = sign * y
            better = found > self.value[n, j, d]
            self.value[n[better], j[better], d[better]] = found[better]
            self.when[n[better], j[better], d[better]] = self.t0[n, j, d][better] + s[better]
        self.stretch = None
        self.w = None

    def located(self) -> dict:
        """Output row → (maximum (N,), its instant, minimum (N,), its instant); NaN where
        nothing was located between rows."""
        out = {}
        for j, row in enumerate(self.rows):
            v = np.where(np.isfinite(self.value[:, j]), self.value[:, j], np.nan)
            out[int(row)] = (v[:, 0], self.when[:, j, 0], -v[:, 1], self.when[:, j, 1])
        return out


def _powers(E1: np.ndarray, P: int) -> np.ndarray:
    """(P + 1, K, s, s): E1⁰ … E1ᴾ of stacked E1 (K, s, s), one product each (rounding grows
    as j·eps; the brackets they give are refined on the solution itself)."""
    out = np.empty((P + 1,) + E1.shape)
    out[0] = np.eye(E1.shape[-1])
    for j in range(1, P + 1):  # over the sub-points; samples at once
        out[j] = out[j - 1] @ E1
    return out


def _seen_rate(M: np.ndarray, G: np.ndarray) -> np.ndarray:
    """(K,) rad/s: per matrix the largest |Im λ| of M (K, s, s) whose mode some row of G
    (K, r, s) sees (as :func:`circuitode.solvers.visibility.fastest_seen_ringing`, stacked)."""
    out = np.zeros(M.shape[0])
    if M.shape[0] == 0 or M.shape[1] == 0:
        return out
    good = np.isfinite(M).all(axis=(1, 2)) & np.isfinite(G).all(axis=(1, 2))  # a failed sample: 0
    M, G = M[good], G[good]
    lam, V = np.linalg.eig(M)  # (K, s), (K, s, s)
    scale = np.linalg.norm(G, axis=(1, 2))[:, None] * np.linalg.norm(V, axis=1)
    seen = np.max(np.abs(G @ V), axis=1) > SEEN * np.where(scale > 0, scale, 1.0)
    out[good] = np.max(np.where(seen, np.abs(lam.imag), 0.0), axis=1, initial=0.0)
    return out


def locate_roots(M: np.ndarray, w: np.ndarray, g: np.ndarray, h: np.ndarray, sign: np.ndarray,
                 start: np.ndarray | None = None):
    """Extremum of y(s) = g·e^{Ms} w inside (0, h) where sign·dy/ds changes from + to −.

    M : (R, s, s) 1/s.  w, g : (R, s).  h : (R,) s.  sign : (R,) +1 for a maximum, −1 for a
    minimum.  start : (R,) s, a first guess inside (0, h) (the middle when None).  Returns
    (s* (R,) s, y(s*) (R,)).  Safeguarded Newton on dy/ds with stacked matrix
    exponentials: the bracket shrinks every iteration, a Newton step leaving it (or a
    wrong-signed curvature) is replaced by bisection; stops when the step is below
    :data:`_STEP_TOL` of h.
    """
    R = h.size
    gM = np.einsum("rs,rst->rt", g, M)
    gMM = np.einsum("rs,rst->rt", gM, M)
    lo, hi = np.zeros(R), h.astype(float).copy()
    s = 0.5 * h if start is None else np.where((start > 0) & (start < h), start, 0.5 * h)
    active = np.arange(R)
    tol = _STEP_TOL * np.maximum(h, np.finfo(float).tiny)
    for _ in range(_ITERATIONS):
        if active.size == 0:
            break
        a = active
        v = (expm_stack(M[a] * s[a, None, None]) @ w[a, :, None])[:, :, 0]
        f = sign[a] * np.einsum("rs,rs->r", gM[a], v)
        fp = sign[a] * np.einsum("rs,rs->r", gMM[a], v)
        lo[a] = np.where(f > 0, s[a], lo[a])
        hi[a] = np.where(f < 0, s[a], hi[a])
        with np.errstate(invalid="ignore", divide="ignore"):
            newton = s[a] - f / fp
        bad = ~((newton > lo[a]) & (newton < hi[a]) & (fp < 0))
        nxt = np.where(bad, 0.5 * (lo[a] + hi[a]), newton)
        done = (f == 0) | (np.abs(nxt - s[a]) <= tol[a]) | (hi[a] - lo[a] <= tol[a]) | ~np.isfinite(f)
        s[a] = np.where(f == 0, s[a], nxt)
        active = a[~done]
    y = np.einsum("rs,rs->r", g, (expm_stack(M * s[:, None, None]) @ w[:, :, None])[:, :, 0])
    return s, y


def hermite_guess(y0, y1, d0, d1, h):
    """Where the cubic through values y0, y1 and slopes d0, d1 (per s) at 0 and h has its
    slope's sign change (s, same shape); NaN where the quadratic gives no root in [0, h]."""
    m0, m1 = d0 * h, d1 * h  # slopes per unit of the normalised variable τ = s/h
    a = 6 * y0 + 3 * m0 - 6 * y1 + 3 * m1
    b = -6 * y0 - 4 * m0 + 6 * y1 - 2 * m1
    with np.errstate(invalid="ignore", divide="ignore"):
        root = np.sqrt(b * b - 4 * a * m0)
        # the two roots in the cancellation-free forms; keep the one inside [0, 1]
        q = -0.5 * (b + np.copysign(root, b))
        r1, r2 = q / a, m0 / q
        linear = -m0 / b
        tau = np.where(np.abs(a) <= 1e-14 * (np.abs(b) + np.abs(m0)), linear,
                       np.where((r1 >= 0) & (r1 <= 1), r1, r2))
    return np.where((tau >= 0) & (tau <= 1), tau * h, np.nan)


def extremum_figures(figure: str, t: np.ndarray, y: np.ndarray, located) -> np.ndarray | None:
    """``figure`` of each sample from its rows and its located extrema, or None.

    t : (N, L) s.  y : (N, L).  located : (maximum, t_max, minimum, t_min), each (N,), NaN
    where none was located, or None.  The maximum is the larger of the rows' largest
    value and the located one (the minimum likewise); peak is the larger magnitude of the
    two, the earlier instant on a tie (as the single run); overshoot is beyond the last
    row's level in the step's direction, in % of |y_last − y_first| (IEEE Std 181).
    """
    if located is None or figure not in EXTREMUM_FIGURES:
        return None
    t = np.broadcast_to(np.asarray(t, dtype=float), y.shape)
    N = y.shape[0]
    rows = np.arange(N)
    k_max, k_min = np.argmax(y, axis=1), np.argmin(y, axis=1)
    top, low = y[rows, k_max], y[rows, k_min]
    t_top, t_low = t[rows, k_max], t[rows, k_min]
    lmax, tmax, lmin, tmin = (np.asarray(a, dtype=float) for a in located)
    up = lmax > top  # NaN compares False: the rows' value stays
    top, t_top = np.where(up, lmax, top), np.where(up, tmax, t_top)
    down = lmin < low
    low, t_low = np.where(down, lmin, low), np.where(down, tmin, t_low)
    if figure == "minimum":
        return low
    if figure in ("peak", "time_of_peak"):
        pick_min = (np.abs(low) > np.abs(top)) | ((np.abs(low) == np.abs(top)) & (t_low < t_top))
        if figure == "peak":
            return np.where(pick_min, np.abs(low), np.abs(top))
        return np.where(pick_min, t_low, t_top)
    first, last = y[:, 0], y[:, -1]
    amplitude = last - first
    beyond = np.where(amplitude > 0, top - last, last - low)
    with np.errstate(invalid="ignore", divide="ignore"):
        out = 100.0 * np.maximum(beyond, 0.0) / np.abs(amplitude)
    return np.where(has_step(amplitude, top - low), out, np.nan)  # NaN: no step (figures.step.NO_STEP)
