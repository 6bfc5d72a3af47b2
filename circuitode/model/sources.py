"""Source waveforms: values in SI units as functions of time in seconds.

Each waveform is a frozen dataclass with three duties:

``value(t)`` (and its alias ``value_at(t)``)
    vectorised: ``t`` is a float or an array of times (s); returns the same shape.
    :class:`Dc` keeps its constant in a field named ``value``, so for it only
    ``value_at(t)`` exists; code that handles any waveform calls ``value_at``.
``breakpoints(t0, t1)``
    sorted times in the open interval (t0, t1) where the waveform or its slope
    jumps (pulse edges, piecewise-linear corners, step instants, delays).
    The transient driver ends a solver segment at each one.
``generator(t0, t1)``
    a :class:`LinearGenerator` reproducing the waveform exactly on [t0, t1]
    (which must contain no breakpoint inside), so exact integration can append
    it to the circuit's state.  ``u(t) = H @ z(t)``, ``z' = F z``, ``z(t0) = z0``.

Conventions: at a jump the value is the one *after* the jump (right-continuous),
and a generator for a segment starting on a jump starts from the value after it.
Generator state sizes per kind: :class:`Dc` 1; the piecewise-linear kinds
(:class:`Step`, :class:`Ramp`, :class:`PulseTrain`, :class:`PiecewiseLinear`)
2 (value, slope); :class:`Sine` 3 (offset, sine part, cosine part);
:class:`Exponential` 2 (final value, decaying part).

:class:`SourceBank` holds a circuit's inputs in order and stacks all of the above.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ..errors import CircuitodeError

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
    "SourceBank",
    "WaveformError",
]


class WaveformError(CircuitodeError, ValueError):
    """A waveform whose fields make no sense (a period of zero, a negative time constant …).

    Raised when the waveform is created; the message says which field and what to write.
    """


def _require(ok, message: str) -> None:
    if not np.all(ok):
        raise WaveformError(message)


def _finite(kind: str, **fields) -> None:
    for name, value in fields.items():
        _require(np.isfinite(np.asarray(value, dtype=float)), f"{kind} field '{name}' must be a finite number, got {value!r}")

#: F of the two-state (value, slope) generator: value' = slope, slope' = 0.
_LINE_F = np.array([[0.0, 1.0], [0.0, 0.0]])
_LINE_H = np.array([1.0, 0.0])


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


def _times(t) -> tuple[np.ndarray, bool]:
    """``t`` as a float array and whether it was a scalar."""
    arr = np.asarray(t, dtype=float)
    return arr, arr.ndim == 0


def _shaped(values: np.ndarray, scalar: bool):
    return float(values) if scalar else values


def _window(t0: float, t1: float) -> None:
    if not t1 >= t0:
        raise ValueError(f"segment end {t1!r} s lies before its start {t0!r} s")


def _inside(times, t0: float, t1: float) -> np.ndarray:
    """Sorted unique times strictly inside (t0, t1)."""
    arr = np.unique(np.asarray(times, dtype=float))
    return arr[(arr > t0) & (arr < t1)]


def _snap_eps(*scales) -> np.ndarray:
    """A few ulps of the largest scale: rounding slack when deciding which side of a corner t is on."""
    largest = np.abs(np.asarray(scales[0], dtype=float))
    for scale in scales[1:]:
        largest = np.maximum(largest, np.abs(np.asarray(scale, dtype=float)))
    return 16.0 * np.finfo(float).eps * largest


def _line_generator(waveform, t0: float, t1: float) -> LinearGenerator:
    """Two-state (value, slope) generator of a piecewise-linear waveform on a breakpoint-free segment."""
    _check_segment(waveform, t0, t1)
    mid = 0.5 * (t0 + t1)
    value, slope = waveform._value_slope(np.asarray(mid))
    start = float(value) - float(slope) * (mid - t0)
    return LinearGenerator(F=_LINE_F.copy(), z0=np.array([start, float(slope)]), H=_LINE_H.copy())


def _check_segment(waveform, t0: float, t1: float) -> None:
    _window(t0, t1)
    inside = waveform.breakpoints(t0, t1)
    if inside.size:
        raise ValueError(
            f"segment [{t0!r}, {t1!r}] s contains breakpoints {inside.tolist()}; split it there first"
        )


class _Timed:
    """Gives every waveform ``value_at(t)``, the one spelling that also works for :class:`Dc`
    (whose field ``value`` hides a method of that name)."""

    __slots__ = ()

    def value_at(self, t):
        """Value at time(s) ``t`` (s); same shape as ``t``."""
        return self.value(t)


# --------------------------------------------------------------------------
# waveform kinds
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class Dc(_Timed):
    """Constant value."""

    value: float

    def __post_init__(self) -> None:
        _finite("dc", value=self.value)

    def value_at(self, t):
        """Value at time(s) ``t`` (s): the constant, in the shape of ``t``.

        (The field ``value`` holds the constant, so this kind has no ``value(t)`` method.)"""
        arr, scalar = _times(t)
        return _shaped(np.full(arr.shape, float(self.value)), scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """No breakpoints: an empty array."""
        return np.empty(0)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """One state, F = [[0]]."""
        _window(t0, t1)
        return LinearGenerator(F=np.zeros((1, 1)), z0=np.array([float(self.value)]), H=np.ones(1))


@dataclass(frozen=True)
class Step(_Timed):
    """``before`` for t < at, ``after`` from ``at`` (s) on."""

    before: float
    after: float
    at: float = 0.0

    def __post_init__(self) -> None:
        _finite("step", before=self.before, after=self.after, at=self.at)

    def _value_slope(self, t: np.ndarray):
        eps = _snap_eps(t, self.at)
        value = np.where(t >= self.at - eps, float(self.after), float(self.before))
        return value, np.zeros_like(value)

    def value(self, t):
        """Value (same unit as the fields) at time(s) ``t`` (s); same shape as ``t``."""
        arr, scalar = _times(t)
        return _shaped(self._value_slope(arr)[0], scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """The step instant, if inside (t0, t1)."""
        return _inside([self.at], t0, t1)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """Two states (value, slope = 0)."""
        return _line_generator(self, t0, t1)


@dataclass(frozen=True)
class Ramp(_Timed):
    """``initial`` until ``start`` (s), linear to ``final`` over ``duration`` (s), then held."""

    initial: float
    final: float
    start: float
    duration: float

    def __post_init__(self) -> None:
        _finite("ramp", initial=self.initial, final=self.final, start=self.start, duration=self.duration)
        _require(np.asarray(self.duration) >= 0, f"a ramp's duration must not be negative (got {self.duration!r} s)")

    def _is_jump(self) -> bool:
        """A duration below the resolution of time, or too short for a finite slope, is a jump."""
        rise = abs(float(self.final) - float(self.initial))
        return bool(self.duration <= _snap_eps(self.start) or rise / np.finfo(float).max > self.duration)

    def _value_slope(self, t: np.ndarray):
        rise = float(self.final) - float(self.initial)
        if self._is_jump():  # a jump at ``start``
            return Step(self.initial, self.final, self.start)._value_slope(t)
        eps = _snap_eps(t, self.start, self.start + self.duration)
        fraction = np.clip((t - self.start) / self.duration, 0.0, 1.0)
        on_ramp = (t >= self.start - eps) & (t < self.start + self.duration - eps)
        slope = np.where(on_ramp, rise / self.duration, 0.0)
        return self.initial + rise * fraction, slope

    def value(self, t):
        """Value at time(s) ``t`` (s); same shape as ``t``."""
        arr, scalar = _times(t)
        return _shaped(self._value_slope(arr)[0], scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """Start and end of the ramp, where inside (t0, t1)."""
        return _inside([self.start] if self._is_jump() else [self.start, self.start + self.duration], t0, t1)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """Two states (value, slope)."""
        return _line_generator(self, t0, t1)


@dataclass(frozen=True)
class PulseTrain(_Timed):
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
        _finite("pulse", low=self.low, high=self.high, delay=self.delay, rise=self.rise,
                fall=self.fall, width=self.width, period=self.period)
        _require(np.asarray(self.period) > 0, f"a pulse period must be positive (got {self.period!r} s)")
        for name in ("rise", "fall", "width"):
            value = getattr(self, name)
            _require(np.asarray(value) >= 0, f"a pulse's {name} time must not be negative (got {value!r} s)")
        _require(self.count is None or self.count >= 1,
                 f"a pulse count must be at least 1 (got {self.count!r}); leave it out for endless pulses")

    def _edges(self) -> tuple[float, float, float]:
        """(rise, width, fall) in s, a rise or fall below the resolution of time taken as a jump."""
        resolution = float(_snap_eps(self.delay, self.period))
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
        eps = _snap_eps(t, self.delay)  # rounding in t - delay and in k·period
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
        arr, scalar = _times(t)
        return _shaped(self._value_slope(arr)[0], scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """Every pulse corner inside (t0, t1), generated only for the periods in the window."""
        _window(t0, t1)
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
        return _inside(times, t0, t1)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """Two states (value, slope)."""
        return _line_generator(self, t0, t1)


@dataclass(frozen=True)
class Sine(_Timed):
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
        _finite("sine", amplitude=self.amplitude, frequency=self.frequency, phase=self.phase,
                offset=self.offset, delay=self.delay)

    @property
    def angular_frequency(self) -> float:
        """ω = 2π f, rad/s."""
        return 2.0 * np.pi * float(self.frequency)

    def value(self, t):
        """Value at time(s) ``t`` (s); same shape as ``t``."""
        arr, scalar = _times(t)
        wave = self.offset + self.amplitude * np.sin(
            self.angular_frequency * (arr - self.delay) + self.phase
        )
        eps = _snap_eps(arr, self.delay)
        return _shaped(np.where(arr >= self.delay - eps, wave, float(self.offset)), scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """The delay, where the sine starts, if inside (t0, t1)."""
        return _inside([self.delay], t0, t1) if self.amplitude != 0 else np.empty(0)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """Three states (offset, A sin θ, A cos θ); F = [[0,0,0],[0,0,ω],[0,−ω,0]], H = [1,1,0]."""
        _check_segment(self, t0, t1)
        w = self.angular_frequency
        F = np.array([[0.0, 0.0, 0.0], [0.0, 0.0, w], [0.0, -w, 0.0]])
        mid = 0.5 * (t0 + t1)
        if mid >= self.delay or self.amplitude == 0:
            angle = w * (t0 - self.delay) + self.phase
            z0 = np.array([self.offset, self.amplitude * np.sin(angle), self.amplitude * np.cos(angle)])
        else:
            z0 = np.array([float(self.offset), 0.0, 0.0])
        return LinearGenerator(F=F, z0=z0, H=np.array([1.0, 1.0, 0.0]))


@dataclass(frozen=True)
class PiecewiseLinear(_Timed):
    """Straight lines through (times[i], values[i]); first value held before, last after.

    ``times`` strictly increasing (s).
    """

    times: tuple[float, ...]
    values: tuple[float, ...]

    def __post_init__(self) -> None:
        _require(len(self.times) == len(self.values) and len(self.times) >= 1,
                 f"piecewise-linear needs as many values as times, at least one "
                 f"(got {len(self.times)} times, {len(self.values)} values)")
        _finite("piecewise-linear", times=self.times, values=self.values)
        _require(np.all(np.diff(np.asarray(self.times, dtype=float)) > 0),
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
        arr, scalar = _times(t)
        return _shaped(self._value_slope(arr)[0], scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """The given times inside (t0, t1)."""
        return _inside(self.times, t0, t1)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """Two states (value, slope)."""
        return _line_generator(self, t0, t1)


@dataclass(frozen=True)
class Exponential(_Timed):
    """``initial`` before ``delay``; afterwards
    ``final + (initial - final) * exp(-(t - delay) / time_constant)``.
    """

    initial: float
    final: float
    delay: float
    time_constant: float

    def __post_init__(self) -> None:
        _finite("exponential", initial=self.initial, final=self.final, delay=self.delay,
                time_constant=self.time_constant)
        _require(np.asarray(self.time_constant) > 0,
                 f"an exponential's time constant must be positive (got {self.time_constant!r} s)")

    def value(self, t):
        """Value at time(s) ``t`` (s); same shape as ``t``."""
        arr, scalar = _times(t)
        elapsed = np.maximum(arr - self.delay, 0.0)
        out = self.final + (self.initial - self.final) * np.exp(-elapsed / self.time_constant)
        return _shaped(out, scalar)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """The delay, where the decay starts, if inside (t0, t1)."""
        return _inside([self.delay], t0, t1) if self.initial != self.final else np.empty(0)

    def generator(self, t0: float, t1: float) -> LinearGenerator:
        """Two states (final, decaying part); F = diag(0, −1/τ), H = [1, 1]."""
        _check_segment(self, t0, t1)
        F = np.array([[0.0, 0.0], [0.0, -1.0 / self.time_constant]])
        if 0.5 * (t0 + t1) >= self.delay:
            decaying = (self.initial - self.final) * np.exp(-(t0 - self.delay) / self.time_constant)
            z0 = np.array([float(self.final), decaying])
        else:
            z0 = np.array([float(self.initial), 0.0])
        return LinearGenerator(F=F, z0=z0, H=np.array([1.0, 1.0]))


Waveform = Dc | Step | Ramp | PulseTrain | Sine | PiecewiseLinear | Exponential


# --------------------------------------------------------------------------
# the circuit's inputs together
# --------------------------------------------------------------------------


class SourceBank:
    """A circuit's m inputs, in order, evaluated and modelled together.

    Parameters
    ----------
    waveforms : the m waveforms, in the order of the state-space input columns.
    names : optional names (e.g. source element names), one per waveform.
    """

    def __init__(self, waveforms: Sequence[Waveform], names: Sequence[str] | None = None):
        self.waveforms = tuple(waveforms)
        self.names = tuple(names) if names is not None else tuple(f"input {i}" for i in range(len(self.waveforms)))
        if len(self.names) != len(self.waveforms):
            raise ValueError(f"{len(self.names)} names given for {len(self.waveforms)} waveforms")

    @classmethod
    def of(cls, circuit) -> "SourceBank":
        """The bank of ``circuit.inputs`` (the sources, then each diode's constant drop), in
        order (the state-space input order)."""
        return cls([s.waveform for s in circuit.inputs], [s.name for s in circuit.inputs])

    def __len__(self) -> int:
        return len(self.waveforms)

    @property
    def m(self) -> int:
        """Number of inputs."""
        return len(self.waveforms)

    def values(self, t) -> np.ndarray:
        """Input values: (m,) for a scalar ``t``, else (*t.shape, m) — (nt, m) for a 1-D ``t``."""
        arr = np.asarray(t, dtype=float)
        if not self.waveforms:
            return np.zeros(arr.shape + (0,))
        return np.stack([np.asarray(w.value_at(arr), dtype=float) for w in self.waveforms], axis=-1)

    def breakpoints(self, t0: float, t1: float) -> np.ndarray:
        """Sorted union of all inputs' breakpoints strictly inside (t0, t1)."""
        _window(t0, t1)
        if not self.waveforms:
            return np.empty(0)
        return np.unique(np.concatenate([w.breakpoints(t0, t1) for w in self.waveforms]))

    def generators(self, t0: float, t1: float) -> LinearGenerator:
        """All inputs as one generator on a breakpoint-free segment [t0, t1].

        Returns F (total, total) block-diagonal, z0 (total,), H (m, total), so that
        ``u(t) = H @ expm(F (t - t0)) @ z0``.
        """
        parts = [w.generator(t0, t1) for w in self.waveforms]
        sizes = [p.z0.size for p in parts]
        total = int(sum(sizes))
        from scipy.linalg import block_diag  # scipy.linalg loads slowly; only generators need it

        F = block_diag(*[p.F for p in parts]) if parts else np.zeros((0, 0))
        z0 = np.concatenate([p.z0 for p in parts]) if parts else np.zeros(0)
        H = np.zeros((len(parts), total))
        start = 0
        for row, (p, size) in enumerate(zip(parts, sizes)):
            H[row, start : start + size] = p.H
            start += size
        return LinearGenerator(F=np.asarray(F, dtype=float), z0=z0, H=H)
