"""Source waveforms: values in SI units as functions of time in seconds.

Each waveform is a frozen dataclass with three duties:

``value(t)``
    vectorised: ``t`` is a float or an array of times (s); returns the same shape.
``breakpoints(t0, t1)``
    sorted times in the open interval (t0, t1) where the waveform or its slope
    jumps (pulse edges, piecewise-linear corners, step instants, delays).
    The transient driver ends a solver segment at each one.
``generator(t0, t1)``
    a :class:`LinearGenerator` reproducing the waveform exactly on [t0, t1]
    (which must contain no breakpoint inside), so exact integration can append
    it to the circuit's state.  ``u(t) = H @ z(t)``, ``z' = F z``, ``z(t0) = z0``.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "LinearGenerator",
    "Dc",
    "Step",
    "Ramp",
    "PulseTrain",
    "Sine",
    "PiecewiseLinear",
    "Exponential",
    "Waveform",
]


@dataclass(frozen=True)
class LinearGenerator:
    """Exact autonomous linear model of a signal on one segment.

    F : (m, m) array, 1/s.  z0 : (m,) state at the segment start.  H : (m,) output row.
    """

    F: np.ndarray
    z0: np.ndarray
    H: np.ndarray


@dataclass(frozen=True)
class Dc:
    """Constant value."""

    value: float


@dataclass(frozen=True)
class Step:
    """``before`` for t < at, ``after`` from ``at`` (s) on."""

    before: float
    after: float
    at: float = 0.0


@dataclass(frozen=True)
class Ramp:
    """``initial`` until ``start`` (s), linear to ``final`` over ``duration`` (s), then held."""

    initial: float
    final: float
    start: float
    duration: float


@dataclass(frozen=True)
class PulseTrain:
    """Trapezoidal pulses between ``low`` and ``high``.

    Each period (s) starting at ``delay`` (s): rise over ``rise`` (s), stay high
    for ``width`` (s), fall over ``fall`` (s), stay low for the rest.  ``count``
    pulses, or endless when None.  Zero rise or fall times give jumps.
    """

    low: float
    high: float
    delay: float
    rise: float
    fall: float
    width: float
    period: float
    count: int | None = None


@dataclass(frozen=True)
class Sine:
    """``offset`` before ``delay``; afterwards
    ``offset + amplitude * sin(2π frequency (t - delay) + phase)``.

    frequency in Hz, phase in rad, delay in s.
    """

    amplitude: float
    frequency: float
    phase: float = 0.0
    offset: float = 0.0
    delay: float = 0.0


@dataclass(frozen=True)
class PiecewiseLinear:
    """Straight lines through (times[i], values[i]); first value held before, last after.

    ``times`` strictly increasing (s).
    """

    times: tuple[float, ...]
    values: tuple[float, ...]


@dataclass(frozen=True)
class Exponential:
    """``initial`` before ``delay``; afterwards
    ``final + (initial - final) * exp(-(t - delay) / time_constant)``.
    """

    initial: float
    final: float
    delay: float
    time_constant: float


Waveform = Dc | Step | Ramp | PulseTrain | Sine | PiecewiseLinear | Exponential
