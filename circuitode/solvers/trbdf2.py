"""TR-BDF2 on ``E w' = A w + B u(t)``: a trapezoidal stage to t + γh, then BDF2 to t + h.

With γ = 2 − √2 both stages use the same matrix ``E − d h A``, d = γ/2 =
(1 − γ)/(2 − γ) (Bank et al., IEEE Trans. Electron Devices 32 (1985); Hosea &
Shampine, Appl. Numer. Math. 20 (1996)):

    (E − d h A) w_γ = E w + d h (A w + B u(t)) + d h B u(t + γh)
    (E − d h A) w⁺  = E [w_γ − (1 − γ)² w] / (γ (2 − γ)) + d h B u(t + h)

Second order, A-stable and L-stable (R(−∞) = 0): the ringing of alternating sign
the trapezoidal rule leaves after a switching is damped in one step.  The
algebraic rows hold ``0 = A w + B u`` at the end of each stage.
"""
from __future__ import annotations

import numpy as np

from .descriptor import DescriptorIntegrator

__all__ = ["TRBDF2", "GAMMA"]

GAMMA = 2.0 - np.sqrt(2.0)


class TRBDF2(DescriptorIntegrator):
    """TR-BDF2, fixed step ``step`` (s), for sparse descriptor systems."""

    name = "trbdf2"
    d = GAMMA / 2.0

    def _input_table(self, segment, nodes, h):
        # rows 2k: u at node k; rows 2k+1: u at node k + γ h_k
        t = np.empty(2 * nodes.size - 1)
        t[0::2] = nodes
        t[1::2] = nodes[:-1] + GAMMA * h
        return segment.input_values(t)

    def _advance(self, lu, E, A, B, differential, w, h, U, k):
        solver, explicit = lu
        rows, forcing, diff_rows = U
        dh = self.d * h
        rhs = explicit @ w
        if rows.size:
            rhs[rows] += dh * (diff_rows * forcing[2 * k] + forcing[2 * k + 1])
        w_gamma = solver.solve(rhs)
        rhs = E @ ((w_gamma - (1.0 - GAMMA) ** 2 * w) / (GAMMA * (2.0 - GAMMA)))
        if rows.size:
            rhs[rows] += dh * forcing[2 * k + 2]
        return solver.solve(rhs)
