"""Ringing figures: damping ratio and damped frequency from the successive extrema of a waveform.

The decrement is read from the swings between successive extrema (logarithmic
decrement; Ogata, Modern Control Engineering, ch. 5; Nise, Control Systems
Engineering, ch. 4).  Inputs and outputs follow :mod:`circuitode.analysis.figures`.
"""
from __future__ import annotations

import numpy as np

from ._common import MeasurementError, _checked, _level

__all__ = ["RINGING_NOISE", "RINGING_MISFIT", "damping_ratio", "damped_frequency"]


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
    if y.shape[-1] < 3:  # no interior sample, so no extremum: it does not ring
        nothing = np.full(y.shape[:-1], np.nan)
        return nothing, nothing.copy()
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
