"""The rows of a sampled waveform that lie in a window [start, stop] (s).

A window's figure sees the waveform just after an event at ``start`` and just
before one at ``stop``: where an instant repeats (the rows before and after a
switching instant or a source corner), the window begins at the last row of
``start`` and ends at the first row of ``stop``.  A window end that is not a row
is not interpolated: the window then holds the rows inside it.
"""
from __future__ import annotations

from typing import Any

import numpy as np

from ._common import MeasurementError

__all__ = ["window_bounds", "window_groups"]


def _slack(t: np.ndarray) -> float:
    return 1e-12 * max(float(np.max(np.abs(t[..., -1]))), float(np.max(np.abs(t[..., 0]))), 1e-300)


def window_bounds(t: Any, start: float | None, stop: float | None) -> tuple[np.ndarray, np.ndarray]:
    """(lo, hi) row indices, one per clock of ``t`` ((nt,) or (N, nt)): the window holds rows
    lo … hi inclusive.  None for ``start``/``stop`` is the first/last row.

    Raises MeasurementError when start ≥ stop or the window holds fewer than two rows.
    """
    t = np.asarray(t, dtype=float)
    t2 = np.atleast_2d(t)
    nt = t2.shape[-1]
    if start is not None and stop is not None and not float(start) < float(stop):
        raise MeasurementError(f"a window must start before it stops, got start {start!r} s and stop {stop!r} s")
    slack = _slack(t2)
    if start is None:
        lo = np.zeros(t2.shape[0], dtype=int)
    else:
        lo = np.sum(t2 <= float(start) + slack, axis=-1) - 1           # last row at or before start
        lo = np.clip(lo, 0, nt - 1)
        lo = np.where(np.take_along_axis(t2, lo[:, None], -1)[:, 0] < float(start) - slack, lo + 1, lo)
    if stop is None:
        hi = np.full(t2.shape[0], nt - 1)
    else:
        ahead = t2 >= float(stop) - slack
        hi = np.where(ahead.any(axis=-1), np.argmax(ahead, axis=-1), nt - 1)  # first row at or after stop
        hi = np.where(np.take_along_axis(t2, hi[:, None], -1)[:, 0] > float(stop) + slack, hi - 1, hi)
    if np.any(hi - lo < 1):
        raise MeasurementError(
            f"the window {'' if start is None else f'from {start:g} s '}{'' if stop is None else f'to {stop:g} s '}"
            f"holds fewer than two instants of the waveform; widen it or take a finer step")
    return (lo[0], hi[0]) if t.ndim == 1 else (lo, hi)


def window_groups(t: Any, start: float | None, stop: float | None) -> list[tuple[np.ndarray, slice]]:
    """Clocks of a batch ``t`` (N, nt) grouped by the rows their window holds:
    [(sample indices, slice of rows)], so each group is measured as one array."""
    lo, hi = window_bounds(t, start, stop)
    pairs = np.stack([lo, hi], axis=1)
    found, inverse = np.unique(pairs, axis=0, return_inverse=True)
    return [(np.flatnonzero(inverse.ravel() == g), slice(int(a), int(b) + 1)) for g, (a, b) in enumerate(found)]
