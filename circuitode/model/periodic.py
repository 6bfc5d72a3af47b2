"""Source waveforms that repeat: trapezoidal pulse trains and sines.

Both answer ``value_at``, ``breakpoints`` and ``generator`` as
:mod:`circuitode.model.waveforms` describes.  A pulse train has corners in
every period, so its breakpoints are generated only for the periods inside
the asked window (an endless train needs a finite end time); a sine has one
breakpoint, its start after ``delay``, and a three-state rotating generator.
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

__all__ = ["PulseTrain", "Sine"]


@dataclass(frozen=True)
class PulseTrain(TimedWaveform):
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

    def __post_init__(self) -> None:
        require_finite("pulse", low=self.low, high=self.high, delay=self.delay, rise=self.rise,
                fall=self.fall, width=self.width, period=self.period)
        require(np.asarray(self.period) > 0, f"a pulse period must be positive (got {self.period!r} s)")
        for name in ("rise", "fall", "width"):
            value = getattr(self, name)
            require(np.asarray(value) >= 0, f"a pulse's {name} time must not be negative (got {value!r} s)")
        require(self.count is None or self.count >= 1,
                 f"a pulse count must be at least 1 (got {self.count!r}); leave it out for endless pulses")

    def _edges(self) -> tuple[float, float, float]:
        """(rise, width, fall) in s, a rise or fall below the resolution of time taken as a jump."""
        resolution = float(snap_eps(self.delay, self.period))
        return (float(self.rise) if self.rise > resolution else 0.0, float(self.width),
                float(self.fall) if self.fall > resolution else 0.0)

    def _corners(self) -> np.ndarray:
        """Offsets (s) of the corners within one period, sorted, each < period."""
        r, w, f = self._edges()
        offsets = np.unique([0.0, r, r + w, r + w + f])
        return offsets[offsets < self.period]

    def _value_slope(self, t: np.ndarray):
        low, high = float(self.low), float(self.high)
        r, w, f = self._edges()
        since = t - self.delay
        eps = snap_eps(t, self.delay)  # rounding in t - delay and in k·period
        k = np.floor(since / self.period)
        tau = since - k * self.period
        wrap = tau >= self.period - eps  # rounding put t just before a period start
        k = np.where(wrap, k + 1, k)
        tau = np.where(wrap, 0.0, np.maximum(tau, 0.0))
        active = since >= -eps
        if self.count is not None:
            active &= k < self.count
        rising = tau < r - eps
        high_part = ~rising & (tau < r + w - eps)
        falling = ~rising & ~high_part & (tau < r + w + f - eps)
        span = high - low
        value = np.full(np.shape(t), low)
        slope = np.zeros(np.shape(t))
        with np.errstate(over="ignore"):  # a tiny rise or fall overflows only unused branches
            if r > 0:
                value = np.where(rising, low + span * np.clip(tau / r, 0.0, 1.0), value)
                slope = np.where(rising, span / r, slope)
            value = np.where(high_part, high, value)
            if f > 0:
                value = np.where(falling, high - span * np.clip((tau - r - w) / f, 0.0, 1.0), value)
                slope = np.where(falling, -span / f, slope)
        value = np.where(active, value, low)
        slope = np.where(active, slope, 0.0)
        return value, slope

    def value(self, t):
        """Value at time(s) ``t`` (s); same shape as ``t``."""
        arr, scalar = as_times(t)
        return shaped(self._value_slope(arr)[0], scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """Every pulse corner inside (t0, t1), generated only for the periods in the window."""
        check_window(t0, t1)
        if not np.isfinite(t1) and self.count is None:
            raise ValueError("an endless pulse train has endless breakpoints; give a finite end time")
        first = max(int(np.floor((t0 - self.delay) / self.period)) - 1, 0)
        last = int(np.floor((t1 - self.delay) / self.period)) + 1 if np.isfinite(t1) else first
        if self.count is not None:
            last = min(last, self.count - 1) if np.isfinite(t1) else self.count - 1
        k = np.arange(first, last + 1, dtype=float)
        times = (self.delay + k[:, None] * self.period + self._corners()[None, :]).ravel()
        r, w, f = self._edges()
        if self.count is not None and r + w + f > self.period:  # last pulse cut off by the train's end
            times = np.append(times, self.delay + self.count * self.period)
        return inside(times, t0, t1)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """Two states (value, slope)."""
        return line_generator(self, t0, t1)


@dataclass(frozen=True)
class Sine(TimedWaveform):
    """``offset`` before ``delay``; afterwards
    ``offset + amplitude * sin(2π frequency (t - delay) + phase)``.

    frequency in Hz, phase in rad, delay in s.
    """

    amplitude: float
    frequency: float
    phase: float = 0.0
    offset: float = 0.0
    delay: float = 0.0

    def __post_init__(self) -> None:
        require_finite("sine", amplitude=self.amplitude, frequency=self.frequency, phase=self.phase,
                offset=self.offset, delay=self.delay)

    @property
    def angular_frequency(self) -> float:
        """ω = 2π f, rad/s."""
        return 2.0 * np.pi * float(self.frequency)

    def value(self, t):
        """Value at time(s) ``t`` (s); same shape as ``t``."""
        arr, scalar = as_times(t)
        wave = self.offset + self.amplitude * np.sin(
            self.angular_frequency * (arr - self.delay) + self.phase
        )
        eps = snap_eps(arr, self.delay)
        return shaped(np.where(arr >= self.delay - eps, wave, float(self.offset)), scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """The delay, where the sine starts, if inside (t0, t1)."""
        return inside([self.delay], t0, t1) if self.amplitude != 0 else np.empty(0)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """Three states (offset, A sin θ, A cos θ); F = [[0,0,0],[0,0,ω],[0,−ω,0]], H = [1,1,0]."""
        check_segment(self, t0, t1)
        w = self.angular_frequency
        F = np.array([[0.0, 0.0, 0.0], [0.0, 0.0, w], [0.0, -w, 0.0]])
        mid = 0.5 * (t0 + t1)
        if mid >= self.delay or self.amplitude == 0:
            angle = w * (t0 - self.delay) + self.phase
            z0 = np.array([self.offset, self.amplitude * np.sin(angle), self.amplitude * np.cos(angle)])
        else:
            z0 = np.array([float(self.offset), 0.0, 0.0])
        return LinearGenerator(F=F, z0=z0, H=np.array([1.0, 1.0, 0.0]))

