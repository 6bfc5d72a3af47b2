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

Only the intervals around the largest discrete local extrema of the rows are
searched (:data:`CANDIDATES` per quantity and direction): a true extremum whose
neighbouring rows are all lower than several other local extrema's rows is not
looked for — an output step of a quarter of the fastest ringing period or finer
rules that out.
"""
from __future__ import annotations

from typing import Sequence

import numpy as np
from scipy.linalg import expm
from ..solvers.roots import brent_root

from ..solvers.base import generator_matrices
from ..solvers.exact import augmented_matrix

__all__ = ["CANDIDATES", "Extremum", "BetweenRows", "refine_extrema"]

#: Discrete local maxima (and minima) of the rows refined per quantity.
CANDIDATES = 6


class Extremum:
    """Refined maximum and minimum of one quantity: values (signal unit) and instants (s)."""

    __slots__ = ("maximum", "t_maximum", "minimum", "t_minimum")

    def __init__(self, maximum: float, t_maximum: float, minimum: float, t_minimum: float):
        self.maximum, self.t_maximum = float(maximum), float(t_maximum)
        self.minimum, self.t_minimum = float(minimum), float(t_minimum)

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


def refine_extrema(t: np.ndarray, states: np.ndarray, configs: Sequence,
                   signals: dict[str, tuple[int, np.ndarray]], bank, xtol: float) -> dict[str, Extremum]:
    """Refined extrema of linear recorded quantities.

    Parameters
    ----------
    t : (nt,) s, the rows' instants (an instant may repeat).  states : (nt, n).
    configs : (nt,) per row, the StateSpace (A, B, C, D) in force just after the row's instant.
    signals : label → (output row j of C, D; the recorded values (nt,)).
    bank : the sources (``generators(t0, t1)``, ``m``).
    xtol : s, root tolerance for the instants.

    Returns
    -------
    label → :class:`Extremum`.
    """
    nt = t.size
    gaps = np.diff(t)
    out = {}
    cache: dict = {}

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
                    s = brent_root(slope_at, 0.0, h, xtol=xtol, rtol=4 * np.finfo(float).eps)
                    found = value_at(s)
                    if sign * found > sign * value:
                        value, when = found, float(t[i]) + s
            best[sign] = (value, when)  # value is y itself (sign only chose the direction)
        out[label] = Extremum(best[1.0][0], best[1.0][1], best[-1.0][0], best[-1.0][1])
    return out
