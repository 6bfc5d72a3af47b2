"""The trapezoidal rule on ``E w' = A w + B u(t)``, fixed step, one sparse LU per step length.

    (E − h/2 A) w⁺ = E w + h/2 (A w + B u(t)) + h/2 B u(t + h)

on the differential rows; the algebraic rows hold ``0 = A w⁺ + B u(t + h)``.
A-stable and second order (Hairer & Wanner, *Solving ODEs II*, ch. IV.3: its
stability function R(z) = (1 + z/2)/(1 − z/2) has |R| = 1 on the imaginary
axis, so lossless oscillations keep their amplitude — and stiff modes are not
damped, |R(−∞)| = 1: a switching leaves a ringing of alternating sign, which
:mod:`circuitode.solvers.trbdf2` removes).
"""
from __future__ import annotations

import numpy as np

from .descriptor import DescriptorIntegrator

__all__ = ["Trapezoidal"]


class Trapezoidal(DescriptorIntegrator):
    """Trapezoidal rule, fixed step ``step`` (s), for sparse descriptor systems."""

    name = "trapezoidal"
    d = 0.5

    def _input_table(self, segment, nodes, h):
        return segment.input_values(nodes)

    def _advance(self, lu, E, A, B, differential, w, h, U, k):
        solver, explicit = lu
        rows, forcing, diff_rows = U
        dh = 0.5 * h
        rhs = explicit @ w
        if rows.size:
            rhs[rows] += dh * (diff_rows * forcing[k] + forcing[k + 1])
        return solver.solve(rhs)
