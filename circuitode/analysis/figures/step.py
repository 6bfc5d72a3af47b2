"""Step-response figures in IEEE Std 181-2011 terms: overshoot, undershoot, rise and settling time.

A step goes from an *initial* to a *final* state level (by default the first and
last samples); its *amplitude* is final − initial.  Overshoot and undershoot are
aberrations in percent of the amplitude; the rise time is the transition duration
between the 10 % and 90 % reference levels, whichever way the step goes.
A waveform whose amplitude is small beside its own peak-to-peak range (an
inductor current that starts at 0 A, rings to 61 A and ends at 2 A) is no step:
its overshoot, undershoot and rise time, referred to that amplitude, would be
meaningless numbers (2977 %), so they are NaN (:data:`NO_STEP`, :func:`has_step`).
Inputs and outputs follow :mod:`circuitode.analysis.figures`.
"""
from __future__ import annotations

from typing import Any

import numpy as np

from ._common import MeasurementError, _at, _checked, _ends, _level

__all__ = ["overshoot", "undershoot", "rise_time", "settling_time", "has_step", "NO_STEP", "NO_STEP_WORDS"]

#: A waveform is a step only when |final − initial| is at least this share of its peak-to-peak
#: range; below it an overshoot would exceed (1 − NO_STEP)/NO_STEP = 900 % (our choice: IEEE Std
#: 181-2011 refers aberrations to the amplitude, but sets no bound on it).
NO_STEP = 0.1
#: How a figure that needs a step is explained when there is none (run text, limits, batches).
NO_STEP_WORDS = (f"no step (final ≈ initial): |final − initial| is below {100 * NO_STEP:g} % of the "
                 "peak-to-peak range, and step figures are in % of that amplitude")


def has_step(amplitude, swing) -> np.ndarray:
    """True where an amplitude final − initial is a step: finite, non-zero and at least
    NO_STEP of the waveform's peak-to-peak ``swing`` (same unit)."""
    amplitude, swing = np.asarray(amplitude, dtype=float), np.asarray(swing, dtype=float)
    with np.errstate(invalid="ignore"):
        return np.isfinite(amplitude) & (amplitude != 0) & ~(np.abs(amplitude) < NO_STEP * swing)


def _stepped(y: np.ndarray, amplitude: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        return has_step(amplitude, np.max(y, axis=-1) - np.min(y, axis=-1))


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


def overshoot(t, y, *, initial=None, final=None) -> np.ndarray:
    """Overshoot (%): the largest excursion beyond the final state level in the direction
    of the step, in percent of the amplitude |final − initial| (IEEE Std 181-2011).

    ``initial`` and ``final`` default to the first and last samples.  0 when the signal
    never passes the final level; NaN when there is no step to refer to (:func:`has_step`).
    """
    t, y = _checked(t, y)
    y0, yf, amplitude, direction = _step_levels(y, initial, final)
    beyond = np.max(direction[..., None] * (y - yf[..., None]), axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(_stepped(y, amplitude), 100.0 * np.maximum(beyond, 0.0) / np.abs(amplitude), np.nan)


def undershoot(t, y, *, initial=None, final=None) -> np.ndarray:
    """Post-transition undershoot (%): after the signal first reaches the final state
    level, its largest excursion back towards the initial level, in percent of the
    amplitude (IEEE Std 181-2011).  For a ringing step this is the first trough.

    0 when the signal never reaches the final level or never comes back; NaN when there
    is no step (:func:`has_step`).
    """
    t, y = _checked(t, y)
    y0, yf, amplitude, direction = _step_levels(y, initial, final)
    progress = direction[..., None] * (y - yf[..., None])  # ≥ 0 once at or beyond the final level
    reached = np.cumsum(progress >= 0, axis=-1) > 0
    back = np.max(np.where(reached, -progress, 0.0), axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(_stepped(y, amplitude), 100.0 * np.maximum(back, 0.0) / np.abs(amplitude), np.nan)


def rise_time(t, y, *, low: float = 0.1, high: float = 0.9, initial=None, final=None) -> np.ndarray:
    """Transition duration (s) between the ``low`` and ``high`` reference levels
    (10 % and 90 % of the amplitude by default, IEEE Std 181-2011), taking the first
    crossing of each, interpolated linearly between samples.  Works for falling steps
    too.  NaN when a level is never reached or there is no step (:func:`has_step`).
    """
    if not 0.0 <= low < high <= 1.0:
        raise MeasurementError(
            f"reference levels need 0 ≤ low < high ≤ 1, got low={low!r}, high={high!r}"
        )
    t, y = _checked(t, y)
    y0, yf, amplitude, _ = _step_levels(y, initial, final)
    with np.errstate(invalid="ignore", divide="ignore"):
        z = (y - y0[..., None]) / amplitude[..., None]
    return np.where(_stepped(y, amplitude), _first_crossing(t, z, high) - _first_crossing(t, z, low), np.nan)


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
