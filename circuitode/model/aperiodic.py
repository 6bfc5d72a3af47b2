"""Source waveforms that change at most once: constant, step, ramp, straight lines through given points, exponential.

Each kind holds level fields (the values it moves between, in the source's
unit) and timing fields (s), and answers ``value_at``, ``breakpoints`` and
``generator`` as :mod:`circuitode.model.waveforms` describes.  After its last
change each one holds its final value for ever, so its breakpoints are a few
fixed instants; the repeating kinds live in :mod:`circuitode.model.periodic`.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .waveforms import (
    LinearGenerator,
    TimedWaveform,
    as_times,
    check_segment,
    check_window,
    inside,
    line_generator,
    require,
    require_finite,
    shaped,
    snap_eps,
)

__all__ = ["Dc", "Step", "Ramp", "PiecewiseLinear", "Exponential"]


@dataclass(frozen=True)
class Dc(TimedWaveform):
    """Constant value."""

    value: float

    def __post_init__(self) -> None:
        require_finite("dc", value=self.value)

    def value_at(self, t):
        """Value at time(s) ``t`` (s): the constant, in the shape of ``t``.

        (The field ``value`` holds the constant, so this kind has no ``value(t)`` method.)"""
        arr, scalar = as_times(t)
        return shaped(np.full(arr.shape, float(self.value)), scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """No breakpoints: an empty array."""
        return np.empty(0)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """One state, F = [[0]]."""
        check_window(t0, t1)
        return LinearGenerator(F=np.zeros((1, 1)), z0=np.array([float(self.value)]), H=np.ones(1))


@dataclass(frozen=True)
class Step(TimedWaveform):
    """``before`` for t < at, ``after`` from ``at`` (s) on."""

    before: float
    after: float
    at: float = 0.0

    def __post_init__(self) -> None:
        require_finite("step", before=self.before, after=self.after, at=self.at)

    def _value_slope(self, t: np.ndarray):
        eps = snap_eps(t, self.at)
        value = np.where(t >= self.at - eps, float(self.after), float(self.before))
        return value, np.zeros_like(value)

    def value(self, t):
        """Value (same unit as the fields) at time(s) ``t`` (s); same shape as ``t``."""
        arr, scalar = as_times(t)
        return shaped(self._value_slope(arr)[0], scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """The step instant, if inside (t0, t1)."""
        return inside([self.at], t0, t1)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """Two states (value, slope = 0)."""
        return line_generator(self, t0, t1)


@dataclass(frozen=True)
class Ramp(TimedWaveform):
    """``initial`` until ``start`` (s), linear to ``final`` over ``duration`` (s), then held."""

    initial: float
    final: float
    start: float
    duration: float

    def __post_init__(self) -> None:
        require_finite("ramp", initial=self.initial, final=self.final, start=self.start, duration=self.duration)
        require(np.asarray(self.duration) >= 0, f"a ramp's duration must not be negative (got {self.duration!r} s)")

    def _is_jump(self) -> bool:
        """A duration below the resolution of time, or too short for a finite slope, is a jump."""
        rise = abs(float(self.final) - float(self.initial))
        return bool(self.duration <= snap_eps(self.start) or rise / np.finfo(float).max > self.duration)

    def _value_slope(self, t: np.ndarray):
        rise = float(self.final) - float(self.initial)
        if self._is_jump():  # a jump at ``start``
            return Step(self.initial, self.final, self.start)._value_slope(t)
        eps = snap_eps(t, self.start, self.start + self.duration)
        fraction = np.clip((t - self.start) / self.duration, 0.0, 1.0)
        on_ramp = (t >= self.start - eps) & (t < self.start + self.duration - eps)
        slope = np.where(on_ramp, rise / self.duration, 0.0)
        return self.initial + rise * fraction, slope

    def value(self, t):
        """Value at time(s) ``t`` (s); same shape as ``t``."""
        arr, scalar = as_times(t)
        return shaped(self._value_slope(arr)[0], scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """Start and end of the ramp, where inside (t0, t1)."""
        return inside([self.start] if self._is_jump() else [self.start, self.start + self.duration], t0, t1)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """Two states (value, slope)."""
        return line_generator(self, t0, t1)



@dataclass(frozen=True)
class PiecewiseLinear(TimedWaveform):
    """Straight lines through (times[i], values[i]); first value held before, last after.

    ``times`` strictly increasing (s).
    """

    times: tuple[float, ...]
    values: tuple[float, ...]

    def __post_init__(self) -> None:
        require(len(self.times) == len(self.values) and len(self.times) >= 1,
                 f"piecewise-linear needs as many values as times, at least one "
                 f"(got {len(self.times)} times, {len(self.values)} values)")
        require_finite("piecewise-linear", times=self.times, values=self.values)
        require(np.all(np.diff(np.asarray(self.times, dtype=float)) > 0),
                 "piecewise-linear times must increase strictly from point to point")

    def _value_slope(self, t: np.ndarray):
        knots = np.asarray(self.times, dtype=float)
        heights = np.asarray(self.values, dtype=float)
        value = np.interp(t, knots, heights)
        if knots.size < 2:
            return value, np.zeros_like(value)
        slopes = np.diff(heights) / np.diff(knots)
        piece = np.searchsorted(knots, t, side="right") - 1  # corners are the knots themselves
        inner = (piece >= 0) & (piece < knots.size - 1)
        slope = np.where(inner, slopes[np.clip(piece, 0, knots.size - 2)], 0.0)
        return value, slope

    def value(self, t):
        """Value at time(s) ``t`` (s); same shape as ``t``."""
        arr, scalar = as_times(t)
        return shaped(self._value_slope(arr)[0], scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """The given times inside (t0, t1)."""
        return inside(self.times, t0, t1)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """Two states (value, slope)."""
        return line_generator(self, t0, t1)


@dataclass(frozen=True)
class Exponential(TimedWaveform):
    """``initial`` before ``delay``; afterwards
    ``final + (initial - final) * exp(-(t - delay) / time_constant)``.
    """

    initial: float
    final: float
    delay: float
    time_constant: float

    def __post_init__(self) -> None:
        require_finite("exponential", initial=self.initial, final=self.final, delay=self.delay,
                time_constant=self.time_constant)
        require(np.asarray(self.time_constant) > 0,
                 f"an exponential's time constant must be positive (got {self.time_constant!r} s)")

    def value(self, t):
        """Value at time(s) ``t`` (s); same shape as ``t``."""
        arr, scalar = as_times(t)
        elapsed = np.maximum(arr - self.delay, 0.0)
        out = self.final + (self.initial - self.final) * np.exp(-elapsed / self.time_constant)
        return shaped(out, scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """The delay, where the decay starts, if inside (t0, t1)."""
        return inside([self.delay], t0, t1) if self.initial != self.final else np.empty(0)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """Two states (final, decaying part); F = diag(0, −1/τ), H = [1, 1]."""
        check_segment(self, t0, t1)
        F = np.array([[0.0, 0.0], [0.0, -1.0 / self.time_constant]])
        if 0.5 * (t0 + t1) >= self.delay:
            decaying = (self.initial - self.final) * np.exp(-(t0 - self.delay) / self.time_constant)
            z0 = np.array([float(self.final), decaying])
        else:
            z0 = np.array([float(self.initial), 0.0])
        return LinearGenerator(F=F, z0=z0, H=np.array([1.0, 1.0]))
