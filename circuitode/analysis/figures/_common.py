"""Shared input checks and array helpers of the figure modules, and their error.

Private to :mod:`circuitode.analysis.figures`: validation of ``(t, y)``, picking instants
by sample index, optional levels and instants per signal, and the trapezoidal
window integral that several figures build on.
"""
from __future__ import annotations

from contextlib import contextmanager
from contextvars import ContextVar
from typing import Any

import numpy as np

from ...errors import CircuitodeError

__all__ = ["MeasurementError", "trusted_clocks"]

#: Clocks (float ndarrays, by identity) validated once for a run of figures, so that the
#: figures of one batch do not pass over the same (N, nt) time array again each (a
#: context variable: threads measuring other batches are not affected).
_TRUSTED: ContextVar[tuple] = ContextVar("circuitode_trusted_clocks", default=())


class MeasurementError(CircuitodeError):
    """A figure was asked for with input it cannot be measured on (bad times, unknown figure…)."""



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
    trusted = any(t is c for c in _TRUSTED.get())
    if t.ndim > 1:
        try:
            t, y = np.broadcast_arrays(t, y)
        except ValueError:
            raise MeasurementError(
                f"time axes of shape {t.shape} do not fit signals of shape {y.shape}"
            ) from None
    if not trusted:
        _check_clock(t)
    return t, y


@contextmanager
def trusted_clocks(*clocks: np.ndarray, checked: bool = False):
    """Within the block, figures on these clocks (float ndarrays, by identity) skip the
    clock checks: they are checked here once on entry, unless ``checked`` says the
    caller did (slices of a clock already checked).  The arrays must not change inside."""
    if not checked:
        for c in clocks:
            _check_clock(np.asarray(c, dtype=float))
    token = _TRUSTED.set(_TRUSTED.get() + tuple(clocks))
    try:
        yield
    finally:
        _TRUSTED.reset(token)


def _check_clock(t: np.ndarray) -> None:
    """Raises MeasurementError unless every row of t is finite, non-decreasing and spans
    a positive interval."""
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
