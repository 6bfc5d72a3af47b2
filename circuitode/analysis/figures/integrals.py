"""Figures over time: trapezoidal integrals over a window (mean, rms, I²t, energy) and the steepest slope.

A repeated instant (an event recorded twice) is an interval of zero length: it adds
nothing to an integral and is skipped by the slope.  Inputs and outputs follow
:mod:`circuitode.analysis.figures`.
"""
from __future__ import annotations

import numpy as np

from ._common import _checked, _integral

__all__ = ["mean", "rms", "i2t", "energy", "max_slope"]


def mean(t, y, *, start=None, end=None) -> np.ndarray:
    """Time-average (signal unit) over [start, end] s (default: the whole run), trapezoidal.

    ``start`` and ``end`` are instants in s, scalars or one per signal."""
    t, y = _checked(t, y)
    total, length = _integral(t, y, start, end)
    return total / length


def rms(t, y, *, start=None, end=None) -> np.ndarray:
    """Root-mean-square (signal unit) over [start, end] s, √(∫y² dt / T), trapezoidal on y².

    For a periodic signal choose a window of whole periods."""
    t, y = _checked(t, y)
    total, length = _integral(t, y, start, end, square=True)
    return np.sqrt(total / length)


def i2t(t, y, *, start=None, end=None) -> np.ndarray:
    """Joule integral ∫ y² dt over [start, end] s (A²s for a current), trapezoidal on y²."""
    t, y = _checked(t, y)
    return _integral(t, y, start, end, square=True)[0]


def energy(t, y, *, start=None, end=None) -> np.ndarray:
    """Energy ∫ p dt (J) of a power signal ``y`` in W over [start, end] s, trapezoidal."""
    t, y = _checked(t, y)
    return _integral(t, y, start, end)[0]



def max_slope(t, y) -> np.ndarray:
    """Largest |dy/dt| between successive samples (signal unit per s); intervals of
    zero length (an event instant recorded twice) are skipped."""
    t, y = _checked(t, y)
    dt = np.diff(t, axis=-1)
    positive = dt > 0
    slopes = np.where(positive, np.abs(np.diff(y, axis=-1)) / np.where(positive, dt, 1.0), 0.0)
    return np.max(slopes, axis=-1)
