"""Peaks and minima located between output rows, from the solution itself.

The rows of a run are samples; the largest value of a waveform usually falls
between two of them.  Every positive-length interval between consecutive rows
lies inside one linear segment (switch instants and source corners are rows),
so from the row's state the exact solution on the interval is

    w(s) = e^{Ms} w_i,   M = [[A, B H], [0, F]],   w_i = [x_i; z_i],   y(s) = g·w(s)

(the segment's inputs written by their generator, as the exact integrator
does).  An extremum inside the interval is a root of dy/ds = g·M e^{Ms} w_i,
found by Brent's method to the run's event tolerance; y there is the refined
extremum.  With the exact method the rows' states are exact, so the refined
peak and its instant are exact to the root tolerance whatever the output step;
with another method they inherit that method's state error (not the step's).

Where the output step resolves the fastest oscillation the recorded quantities see
(with their sources' own: h·ω ≤ π/4, at least 8 rows per period 2π/ω, ω = |Im λ|), the
intervals around the largest discrete local extrema of the rows are searched
(:data:`CANDIDATES` per quantity and direction).  Where it does not, a whole swing
may begin and end between two rows, so every interval of such a stretch is searched
at :data:`PER_PERIOD` sub-points per period 2π/ω (ω the largest |Im λ| of the
stretch's augmented matrix that a recorded quantity sees, :mod:`circuitode.solvers.visibility`),
evaluated for all intervals at once through the stacked exponentials e^{M s_j}; each
sign change of the slope between sub-points is a bracket, and the brackets with the
largest values (:data:`CANDIDATES`) are refined as above.  The sub-points per
quantity are capped (:data:`MAX_SUBPOINTS`, :data:`MAX_PER_INTERVAL`, :data:`MAX_WORK`);
``Extremum.capped`` says when the cap thinned them below :data:`PER_PERIOD`.  Modes that
do not ring (real λ) need no sub-points: the slope of a sum of two decaying
exponentials and a constant changes sign at most once, which the rows' slope test sees;
two sign changes inside one interval from three or more real modes are not looked for.
"""
from __future__ import annotations

from typing import Sequence

import numpy as np
from scipy.linalg import expm
from ..solvers.roots import brent_root

from ..solvers.base import generator_matrices
from ..solvers.exact import augmented_matrix
from ..solvers.visibility import fastest_seen_ringing

__all__ = ["CANDIDATES", "PER_PERIOD", "MAX_SUBPOINTS", "MAX_PER_INTERVAL", "MAX_WORK", "MAX_SEARCH_STATES", "Extremum", "BetweenRows",
           "refine_extrema"]

#: Discrete local maxima (and minima) of the rows refined per quantity.
CANDIDATES = 6
#: Sub-points per period 2π/|Im λ| of the fastest seen ringing where the rows are coarser.
PER_PERIOD = 8
#: Caps of the sub-point search: points per interval, and points per quantity and stretch.
MAX_PER_INTERVAL = 1024
MAX_SUBPOINTS = 2_000_000
#: Cap of the multiply-adds of the sub-point search of a run (P·intervals·s² for s states).
MAX_WORK = 2e9
#: Above this many states (with the sources' generator) a stretch is not searched at
#: sub-points (its eigenvalues and each refinement would cost seconds); ``capped`` says so.
MAX_SEARCH_STATES = 64


class Extremum:
    """Refined maximum and minimum of one quantity: values (signal unit) and instants (s).

    capped : True when the sub-point search of a stretch the rows do not resolve was thinned
    below PER_PERIOD points per period by its caps (a shorter swing may be missed).
    searched : True when intervals were searched at sub-points.
    """

    __slots__ = ("maximum", "t_maximum", "minimum", "t_minimum", "capped", "searched")

    def __init__(self, maximum: float, t_maximum: float, minimum: float, t_minimum: float,
                 capped: bool = False, searched: bool = False):
        self.maximum, self.t_maximum = float(maximum), float(t_maximum)
        self.minimum, self.t_minimum = float(minimum), float(t_minimum)
        self.capped, self.searched = bool(capped), bool(searched)

    def peak(self) -> tuple[float, float]:
        """(largest |y|, its instant); the earlier one when max and −min tie."""
        if abs(self.minimum) > abs(self.maximum) or (
                abs(self.minimum) == abs(self.maximum) and self.t_minimum < self.t_maximum):
            return abs(self.minimum), self.t_minimum
        return abs(self.maximum), self.t_maximum


def _solution(M: np.ndarray, w: np.ndarray, g: np.ndarray):
    """(y(s), dy/ds(s)) for y = g·e^{Ms} w: by the eigenvectors of M when they are well
    conditioned (a sum of exponentials, cheap to evaluate many times), else by expm."""
    if M.shape[0]:
        lam, V = np.linalg.eig(M)
        if np.linalg.cond(V) < 1e4:
            coef = (g @ V) * np.linalg.solve(V, w)

            def value(s):
                return float(np.real(np.sum(coef * np.exp(lam * s))))

            def slope(s):
                return float(np.real(np.sum(coef * lam * np.exp(lam * s))))

            return value, slope
    gM = g @ M

    def value(s):
        return float(g @ (expm(M * s) @ w))

    def slope(s):
        return float(gM @ (expm(M * s) @ w))

    return value, slope


def _candidates(y: np.ndarray) -> np.ndarray:
    """Rows (indices) of the largest discrete local maxima of y (a row no lower than
    its neighbours); at most CANDIDATES, largest first."""
    left = np.concatenate([[-np.inf], y[:-1]])
    right = np.concatenate([y[1:], [-np.inf]])
    local = np.flatnonzero((y >= left) & (y >= right))
    order = np.argsort(-y[local], kind="stable")
    return local[order[:CANDIDATES]]


class BetweenRows:
    """Values of linear recorded quantities at any instant of the window, from the row
    before it by the exact propagation of its segment (see the module docstring).

    t : (nt,) s.  states : (nt, n).  configs : (nt,) StateSpace in force after each row.
    rows : label → output row of C, D.  bank : the sources.
    """

    def __init__(self, t, states, configs, rows: dict[str, int], bank):
        self.t, self.states, self.configs, self.rows, self.bank = t, states, configs, rows, bank
        self._systems: dict = {}

    def knows(self, label: str) -> bool:
        return label in self.rows

    def function(self, label: str, i: int):
        """y(τ) of ``label`` for t[i] ≤ t[i] + τ ≤ t[i + 1] (τ in s), or None when the interval
        is empty or its inputs have no linear generator."""
        t = self.t
        if i < 0 or i >= t.size - 1 or not t[i + 1] > t[i]:
            return None
        if i not in self._systems:
            self._systems[i] = _interval_system(self.configs[i], self.bank, float(t[i]), float(t[i + 1]))
        found = self._systems[i]
        if found is None:
            return None
        M, z0, G = found
        value, _ = _solution(M, np.concatenate([self.states[i], z0]), G[self.rows[label]])
        return value


def _interval_system(ss, bank, t0: float, t1: float):
    """(M, z0, G) of the configuration ss on [t0, t1] (no breakpoint inside), or None."""
    if bank.m:
        gen = bank.generators(t0, t1)
        if gen is None:
            return None
        F, z0, H = generator_matrices(gen, bank.m)
    else:
        F, z0, H = np.zeros((0, 0)), np.zeros(0), np.zeros((0, 0))
    M = augmented_matrix(ss.A, ss.B, F, H)
    G = np.concatenate([ss.C, ss.D @ H if H.size else np.zeros((ss.C.shape[0], F.shape[0]))], axis=1)
    return M, z0, G


def _stretches(t: np.ndarray, configs: Sequence, bank) -> list[tuple[int, int]]:
    """(i0, i1): runs of intervals i0 … i1 − 1 of positive length in one configuration with no
    source breakpoint inside (a row on a breakpoint starts a new run)."""
    gaps = np.diff(t)
    if gaps.size == 0:
        return []
    slack = 1e-12 * max(float(t[-1] - t[0]), np.finfo(float).tiny)
    bps = bank.breakpoints(float(t[0]), float(t[-1])) if bank.m and t[-1] > t[0] else np.zeros(0)
    before = np.searchsorted(bps, t + slack, side="right")  # breakpoints at or before each row
    within = np.searchsorted(bps, t[1:] - slack, side="right") > before[:-1]
    ok = (gaps > 0) & ~within
    ids = np.fromiter((id(c) for c in configs[:-1]), dtype=np.int64, count=gaps.size)
    new = np.ones(gaps.size, dtype=bool)
    new[1:] = (ids[1:] != ids[:-1]) | (before[1:-1] != before[:-2]) | ~ok[:-1]
    new |= ~ok  # an empty interval, or one a breakpoint splits, is a run of its own (never searched)
    run = np.cumsum(new)
    first = np.flatnonzero(new & ok)
    last = np.searchsorted(run, run[first], side="right")
    return list(zip(first.tolist(), last.tolist()))


def _generator_states(F: np.ndarray, z0: np.ndarray, tau: np.ndarray) -> np.ndarray:
    """(k, q): e^{F τ_k} z0 for every τ (s): by the eigenvectors of F when they are well
    conditioned (constants, sines, exponentials), else by stacked expm (polynomials)."""
    lam, V = np.linalg.eig(F)
    if np.linalg.cond(V) < 1e4:
        c = np.linalg.solve(V, z0)
        return np.real((np.exp(tau[:, None] * lam[None, :]) * c) @ V.T)
    return (expm(F[None] * tau[:, None, None]) @ z0[:, None])[:, :, 0]


def _swing_brackets(t, states, configs, signals, bank):
    """Brackets of slope sign changes found at sub-points inside intervals the rows do not
    resolve (module docstring).  Returns label → ({+1: [...], −1: [...]}, capped, searched),
    each bracket (score = largest sign·y at its ends, M, w_i, g, t_i, s_lo, s_hi)."""
    labels = list(signals)
    rows = np.array([signals[label][0] for label in labels], dtype=int)
    out = {label: ({1.0: [], -1.0: []}, False, False) for label in labels}
    runs = _stretches(t, configs, bank)
    if not labels or not runs:
        return out
    gaps = np.diff(t)
    total = sum(b - a for a, b in runs)
    per_interval = max(1, MAX_SUBPOINTS // (len(labels) * total))
    capped = searched = False
    found = {label: {1.0: [], -1.0: []} for label in labels}
    for i0, i1 in runs:
        system = _interval_system(configs[i0], bank, float(t[i0]), float(t[i1]))
        if system is None:
            continue
        M, z0, G = system
        if M.shape[0] > MAX_SEARCH_STATES:  # not searched: said as a cap
            capped = True
            continue
        g = G[rows]
        rate = fastest_seen_ringing(M, g)  # rad/s of the fastest seen oscillation
        h_max = float(np.max(gaps[i0:i1]))
        wanted = int(np.ceil(PER_PERIOD * h_max * rate / (2 * np.pi)))
        if wanted <= 1:  # the rows resolve every mode seen here
            continue
        size = M.shape[0]
        P = max(1, min(wanted, MAX_PER_INTERVAL, per_interval, int(MAX_WORK // (size * size * total))))
        capped |= P < wanted
        searched = True
        n = states.shape[1]
        if z0.size:  # the generator's state at each row: z(t_i) = e^{F (t_i − t_i0)} z0
            W = np.concatenate([states[i0:i1], _generator_states(M[n:, n:], z0, t[i0:i1] - t[i0])], axis=1)
        else:
            W = states[i0:i1]
        h = gaps[i0:i1]
        key = np.round(h / h_max, 9)  # equal steps share their sub-point exponentials
        for k in np.unique(key):
            idx = np.flatnonzero(key == k)
            hk = float(np.max(h[idx]))
            E1, gM = expm(M * (hk / P)), g @ M
            Y = np.empty((rows.size, idx.size, P + 1))  # (labels, intervals, sub-points)
            D = np.empty_like(Y)
            Wj = W[idx].T  # (s, intervals): the states at sub-point j of every interval
            for j in range(P + 1):  # over the sub-points; the intervals at once
                Y[:, :, j], D[:, :, j] = g @ Wj, gM @ Wj
                Wj = E1 @ Wj
            for sign in (1.0, -1.0):
                inside = (sign * D[:, :, :-1] > 0) & (sign * D[:, :, 1:] < 0)
                score = np.where(inside, np.maximum(sign * Y[:, :, :-1], sign * Y[:, :, 1:]), -np.inf)
                for r, label in enumerate(labels):
                    flat = score[r].ravel()
                    top = np.argsort(-flat, kind="stable")[:CANDIDATES]
                    for f in top[np.isfinite(flat[top])]:
                        i, j = divmod(int(f), P)
                        hi = min((j + 1) * hk / P, float(h[idx[i]]))
                        found[label][sign].append((float(flat[f]), M, W[idx[i]], G[rows[r]],
                                                   float(t[i0 + idx[i]]), j * hk / P, hi))
    return {label: (found[label], capped, searched) for label in labels}


def refine_extrema(t: np.ndarray, states: np.ndarray, configs: Sequence,
                   signals: dict[str, tuple[int, np.ndarray]], bank, xtol: float) -> dict[str, Extremum]:
    """Refined extrema of linear recorded quantities.

    Parameters
    ----------
    t : (nt,) s, the rows' instants (an instant may repeat).  states : (nt, n).
    configs : (nt,) per row, the StateSpace (A, B, C, D) in force just after the row's instant.
    signals : label → (output row j of C, D; the recorded values (nt,)).
    bank : the sources (``generators(t0, t1)``, ``m``, ``breakpoints(t0, t1)``).
    xtol : s, root tolerance for the instants.

    Returns
    -------
    label → :class:`Extremum`.
    """
    nt = t.size
    gaps = np.diff(t)
    out = {}
    cache: dict = {}
    swings = _swing_brackets(t, states, configs, signals, bank)
    eps4 = 4 * np.finfo(float).eps

    def system(i):
        """(M, w_i, G) for the interval from row i to row i + 1."""
        key = (id(configs[i]), float(t[i]), float(t[i + 1]))
        if key not in cache:  # None: inputs without a linear generator, keep the rows' value
            cache[key] = _interval_system(configs[i], bank, float(t[i]), float(t[i + 1]))
        if cache[key] is None:
            return None
        M, z0, G = cache[key]
        return M, np.concatenate([states[i], z0]), G

    for label, (j, y) in signals.items():
        best = {}
        brackets, capped, searched = swings[label]
        for sign in (1.0, -1.0):
            k0 = int(np.argmax(sign * y))
            value, when = float(y[k0]), float(t[k0])
            for k in _candidates(sign * y):
                for i in (k - 1, k):  # the intervals either side of the row
                    if i < 0 or i >= nt - 1 or gaps[i] <= 0:
                        continue
                    found_system = system(i)
                    if found_system is None:
                        continue
                    M, w, G = found_system
                    value_at, slope_at = _solution(M, w, G[j])
                    h = float(gaps[i])
                    if not (sign * slope_at(0.0) > 0 > sign * slope_at(h)):
                        continue
                    s = brent_root(slope_at, 0.0, h, xtol=xtol, rtol=eps4)
                    found = value_at(s)
                    if sign * found > sign * value:
                        value, when = found, float(t[i]) + s
            # swings between rows: the brackets with the largest values, from the sub-points
            for _, M, w, g, t_i, lo, hi in sorted(brackets[sign], key=lambda b: -b[0])[:CANDIDATES]:
                value_at, slope_at = _solution(M, w, g)
                if not (sign * slope_at(lo) > 0 > sign * slope_at(hi)):
                    continue
                s = brent_root(slope_at, lo, hi, xtol=xtol, rtol=eps4)
                found = value_at(s)
                if sign * found > sign * value:
                    value, when = found, t_i + s
            best[sign] = (value, when)  # value is y itself (sign only chose the direction)
        out[label] = Extremum(best[1.0][0], best[1.0][1], best[-1.0][0], best[-1.0][1], capped, searched)
    return out
