"""Waveform figures of a whole chunk whose samples each have their own clock.

:mod:`circuitode.measure` takes one time axis ``t`` (nt,) shared by every
signal.  In a batch, a threshold switch acts at each sample's own instant and
that instant is recorded twice (just before and just after), so the time axes
differ from sample to sample: here ``t`` has shape (N, nt) like ``y``.  The
definitions are those of :mod:`circuitode.measure` with default options (same
formulas, same handling of a repeated instant); the batch tests check that
each sample's figures equal the single-run figures.
"""
from __future__ import annotations

import numpy as np

__all__ = ["BATCH_FIGURES", "STEP_FIGURES", "batch_figure", "is_pulse"]

#: Figures that refer to a step from the initial to the final level.
STEP_FIGURES = ("overshoot", "undershoot", "rise_time", "settling_time")


def _take(a: np.ndarray, k: np.ndarray) -> np.ndarray:
    return np.take_along_axis(a, k[..., None], axis=-1)[..., 0]


def _trapezoid(t, y):
    return np.sum(0.5 * (y[..., 1:] + y[..., :-1]) * np.diff(t, axis=-1), axis=-1)


def _levels(y):
    y0, yf = y[..., 0], y[..., -1]
    amplitude = yf - y0
    with np.errstate(invalid="ignore", divide="ignore"):
        direction = np.where(amplitude != 0, np.sign(amplitude), np.nan)
    return y0, yf, amplitude, direction


def _first_crossing(t, z, level):
    reached = z >= level
    k = np.argmax(reached, axis=-1)
    found = _take(reached, k)
    kp = np.maximum(k - 1, 0)
    z0, z1 = _take(z, kp), _take(z, k)
    t0, t1 = _take(t, kp), _take(t, k)
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.where((k > 0) & (z1 != z0), (level - z0) / (z1 - z0), 0.0)
    return np.where(found, t0 + np.clip(frac, 0.0, 1.0) * (t1 - t0), np.nan)


def _peak(t, y):
    return np.max(y, axis=-1)


def _time_of_peak(t, y):
    return _take(t, np.argmax(y, axis=-1))


def _minimum(t, y):
    return np.min(y, axis=-1)


def _final(t, y):
    return y[..., -1].copy()


def _overshoot(t, y):
    _, yf, amplitude, direction = _levels(y)
    beyond = np.max(direction[..., None] * (y - yf[..., None]), axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return 100.0 * np.maximum(beyond, 0.0) / np.abs(amplitude)


def _undershoot(t, y):
    _, yf, amplitude, direction = _levels(y)
    progress = direction[..., None] * (y - yf[..., None])
    reached = np.cumsum(progress >= 0, axis=-1) > 0
    back = np.max(np.where(reached, -progress, 0.0), axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(amplitude != 0, 100.0 * np.maximum(back, 0.0) / np.abs(amplitude), np.nan)


def _rise_time(t, y):
    y0, _, amplitude, _ = _levels(y)
    with np.errstate(invalid="ignore", divide="ignore"):
        z = (y - y0[..., None]) / amplitude[..., None]
    return _first_crossing(t, z, 0.9) - _first_crossing(t, z, 0.1)


def _settling_time(t, y, band=0.02):
    _, yf, amplitude, _ = _levels(y)
    half_width = band * np.abs(amplitude)
    error = y - yf[..., None]
    outside = np.abs(error) > half_width[..., None]
    nt = y.shape[-1]
    last = nt - 1 - np.argmax(outside[..., ::-1], axis=-1)
    any_outside = np.any(outside, axis=-1)
    k = np.minimum(last, nt - 2)
    e0, e1 = _take(error, k), _take(error, k + 1)
    boundary = np.sign(e0) * half_width
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.where(e1 != e0, (e0 - boundary) / (e0 - e1), 0.0)
    tk, tk1 = _take(t, k), _take(t, k + 1)
    origin = t[..., 0]
    entered = tk + np.clip(frac, 0.0, 1.0) * (tk1 - tk)
    result = np.where(any_outside, entered - origin, 0.0)
    result = np.where(any_outside & (last == nt - 1), np.nan, result)
    return np.where(amplitude != 0, result, np.nan)


def _span(t):
    return t[..., -1] - t[..., 0]


def _mean(t, y):
    return _trapezoid(t, y) / _span(t)


def _rms(t, y):
    return np.sqrt(_trapezoid(t, y * y) / _span(t))


def _i2t(t, y):
    return _trapezoid(t, y * y)


def _energy(t, y):
    return _trapezoid(t, y)


def _max_slope(t, y):
    dt = np.diff(t, axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        slopes = np.abs(np.diff(y, axis=-1)) / dt
    return np.max(np.where(dt > 0, slopes, -np.inf), axis=-1)


def _ringing(t, y, floor=1e-3):
    yf = y[..., -1]
    e = y - yf[..., None]
    em, ek, ep = e[..., :-2], e[..., 1:-1], e[..., 2:]
    h1 = t[..., 1:-1] - t[..., :-2]
    h2 = t[..., 2:] - t[..., 1:-1]
    usable = (h1 > 0) & (h2 > 0)
    is_max = (ek > em) & (ek >= ep) & (ek > 0)
    is_min = (ek < em) & (ek <= ep) & (ek < 0)
    extremum = (is_max | is_min) & usable
    with np.errstate(invalid="ignore", divide="ignore"):
        d1 = (ek - em) / h1
        d2 = (ep - ek) / h2
        curvature = (d2 - d1) / (h1 + h2)
        slope = (d1 * h2 + d2 * h1) / (h1 + h2)
        shift = np.where(curvature != 0, -slope / (2 * curvature), 0.0)
        shift = np.clip(shift, -h1, h2)
        height = np.abs(ek + slope * shift + curvature * shift * shift)
    instant = t[..., 1:-1] + shift
    largest = np.max(np.where(extremum, height, 0.0), axis=-1, keepdims=True)
    keep = extremum & (height >= floor * largest) & (height > 0)
    n = np.cumsum(keep, axis=-1) - 1.0
    count = np.sum(keep, axis=-1)
    w = keep.astype(float)

    def fitted_slope(values):
        sx = np.sum(w * n, axis=-1)
        sy = np.sum(np.where(keep, values, 0.0), axis=-1)
        sxx = np.sum(w * n * n, axis=-1)
        sxy = np.sum(np.where(keep, n * values, 0.0), axis=-1)
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(count >= 2, (count * sxy - sx * sy) / (count * sxx - sx * sx), np.nan)

    with np.errstate(divide="ignore"):
        log_height = np.log(np.where(keep, height, 1.0))
    return -fitted_slope(log_height), fitted_slope(instant)


def _damping_ratio(t, y):
    delta = 2.0 * _ringing(t, y)[0]
    return delta / np.sqrt(4.0 * np.pi**2 + delta**2)


def _damped_frequency(t, y):
    with np.errstate(divide="ignore", invalid="ignore"):
        return 1.0 / (2.0 * _ringing(t, y)[1])


BATCH_FIGURES = {
    "peak": _peak,
    "time_of_peak": _time_of_peak,
    "minimum": _minimum,
    "final": _final,
    "overshoot": _overshoot,
    "undershoot": _undershoot,
    "rise_time": _rise_time,
    "settling_time": _settling_time,
    "rms": _rms,
    "mean": _mean,
    "i2t": _i2t,
    "energy": _energy,
    "max_slope": _max_slope,
    "damping_ratio": _damping_ratio,
    "damped_frequency": _damped_frequency,
}


def is_pulse(y: np.ndarray, ratio: float = 1e-3) -> np.ndarray:
    """True where a signal ends (almost) where it began although it moved — an inrush
    pulse, whose step figures are reported as NaN (the rule of measure.summarise)."""
    swing = np.max(y, axis=-1) - np.min(y, axis=-1)
    return np.abs(y[..., -1] - y[..., 0]) < ratio * swing


def batch_figure(name: str, t: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Figure ``name`` of each sample: t (N, nt) s, y (N, nt) → (N,).

    Step figures of a pulse-shaped signal are NaN, as in the single-run summary.
    """
    t = np.asarray(t, dtype=float)
    y = np.asarray(y, dtype=float)
    value = BATCH_FIGURES[name](np.broadcast_to(t, y.shape), y)
    if name in STEP_FIGURES:
        value = np.where(is_pulse(y), np.nan, value)
    return value
