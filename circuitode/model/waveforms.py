"""What every source waveform promises, and the machinery the kinds share.

A waveform is a frozen dataclass of SI values (times in s) with three duties.
``value_at(t)`` is vectorised: ``t`` is a float or an array of times (s) and the
result has its shape (every kind except :class:`~circuitode.model.aperiodic.Dc`
also spells it ``value(t)``; Dc keeps its constant in a field named ``value``).
``breakpoints(t0, t1)`` gives the sorted times in the open interval (t0, t1)
where the waveform or its slope jumps; the transient driver ends a solver
segment at each one.  ``generator(t0, t1)`` gives a :class:`LinearGenerator`
that reproduces the waveform exactly on a breakpoint-free [t0, t1]
(``u(t) = H @ z(t)``, ``z' = F z``, ``z(t0) = z0``), so exact integration can
append it to the circuit's state.  At a jump the value is the one *after* the
jump (right-continuous).  Generator state sizes: Dc 1; the piecewise-linear
kinds (Step, Ramp, PulseTrain, PiecewiseLinear) 2 (value, slope); Sine 3
(offset, sine part, cosine part); Exponential 2 (final value, decaying part).
This module holds :class:`WaveformError`, :class:`LinearGenerator`, the time
helpers (shapes, windows, rounding slack at corners) and the
:class:`TimedWaveform` base; the kinds live in ``aperiodic.py`` and
``periodic.py``.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import CircuitodeError

__all__ = ["WaveformError", "LinearGenerator", "TimedWaveform"]

class WaveformError(CircuitodeError, ValueError):
    """A waveform whose fields make no sense (a period of zero, a negative time constant …).

    Raised when the waveform is created; the message says which field and what to write.
    """


def require(ok, message: str) -> None:
    if not np.all(ok):
        raise WaveformError(message)


def require_finite(kind: str, **fields) -> None:
    for name, value in fields.items():
        require(np.isfinite(np.asarray(value, dtype=float)), f"{kind} field '{name}' must be a finite number, got {value!r}")

#: F of the two-state (value, slope) generator: value' = slope, slope' = 0.
LINE_F = np.array([[0.0, 1.0], [0.0, 0.0]])
LINE_H = np.array([1.0, 0.0])


@dataclass(frozen=True)
class LinearGenerator:
    """Exact autonomous linear model of a signal on one segment.

    F : (q, q) array, 1/s.  z0 : (q,) state at the segment start.  H : (q,) output
    row for one waveform, or (m, q) for a :class:`SourceBank` of m inputs.
    On the segment, ``u(t) = H @ expm(F (t - t0)) @ z0``.
    """

    F: np.ndarray
    z0: np.ndarray
    H: np.ndarray


# --------------------------------------------------------------------------
# helpers shared by the waveform kinds
# --------------------------------------------------------------------------


def as_times(t) -> tuple[np.ndarray, bool]:
    """``t`` as a float array and whether it was a scalar."""
    arr = np.asarray(t, dtype=float)
    return arr, arr.ndim == 0


def shaped(values: np.ndarray, scalar: bool):
    return float(values) if scalar else values


def check_window(t0: float, t1: float) -> None:
    if not t1 >= t0:
        raise ValueError(f"segment end {t1!r} s lies before its start {t0!r} s")


def inside(times, t0: float, t1: float) -> np.ndarray:
    """Sorted unique times strictly inside (t0, t1)."""
    arr = np.unique(np.asarray(times, dtype=float))
    return arr[(arr > t0) & (arr < t1)]


def snap_eps(*scales) -> np.ndarray:
    """A few ulps of the largest scale: rounding slack when deciding which side of a corner t is on."""
    largest = np.abs(np.asarray(scales[0], dtype=float))
    for scale in scales[1:]:
        largest = np.maximum(largest, np.abs(np.asarray(scale, dtype=float)))
    return 16.0 * np.finfo(float).eps * largest


def line_generator(waveform, t0: float, t1: float) -> LinearGenerator:
    """Two-state (value, slope) generator of a piecewise-linear waveform on a breakpoint-free segment."""
    check_segment(waveform, t0, t1)
    mid = 0.5 * (t0 + t1)
    value, slope = waveform._value_slope(np.asarray(mid))
    start = float(value) - float(slope) * (mid - t0)
    return LinearGenerator(F=LINE_F.copy(), z0=np.array([start, float(slope)]), H=LINE_H.copy())


def check_segment(waveform, t0: float, t1: float) -> None:
    check_window(t0, t1)
    inside = waveform.breakpoints(t0, t1)
    if inside.size:
        raise ValueError(
            f"segment [{t0!r}, {t1!r}] s contains breakpoints {inside.tolist()}; split it there first"
        )


class TimedWaveform:
    """Gives every waveform ``value_at(t)``, the one spelling that also works for :class:`Dc`
    (whose field ``value`` hides a method of that name)."""

    __slots__ = ()

    def value_at(self, t):
        """Value at time(s) ``t`` (s); same shape as ``t``."""
        return self.value(t)
