"""Waveform figures: pure, vectorised functions of sampled time and signal.

Every figure takes ``t`` in seconds, non-decreasing along its last axis (an
event instant may appear twice: the value just before and just after it), and
``y`` of shape ``(..., nt)`` batched along any leading axes.  ``t`` is either one
clock ``(nt,)`` shared by every signal, or one clock per signal, broadcastable to
``y`` (a tolerance batch whose switching instants differ from sample to sample).
Each figure returns a numpy value of shape ``y.shape[:-1]`` (0-d for 1-D input)
in SI units; :func:`figure_unit` says which.  Instants given as options
(``start``, ``end``) may likewise be scalars or one per signal.  No figure loops
in Python over samples.

Terms follow IEEE Std 181-2011 (transitions, pulses and related waveforms)
where it defines them: the *initial* and *final* state levels of a step, its
*amplitude* (final − initial), *overshoot* and *undershoot* as aberrations
expressed in percent of the amplitude, and the *transition duration* between
the 10 % and 90 % reference levels (here called rise time, whichever way the
step goes).  Damping ratio and damped frequency are measured on a ringing
waveform from its successive extrema (logarithmic decrement; Ogata, Modern
Control Engineering, ch. 5; Nise, Control Systems Engineering, ch. 4).

Integrals (rms, mean, i2t, energy) use the trapezoidal rule on the samples;
a repeated instant is an interval of zero length and contributes nothing.
A signal containing NaN (a failed sample of a batch) gets NaN for every figure.
"""
from __future__ import annotations

import inspect
from typing import Any, Callable

import numpy as np

from .errors import CircuitodeError

__all__ = [
    "MeasurementError",
    "FIGURE_UNITS",
    "RINGING_NOISE",
    "RINGING_MISFIT",
    "STANDARD_FIGURES",
    "figure_unit",
    "peak",
    "time_of_peak",
    "minimum",
    "final",
    "overshoot",
    "undershoot",
    "rise_time",
    "settling_time",
    "rms",
    "mean",
    "i2t",
    "energy",
    "max_slope",
    "damping_ratio",
    "damped_frequency",
    "measure",
    "summarise",
]


class MeasurementError(CircuitodeError):
    """A figure was asked for with input it cannot be measured on (bad times, unknown figure…)."""


#: Unit of each figure; "{s}" stands for the signal's own unit.  "" is dimensionless.
FIGURE_UNITS: dict[str, str] = {
    "peak": "{s}",
    "time_of_peak": "s",
    "minimum": "{s}",
    "final": "{s}",
    "overshoot": "%",
    "undershoot": "%",
    "rise_time": "s",
    "settling_time": "s",
    "rms": "{s}",
    "mean": "{s}",
    "i2t": "{s}²s",
    "energy": "J",
    "max_slope": "{s}/s",
    "damping_ratio": "",
    "damped_frequency": "Hz",
}

#: Figures :func:`summarise` reports for every signal (plus i2t for currents, energy for power).
STANDARD_FIGURES = (
    "peak",
    "time_of_peak",
    "minimum",
    "final",
    "overshoot",
    "rise_time",
    "settling_time",
    "rms",
    "damping_ratio",
    "damped_frequency",
)


def figure_unit(figure: str, signal_unit: str) -> str:
    """Unit of ``figure`` measured on a signal in ``signal_unit`` (e.g. ``("i2t", "A") -> "A²s"``)."""
    try:
        pattern = FIGURE_UNITS[figure]
    except KeyError:
        raise MeasurementError(_unknown_figure(figure)) from None
    return pattern.replace("{s}", signal_unit)


# --------------------------------------------------------------------------
# Input checks and small vectorised helpers
# --------------------------------------------------------------------------


def _checked(t: Any, y: Any) -> tuple[np.ndarray, np.ndarray]:
    """Validated float arrays: ``t`` (nt,) shared by every signal, or ``t`` broadcast to
    ``y``'s shape when each signal has its own clock (a batch whose events differ)."""
    try:
        t = np.asarray(t, dtype=float)
        y = np.asarray(y, dtype=float)
    except (TypeError, ValueError):
        raise MeasurementError("time and signal must be arrays of numbers") from None
    if t.ndim < 1 or t.shape[-1] < 2:
        raise MeasurementError(
            f"time must be an array of at least 2 instants along its last axis, got shape {t.shape}"
        )
    if y.ndim < 1 or y.shape[-1] != t.shape[-1]:
        raise MeasurementError(
            f"signal of shape {y.shape} does not match {t.shape[-1]} time instants; "
            "the last axis of the signal must run along time"
        )
    if t.ndim > 1:
        try:
            t, y = np.broadcast_arrays(t, y)
        except ValueError:
            raise MeasurementError(
                f"time axes of shape {t.shape} do not fit signals of shape {y.shape}"
            ) from None
    # one comparison pass in the usual case: non-decreasing everywhere (NaN compares
    # False) between finite ends implies every instant is finite; otherwise the
    # separate checks below say what is wrong
    if not (np.all(t[..., 1:] >= t[..., :-1]) and np.all(np.isfinite(t[..., 0]))
            and np.all(np.isfinite(t[..., -1]))):
        if not np.all(np.isfinite(t)):
            raise MeasurementError("time contains NaN or infinite values")
        if np.any(np.diff(t, axis=-1) < 0):
            raise MeasurementError("time must be non-decreasing (an instant may repeat at an event)")
    if np.any(t[..., -1] <= t[..., 0]):
        raise MeasurementError("time must span a positive interval")
    return t, y


def _at(t: np.ndarray, k: np.ndarray) -> np.ndarray:
    """``t`` at sample indices ``k`` (shape of the batch), for a shared or per-signal clock."""
    if t.ndim == 1:
        return t[k]
    return np.take_along_axis(t, np.asarray(k)[..., None], axis=-1)[..., 0]


def _level(value: Any, default: np.ndarray) -> np.ndarray:
    """An optional state level or instant (scalar or array over the leading axes) or the default."""
    if value is None:
        return default
    try:
        return np.broadcast_to(np.asarray(value, dtype=float), np.shape(default))
    except ValueError:
        raise MeasurementError(
            f"value of shape {np.shape(value)} does not fit signals of batch shape {np.shape(default)}"
        ) from None


def _ends(t: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """First and last instant of every signal, shape of the batch."""
    batch = y.shape[:-1]
    return np.broadcast_to(t[..., 0], batch), np.broadcast_to(t[..., -1], batch)


def _integral(t: np.ndarray, y: np.ndarray, start: Any, end: Any, square: bool = False):
    """Trapezoidal ∫ y dt (or ∫ y² dt, trapezoidal on y²) over [start, end], the end points
    interpolated linearly; returns (integral, window length), shape of the batch.

    Each interval [t_k, t_k+1] is clipped to the window, so the window may differ per
    signal and a repeated instant (zero-length interval) contributes nothing.
    """
    first, last = _ends(t, y)
    if start is None and end is None:  # the whole run: plain trapezoid, no clipping needed
        f = y * y if square else y
        pairs = f[..., :-1] + f[..., 1:]
        pairs *= t[..., 1:] - t[..., :-1]  # (halving the sum is exact: the same trapezoid)
        return 0.5 * np.sum(pairs, axis=-1), last - first
    a = _level(start, first)
    b = _level(end, last)
    if np.any(a < first) or np.any(b > last) or np.any(a >= b):
        raise MeasurementError(
            f"window [{np.min(a):g} s, {np.max(b):g} s] must be non-empty and lie within the "
            f"simulated time [{np.max(first):g} s, {np.min(last):g} s]"
        )
    tk, tk1 = t[..., :-1], t[..., 1:]
    lo = np.clip(tk, a[..., None], b[..., None])
    hi = np.clip(tk1, a[..., None], b[..., None])
    dt = tk1 - tk
    safe = np.where(dt > 0, dt, 1.0)
    dy = np.diff(y, axis=-1)
    y_lo = y[..., :-1] + (lo - tk) / safe * dy
    y_hi = y[..., :-1] + (hi - tk) / safe * dy
    if square:
        y_lo, y_hi = y_lo * y_lo, y_hi * y_hi
    return np.sum(0.5 * (y_lo + y_hi) * (hi - lo), axis=-1), b - a


def _first_crossing(t: np.ndarray, z: np.ndarray, level: float) -> np.ndarray:
    """First instant where the normalised signal ``z`` reaches ``level`` from below
    (linear interpolation between samples); NaN where it never does."""
    reached = z >= level
    k = np.argmax(reached, axis=-1)
    found = np.take_along_axis(reached, k[..., None], axis=-1)[..., 0]
    kp = np.maximum(k - 1, 0)
    z0 = np.take_along_axis(z, kp[..., None], axis=-1)[..., 0]
    z1 = np.take_along_axis(z, k[..., None], axis=-1)[..., 0]
    t0, t1 = _at(t, kp), _at(t, k)
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.where((k > 0) & (z1 != z0), (level - z0) / (z1 - z0), 0.0)
    crossing = t0 + np.clip(frac, 0.0, 1.0) * (t1 - t0)
    return np.where(found, crossing, np.nan)


def _step_levels(y: np.ndarray, initial: Any, final_level: Any):
    y0 = _level(initial, y[..., 0])
    yf = _level(final_level, y[..., -1])
    amplitude = yf - y0
    with np.errstate(invalid="ignore", divide="ignore"):
        direction = np.where(amplitude != 0, np.sign(amplitude), np.nan)
    return y0, yf, amplitude, direction


# --------------------------------------------------------------------------
# Levels
# --------------------------------------------------------------------------


def peak(t, y) -> np.ndarray:
    """Largest sample of ``y`` (signal unit), shape ``y.shape[:-1]``."""
    t, y = _checked(t, y)
    return np.max(y, axis=-1)


def time_of_peak(t, y) -> np.ndarray:
    """Instant (s, on the run's own clock) of the largest sample; the first one if repeated."""
    t, y = _checked(t, y)
    k = np.argmax(y, axis=-1)  # the first NaN where there is one, so one pass tells both
    return np.where(np.isnan(np.take_along_axis(y, k[..., None], axis=-1)[..., 0]), np.nan, _at(t, k))


def minimum(t, y) -> np.ndarray:
    """Smallest sample of ``y`` (signal unit)."""
    t, y = _checked(t, y)
    return np.min(y, axis=-1)


def final(t, y, *, window: float | None = None) -> np.ndarray:
    """Final state level (signal unit): the last sample, or with ``window`` (s) the
    time-average over the last ``window`` seconds (useful when ripple remains)."""
    t, y = _checked(t, y)
    if window is None:
        return y[..., -1].copy()
    if not window > 0:
        raise MeasurementError(f"final-value window must be a positive duration, got {window!r} s")
    first, last = _ends(t, y)
    total, length = _integral(t, y, np.maximum(last - float(window), first), None)
    return total / length


# --------------------------------------------------------------------------
# Step-response figures (IEEE Std 181-2011 terms)
# --------------------------------------------------------------------------


def overshoot(t, y, *, initial=None, final=None) -> np.ndarray:
    """Overshoot (%): the largest excursion beyond the final state level in the direction
    of the step, in percent of the amplitude |final − initial| (IEEE Std 181-2011).

    ``initial`` and ``final`` default to the first and last samples.  0 when the signal
    never passes the final level; NaN when the amplitude is zero (no step to refer to).
    """
    t, y = _checked(t, y)
    y0, yf, amplitude, direction = _step_levels(y, initial, final)
    beyond = np.max(direction[..., None] * (y - yf[..., None]), axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return 100.0 * np.maximum(beyond, 0.0) / np.abs(amplitude)


def undershoot(t, y, *, initial=None, final=None) -> np.ndarray:
    """Post-transition undershoot (%): after the signal first reaches the final state
    level, its largest excursion back towards the initial level, in percent of the
    amplitude (IEEE Std 181-2011).  For a ringing step this is the first trough.

    0 when the signal never reaches the final level or never comes back; NaN when the
    amplitude is zero.
    """
    t, y = _checked(t, y)
    y0, yf, amplitude, direction = _step_levels(y, initial, final)
    progress = direction[..., None] * (y - yf[..., None])  # ≥ 0 once at or beyond the final level
    reached = np.cumsum(progress >= 0, axis=-1) > 0
    back = np.max(np.where(reached, -progress, 0.0), axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(amplitude != 0, 100.0 * np.maximum(back, 0.0) / np.abs(amplitude), np.nan)


def rise_time(t, y, *, low: float = 0.1, high: float = 0.9, initial=None, final=None) -> np.ndarray:
    """Transition duration (s) between the ``low`` and ``high`` reference levels
    (10 % and 90 % of the amplitude by default, IEEE Std 181-2011), taking the first
    crossing of each, interpolated linearly between samples.  Works for falling steps
    too.  NaN when a level is never reached or the amplitude is zero.
    """
    if not 0.0 <= low < high <= 1.0:
        raise MeasurementError(
            f"reference levels need 0 ≤ low < high ≤ 1, got low={low!r}, high={high!r}"
        )
    t, y = _checked(t, y)
    y0, yf, amplitude, _ = _step_levels(y, initial, final)
    with np.errstate(invalid="ignore", divide="ignore"):
        z = (y - y0[..., None]) / amplitude[..., None]
    return _first_crossing(t, z, high) - _first_crossing(t, z, low)


def settling_time(
    t, y, *, band: float = 0.02, initial=None, final=None, start=None, dwell: float = 0.05
) -> np.ndarray:
    """Settling time (s): from ``start`` (default: the first instant) to the last
    instant the signal is outside ``final ± band·|final − initial|`` (2 % band by
    default; Ogata, ch. 5), interpolated to where it enters the band for good.

    0 when it never leaves the band.  NaN when the amplitude is zero, or when the
    signal has not stayed inside the band for at least the last ``dwell`` fraction of
    the run (5 % by default): a waveform still ringing at the end would otherwise
    "settle" at the last sample, since the final level defaults to that sample, and
    a limit on it would pass wrongly — run longer instead.  Textbook settling times
    count from the instant the step is applied: for a step applied by a switch at
    t_s, pass ``start=t_s``.
    """
    if not 0 <= dwell < 1:
        raise MeasurementError(f"settling dwell must be a fraction of the run in [0, 1), got {dwell!r}")
    if not band > 0:
        raise MeasurementError(f"settling band must be a positive fraction, got {band!r}")
    t, y = _checked(t, y)
    y0, yf, amplitude, _ = _step_levels(y, initial, final)
    first, end = _ends(t, y)
    origin = _level(start, first)
    half_width = band * np.abs(amplitude)
    error = y - yf[..., None]
    outside = np.abs(error) > half_width[..., None]
    nt = t.shape[-1]
    last = nt - 1 - np.argmax(outside[..., ::-1], axis=-1)
    any_outside = np.any(outside, axis=-1)
    k = np.minimum(last, nt - 2)
    e0 = np.take_along_axis(error, k[..., None], axis=-1)[..., 0]
    e1 = np.take_along_axis(error, (k + 1)[..., None], axis=-1)[..., 0]
    boundary = np.sign(e0) * half_width
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.where(e1 != e0, (e0 - boundary) / (e0 - e1), 0.0)
    t0, t1 = _at(t, k), _at(t, k + 1)
    entered = t0 + np.clip(frac, 0.0, 1.0) * (t1 - t0)
    result = np.where(any_outside, entered - origin, np.maximum(first - origin, 0.0))
    too_late = any_outside & ((last == nt - 1) | (entered > end - dwell * (end - first)))
    result = np.where(too_late, np.nan, result)
    valid = (amplitude != 0) & np.all(np.isfinite(y), axis=-1)
    return np.where(valid, result, np.nan)


# --------------------------------------------------------------------------
# Integrals over a window
# --------------------------------------------------------------------------


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


# --------------------------------------------------------------------------
# Slope and ringing
# --------------------------------------------------------------------------


def max_slope(t, y) -> np.ndarray:
    """Largest |dy/dt| between successive samples (signal unit per s); intervals of
    zero length (an event instant recorded twice) are skipped."""
    t, y = _checked(t, y)
    dt = np.diff(t, axis=-1)
    positive = dt > 0
    slopes = np.where(positive, np.abs(np.diff(y, axis=-1)) / np.where(positive, dt, 1.0), 0.0)
    return np.max(slopes, axis=-1)


#: Swings smaller than this fraction of the record's whole range (max − min) are
#: treated as numerical noise, not ringing.
RINGING_NOISE = 1e-6

#: Largest rms departure of the swings from one geometric decay (in ln units, and as a
#: fraction of the half period for the extremum spacing) still taken as one ringing.
RINGING_MISFIT = 0.05


def _ringing(t, y, start, floor):
    """Successive extrema of a ringing waveform and the swings between them.

    For y = c + X e^{−σt} sin(ωd t + φ) the extrema are half a period apart and the
    swing between two successive extrema, |x_k − x_{k−1}|, shrinks by the same factor
    e^{−σ Td/2} at each step whatever the level c — so the decrement needs no final
    value, and a run that ends before the ringing has died out is measured correctly.
    ln(swing) and the extremum instants are fitted against the swing's ordinal.

    Returns (half-period decrement, half period in s), NaN where fewer than two swings
    are usable, the usable ones are not one unbroken sequence of alternating maxima
    and minima, or they depart from one geometric decay with even spacing by more
    than :data:`RINGING_MISFIT` (a superposition of modes, a jump inside the window).
    """
    if not 0 <= floor < 1:
        raise MeasurementError(f"ringing floor must be a fraction in [0, 1), got {floor!r}")
    t, y = _checked(t, y)
    ym, yk, yp = y[..., :-2], y[..., 1:-1], y[..., 2:]
    h1 = t[..., 1:-1] - t[..., :-2]
    h2 = t[..., 2:] - t[..., 1:-1]
    usable = (h1 > 0) & (h2 > 0)
    if start is not None:
        usable = usable & (t[..., 1:-1] >= _level(start, y[..., 0])[..., None])
    is_max = (yk > ym) & (yk >= yp)
    is_min = (yk < ym) & (yk <= yp)
    extremum = (is_max | is_min) & usable
    # Parabola through the three samples: vertex value and instant refine each extremum.
    with np.errstate(invalid="ignore", divide="ignore"):
        d1 = (yk - ym) / h1
        d2 = (yp - yk) / h2
        curvature = (d2 - d1) / (h1 + h2)
        slope = (d1 * h2 + d2 * h1) / (h1 + h2)
        shift = np.where(curvature != 0, -slope / (2 * curvature), 0.0)
        shift = np.clip(np.nan_to_num(shift), -h1, h2)
        vertex = yk + slope * shift + curvature * shift * shift
    instant = t[..., 1:-1] + shift

    # Pair each extremum with the previous one: a swing, valid when a maximum follows a
    # minimum or the other way round.
    position = np.arange(extremum.shape[-1])
    latest = np.maximum.accumulate(np.where(extremum, position, -1), axis=-1)
    previous = np.concatenate([np.full(latest.shape[:-1] + (1,), -1), latest[..., :-1]], axis=-1)
    before = np.maximum(previous, 0)
    candidate = extremum & (previous >= 0)
    alternates = np.take_along_axis(is_max, before, axis=-1) != is_max
    swing = np.where(candidate, np.abs(vertex - np.take_along_axis(vertex, before, axis=-1)), 0.0)
    largest = np.max(np.where(candidate & alternates, swing, 0.0), axis=-1, keepdims=True)
    with np.errstate(invalid="ignore"):
        noise = RINGING_NOISE * (np.max(y, axis=-1, keepdims=True) - np.min(y, axis=-1, keepdims=True))
    keep = candidate & alternates & (swing >= floor * largest) & (swing > noise)

    # The kept swings must be one unbroken run among all swings.
    ordinal = np.cumsum(candidate, axis=-1) - 1.0
    count = np.sum(keep, axis=-1)
    first = np.min(np.where(keep, ordinal, np.inf), axis=-1)
    last = np.max(np.where(keep, ordinal, -np.inf), axis=-1)
    rings = (count >= 2) & (last - first + 1 == count)

    n = np.where(keep, ordinal, 0.0)
    w = keep.astype(float)
    sx = np.sum(w * n, axis=-1)
    sxx = np.sum(w * n * n, axis=-1)

    def fit(values):
        """Least-squares slope over the kept swings, and the rms misfit of the line."""
        sy = np.sum(np.where(keep, values, 0.0), axis=-1)
        sxy = np.sum(np.where(keep, n * values, 0.0), axis=-1)
        with np.errstate(invalid="ignore", divide="ignore"):
            slope = (count * sxy - sx * sy) / (count * sxx - sx * sx)
            intercept = (sy - slope * sx) / count
            residual = np.where(keep, values - intercept[..., None] - slope[..., None] * n, 0.0)
            misfit = np.sqrt(np.sum(residual * residual, axis=-1) / count)
        return slope, misfit

    with np.errstate(divide="ignore"):
        log_swing = np.log(np.where(keep, swing, 1.0))
    decay, decay_misfit = fit(log_swing)
    half_period, spacing_misfit = fit(instant)
    # One damped sinusoid: swings on a straight line in ln, extrema evenly spaced.
    with np.errstate(invalid="ignore"):
        rings = rings & (decay_misfit <= RINGING_MISFIT) & (spacing_misfit <= RINGING_MISFIT * np.abs(half_period))
    return np.where(rings, -decay, np.nan), np.where(rings, half_period, np.nan)


def damping_ratio(t, y, *, start=None, floor: float = 1e-3) -> np.ndarray:
    """Damping ratio (dimensionless) of a ringing waveform from its logarithmic decrement.

    The logarithmic decrement δ = ln(x_k / x_{k+1}) of peaks one period apart gives
    ζ = δ / √(4π² + δ²) (Ogata, Modern Control Engineering, ch. 5).  Here δ is
    taken from the swings between successive extrema (each refined by a parabola
    through three samples), which shrink by e^{−δ/2} per half period about any level,
    fitted over all usable swings.  Only extrema after ``start`` (s) count, and only
    swings of at least ``floor`` × the largest swing and above :data:`RINGING_NOISE`
    × the record's range, so numerical noise around the settled value is ignored.

    NaN (no exception) when the waveform does not ring as one damped sinusoid: fewer
    than three usable extrema, or swings that are not one unbroken alternating
    sequence decaying geometrically at even spacing within :data:`RINGING_MISFIT`
    (several modes superposed, or a switching jump inside the window — measure from
    the last switching instant with ``start`` then).
    """
    half_decrement, _ = _ringing(t, y, start, floor)
    delta = 2.0 * half_decrement
    return delta / np.sqrt(4.0 * np.pi**2 + delta**2)


def damped_frequency(t, y, *, start=None, floor: float = 1e-3) -> np.ndarray:
    """Damped frequency (Hz) of a ringing waveform, from the spacing of its successive
    extrema (half a period apart); NaN when it does not ring.  Options as for
    :func:`damping_ratio`."""
    _, half_period = _ringing(t, y, start, floor)
    with np.errstate(divide="ignore", invalid="ignore"):
        return 1.0 / (2.0 * half_period)


# --------------------------------------------------------------------------
# Dispatch by name, and the standard summary of a run
# --------------------------------------------------------------------------

_FUNCTIONS: dict[str, Callable[..., np.ndarray]] = {
    "peak": peak,
    "time_of_peak": time_of_peak,
    "minimum": minimum,
    "final": final,
    "overshoot": overshoot,
    "undershoot": undershoot,
    "rise_time": rise_time,
    "settling_time": settling_time,
    "rms": rms,
    "mean": mean,
    "i2t": i2t,
    "energy": energy,
    "max_slope": max_slope,
    "damping_ratio": damping_ratio,
    "damped_frequency": damped_frequency,
}


def _unknown_figure(figure: Any) -> str:
    return f"unknown figure {figure!r}; choose one of: {', '.join(_FUNCTIONS)}"


def _options_of(function: Callable) -> tuple[str, ...]:
    return tuple(
        name for name, p in inspect.signature(function).parameters.items() if p.kind is p.KEYWORD_ONLY
    )


def measure(figure: str, t, y, *, signal_unit: str, **options: Any) -> np.ndarray:
    """Measure ``figure`` (a name of :data:`FIGURE_UNITS`) on ``y`` sampled at ``t``.

    Parameters
    ----------
    figure : canonical figure name, e.g. ``"peak"``, ``"i2t"``, ``"settling_time"``.
    t : (nt,) s.  y : (..., nt) in ``signal_unit``.
    signal_unit : unit of ``y`` ("V", "A", "W" …); energy needs a power signal ("W").
    **options : the figure function's keyword options (``band``, ``start``, ``final`` …).

    Returns
    -------
    ndarray of shape ``y.shape[:-1]`` in ``figure_unit(figure, signal_unit)``.

    Examples
    --------
    An inrush current of 2 A decaying with τ = 1 ms; ∫ i² dt = 2τ (1 − e⁻¹⁰) ≈ 2 mA²s:

    >>> import numpy as np
    >>> t = np.linspace(0.0, 5e-3, 5001)
    >>> i = 2.0 * np.exp(-t / 1e-3)
    >>> float(measure("peak", t, i, signal_unit="A"))
    2.0
    >>> round(float(measure("i2t", t, i, signal_unit="A")), 6), figure_unit("i2t", "A")
    (0.002, 'A²s')
    """
    function = _FUNCTIONS.get(figure) if isinstance(figure, str) else None
    if function is None:
        raise MeasurementError(_unknown_figure(figure))
    if figure == "energy" and signal_unit != "W":
        raise MeasurementError(
            f"energy is the integral of a power signal (W), but this signal is in {signal_unit!r}; "
            "record the power in the element instead"
        )
    allowed = _options_of(function)
    unknown = sorted(set(options) - set(allowed))
    if unknown:
        choices = ", ".join(allowed) if allowed else "none"
        raise MeasurementError(
            f"figure {figure!r} has no option {', '.join(unknown)}; its options: {choices}"
        )
    for name, value in options.items():
        if value is None:
            continue
        try:
            np.asarray(value, dtype=float)
        except (TypeError, ValueError):
            raise MeasurementError(f"option {name} of figure {figure!r} must be a number, got {value!r}") from None
    if not options and figure in _ROW_WISE:
        rows = _row_blocks(t, y)
        if rows:
            _checked(t, y)  # bad input is reported for the whole batch, as without blocks
            t, y = np.asarray(t, dtype=float), np.asarray(y, dtype=float)
            return np.concatenate([function(t if t.ndim == 1 else t[r], y[r]) for r in rows])
    return function(t, y, **options)


#: Figures computed row by row, with several whole-batch temporaries: without options a
#: large batch is measured a block of rows at a time, bit-identical (each reduction runs
#: along its own row) and with the temporaries kept in cache.
_ROW_WISE = frozenset(("overshoot", "undershoot", "settling_time", "rms", "mean", "i2t", "energy"))
_BLOCK_BYTES = 1 << 20  # per temporary array: small enough to stay in cache


def _row_blocks(t, y) -> list:
    """Slices of the rows of a large (N, nt) batch, about _BLOCK_BYTES of samples each, when
    t is one clock (nt,) or one per row (N, nt); [] when blocks would not help."""
    if not (isinstance(y, np.ndarray) and isinstance(t, np.ndarray) and y.ndim == 2
            and (t.ndim == 1 or t.shape == y.shape) and y.dtype == float and t.dtype == float):
        return []
    step = max(1, _BLOCK_BYTES // max(1, 8 * y.shape[1]))
    if y.shape[0] <= step:
        return []
    return [slice(a, a + step) for a in range(0, y.shape[0], step)]


def summarise(waveforms: Any) -> dict[str, dict[str, tuple[Any, str]]]:
    """The standard figures of every recorded signal of a run.

    Parameters
    ----------
    waveforms : an object with ``t`` (nt,) s, ``signals`` {label: (..., nt)} and
        ``units`` {label: unit} (the transient engine's ``Waveforms``).

    Returns
    -------
    {label: {figure: (value, unit)}} with :data:`STANDARD_FIGURES`, plus ``i2t`` for
    currents (unit "A") and ``energy`` for power signals (unit "W").  Values are
    numpy values (floats for a single run); figures that do not apply are NaN —
    in particular the step figures (overshoot, undershoot, rise and settling time)
    of a signal that returns to where it began, such as an inrush current pulse,
    or that has not settled by the end of the run (AC, still ringing).  Default options
    throughout: the time of peak is an instant on the run's clock, and the settling
    time counts from the start of the run (not from a later switching instant).
    """
    t = waveforms.t
    out: dict[str, dict[str, tuple[Any, str]]] = {}
    for label, y in waveforms.signals.items():
        unit = waveforms.units.get(label, "")
        y = np.asarray(y, dtype=float)
        figures = list(STANDARD_FIGURES)
        if unit == "A":
            figures.append("i2t")
        if unit == "W":
            figures.append("energy")
        # Step figures need a step: a signal that moved and came back (an inrush
        # pulse) or one that never settles (AC, still ringing) has no final state
        # level to refer to, so its overshoot or rise time would mean nothing.
        no_step = _is_pulse(y) | np.isnan(measure("settling_time", t, y, signal_unit=unit))
        row = {}
        for name in figures:
            value = measure(name, t, y, signal_unit=unit)
            if name in _STEP_FIGURES:
                value = np.where(no_step, np.nan, value)
            row[name] = (_plain(value), figure_unit(name, unit))
        out[label] = row
    return out


#: Figures that refer to a step from the initial to the final level.
_STEP_FIGURES = ("overshoot", "undershoot", "rise_time", "settling_time")


def _is_pulse(y: np.ndarray, ratio: float = 1e-3) -> np.ndarray:
    """True where the signal ends (almost) where it began although it moved: an inrush
    pulse rather than a step, for which step figures would divide by a vanishing
    amplitude.  The threshold is |final − initial| < ratio × (max − min)."""
    swing = np.max(y, axis=-1) - np.min(y, axis=-1)
    return np.abs(y[..., -1] - y[..., 0]) < ratio * swing


def _plain(value: np.ndarray) -> Any:
    value = np.asarray(value)
    return float(value) if value.ndim == 0 else value
