"""What a waveform plot shows where: panels by unit and scale, zoom windows, running integrals.

Plain numpy decisions, kept apart from the drawing in :mod:`.plots` so they can
be tested without matplotlib:

* :func:`panels` groups the recorded signals by unit and, within a unit, by
  scale: a signal whose peak is more than ten times smaller than the largest of
  its unit gets a panel of its own instead of a flat line at zero;
* :func:`zoom_windows` finds where the action is: a spike much narrower than
  the window (a contactor closing onto a charged link) or a whole panel whose
  activity sits in a small part of the window (a filter that settles in the
  first 15 %), each worth an inset;
* :func:`running_integral` is the running I²t (of a current) or energy (of a
  power) for fuse and resistor work.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

__all__ = ["Panel", "panels", "zoom_windows", "running_integral", "SCALE_RATIO", "NARROW", "QUIET_SHARE"]

#: Two signals of one unit share a panel only when their peaks are within this ratio.
SCALE_RATIO = 10.0
#: A spike is worth an inset when its width at half height is below this share of the window.
NARROW = 0.01
#: A panel whose activity spans less than this share of the window gets an inset on it.
QUIET_SHARE = 0.3


@dataclass(frozen=True)
class Panel:
    """unit : "V", "A", "W" or "".  labels : the signals drawn, largest peak first.
    scale_note : "" or words saying the panel holds the smaller signals of its unit."""

    unit: str
    labels: tuple[str, ...]
    scale_note: str = ""


def _peak(y: np.ndarray) -> float:
    finite = np.abs(y[np.isfinite(y)])
    return float(finite.max()) if finite.size else 0.0


def panels(signals: Mapping[str, np.ndarray], units: Mapping[str, str], labels: Sequence[str],
           max_panels: int = 5) -> list[Panel]:
    """Panels in the order voltages, currents, powers, others; within a unit, by scale.

    Parameters
    ----------
    signals : label → samples (n,).  units : label → unit.  labels : which signals to draw.
    max_panels : at most this many panels (the rest stay in the CSV).
    """
    by_unit: dict[str, list[str]] = {}
    for label in labels:
        by_unit.setdefault(units.get(label, ""), []).append(label)
    order = sorted(by_unit, key=lambda u: ("V", "A", "W").index(u) if u in ("V", "A", "W") else 9)
    out: list[Panel] = []
    for unit in order:
        members = sorted(by_unit[unit], key=lambda m: -_peak(np.asarray(signals[m], dtype=float)))
        group: list[str] = []
        top = 0.0
        for m in members:
            p = _peak(np.asarray(signals[m], dtype=float))
            if group and p * SCALE_RATIO < top:
                out.append(Panel(unit, tuple(group), "" if len(out) == 0 or out[-1].unit != unit
                                 else "smaller signals of this unit"))
                group, top = [], 0.0
            if not group:
                top = p
            group.append(m)
        if group:
            note = "smaller signals of this unit" if out and out[-1].unit == unit else ""
            out.append(Panel(unit, tuple(group), note))
    return out[:max_panels]


def _spike(t: np.ndarray, y: np.ndarray) -> tuple[float, float] | None:
    """(start, end) s around a narrow peak of ``y``, or None when its peak is not narrow."""
    finite = np.isfinite(y)
    if finite.sum() < 5:
        return None
    a = np.where(finite, np.abs(y), 0.0)
    k = int(np.argmax(a))
    if a[k] == 0.0:
        return None
    level = a[k] / 2.0
    low = np.flatnonzero(a[:k] < level)
    high = np.flatnonzero(a[k:] < level)
    if high.size == 0:  # still above half height at the end: not a spike
        return None
    i0 = low[-1] + 1 if low.size else 0
    i1 = k + high[0]
    width = t[i1] - t[i0]
    span = t[-1] - t[0]
    if span <= 0 or width > NARROW * span:
        return None
    width = max(width, t[min(k + 1, t.size - 1)] - t[k])
    return max(t[0], t[i0] - 3.0 * width), min(t[-1], t[i1] + 8.0 * width)


def _active(t: np.ndarray, ys: Sequence[np.ndarray]) -> tuple[float, float] | None:
    """(start, end) s of the stretch in which the panel's signals move (beyond 2 % of their range)."""
    first, last = np.inf, -np.inf
    for y in ys:
        finite = np.isfinite(y)
        if finite.sum() < 5:
            continue
        yy = y[finite]
        tt = t[finite]
        band = 0.02 * float(np.ptp(yy))
        if band == 0.0:
            continue
        moving = np.flatnonzero(np.abs(yy - yy[0]) > band)
        settled = np.flatnonzero(np.abs(yy - yy[-1]) > band)
        if moving.size:
            first = min(first, tt[max(moving[0] - 1, 0)])
        if settled.size:
            last = max(last, tt[min(settled[-1] + 1, tt.size - 1)])
    if not (np.isfinite(first) and np.isfinite(last)) or last <= first:
        return None
    span = t[-1] - t[0]
    if last - first > QUIET_SHARE * span:
        return None
    pad = 0.1 * (last - first)
    return max(t[0], first - pad), min(t[-1], last + pad)


def zoom_windows(t: np.ndarray, ys: Sequence[np.ndarray]) -> tuple[float, float] | None:
    """The one window (s) worth an inset on a panel, or None.

    The narrowest spike among ``ys`` (each (n,) on the common time axis ``t``)
    wins; failing that, the stretch where the panel's signals move when it is a
    small part of the window.
    """
    t = np.asarray(t, dtype=float)
    spikes = [w for w in (_spike(t, np.asarray(y, dtype=float)) for y in ys) if w is not None]
    if spikes:
        return min(spikes, key=lambda w: w[1] - w[0])
    return _active(t, [np.asarray(y, dtype=float) for y in ys])


def running_integral(t: np.ndarray, y: np.ndarray, square: bool) -> np.ndarray:
    """∫₀ᵗ y² dτ (``square``: I²t of a current, A²s) or ∫₀ᵗ y dτ (energy of a power, J), trapezoidal, (n,).

    Matches the final I²t and energy figures of :mod:`circuitode.analysis.figures.integrals`
    (trapezoidal rule on the same samples).
    """
    t = np.asarray(t, dtype=float)
    f = np.asarray(y, dtype=float)
    f = f * f if square else f
    steps = 0.5 * (f[1:] + f[:-1]) * np.diff(t)
    return np.concatenate([[0.0], np.cumsum(steps)])
