"""Level figures: the peak (largest magnitude) and its instant, the minimum, the final level.

The peak is the largest |y|, not the largest y: surge ratings of fuses,
resistors, contacts and insulation are magnitudes, and under the reference
directions a current delivered by a source is negative, so a signed maximum
would let "peak current through V1 < 20 A" pass on the wrong number.  The
signed extremes remain available as ``minimum`` and through the sign of the
waveform itself.

Inputs and outputs follow :mod:`circuitode.analysis.figures`: ``t`` in s, ``y`` of shape
``(..., nt)``, one value per signal in the signal's unit (s for the instant).
"""
from __future__ import annotations

import numpy as np

from ._common import MeasurementError, _at, _checked, _ends, _integral

__all__ = ["peak", "time_of_peak", "minimum", "final", "settled"]


def peak(t, y) -> np.ndarray:
    """Largest magnitude max |y| (signal unit, ≥ 0), shape ``y.shape[:-1]``."""
    t, y = _checked(t, y)
    # the larger of max y and −min y: |y| without a temporary array of the batch's size
    # (NaN propagates through both, as through abs)
    return np.maximum(np.max(y, axis=-1), -np.min(y, axis=-1)) + 0.0  # + 0.0: never −0


def time_of_peak(t, y) -> np.ndarray:
    """Instant (s, on the run's own clock) of the largest |y|; the first one if repeated."""
    t, y = _checked(t, y)
    k = _first_largest_magnitude(y)  # the first NaN where there is one, so one pass tells both
    return np.where(np.isnan(np.take_along_axis(y, k[..., None], axis=-1)[..., 0]), np.nan, _at(t, k))


def _first_largest_magnitude(y: np.ndarray) -> np.ndarray:
    """argmax |y| along the last axis (the first index of the largest magnitude, or of the
    first NaN) without an |y| temporary: the first maximum or the first minimum of y,
    whichever is larger in magnitude, the earlier of the two when they tie (a NaN is
    the first maximum and the first minimum at once)."""
    hi, lo = np.argmax(y, axis=-1), np.argmin(y, axis=-1)
    top = np.take_along_axis(y, hi[..., None], axis=-1)[..., 0]
    bottom = -np.take_along_axis(y, lo[..., None], axis=-1)[..., 0]
    return np.where(top > bottom, hi, np.where(bottom > top, lo, np.minimum(hi, lo)))


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


def settled(t, y, *, band: float = 0.02, dwell: float = 0.05) -> np.ndarray:
    """Whether the signal has settled by the end of the window (bool, shape ``y.shape[:-1]``).

    True when over the last ``dwell`` fraction of the window (5 % by default) the
    signal stays within ``band`` (2 %, the usual settling band; Ogata, ch. 5) of its
    whole swing max − min; a signal that never moves is settled.  ``final`` is the
    value at the end of the window either way; this says whether it is a final
    state level or a snapshot of something still moving (ringing, ripple, AC).
    """
    if not (0 < dwell < 1 and band > 0):
        raise MeasurementError(f"settled needs 0 < dwell < 1 and band > 0, got dwell={dwell!r}, band={band!r}")
    t, y = _checked(t, y)
    first, last = _ends(t, y)
    tail = t >= (last - dwell * (last - first))[..., None]
    swing = np.max(y, axis=-1) - np.min(y, axis=-1)
    late = np.max(np.where(tail, y, -np.inf), axis=-1) - np.min(np.where(tail, y, np.inf), axis=-1)
    return late <= band * swing
