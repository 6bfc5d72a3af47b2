"""Whole-window figures that a run carries beyond its rows: integrals and located extrema.

``Waveforms.integrals`` (∫ y dt, ∫ y² dt from the integrator) give mean, rms, I²t
and energy (:mod:`.window_integrals`); ``Waveforms.extrema`` (maximum and minimum
located between rows on the solution, :mod:`circuitode.transient.extrema`) give the peak,
its instant, the minimum and the overshoot; ``Waveforms.between`` (values between
rows on the solution) locates the crossings behind the rise time (10 % and 90 %
of the step, IEEE Std 181) and the settling time (last exit from the 2 % band,
Ogata ch. 5), after the rows have found the interval each lies in.
:func:`carried_figure` returns such a figure, or None when the run carries
nothing for it — then it is measured on the rows as before.
"""
from __future__ import annotations

import math
from typing import Any

import numpy as np

from .figures import rise_time, settling_time
from .figures.step import has_step
from .window_integrals import integral_figure

__all__ = ["EXTREMUM_FIGURES", "CROSSING_FIGURES", "carried_figure"]

#: Figures whose crossing instants are located between rows.
CROSSING_FIGURES = ("rise_time", "settling_time")

#: Figures read from the located extrema.
EXTREMUM_FIGURES = ("peak", "time_of_peak", "minimum", "overshoot")


def _extremum_figure(figure: str, waveforms: Any, label: str) -> float | None:
    extrema = getattr(waveforms, "extrema", None) or {}
    found = extrema.get(label)
    if found is None or figure not in EXTREMUM_FIGURES:
        return None
    if figure == "peak":
        return found.peak()[0]
    if figure == "time_of_peak":
        return found.peak()[1]
    if figure == "minimum":
        return found.minimum
    y = waveforms.signals[label]  # overshoot (IEEE Std 181): beyond the final level, in % of the step
    initial, final = float(y[0]), float(y[-1])
    amplitude = final - initial
    if amplitude == 0 or not math.isfinite(amplitude):
        return None
    if not has_step(amplitude, found.maximum - found.minimum):
        return float("nan")  # no step to refer to (analysis.figures.step.NO_STEP)
    beyond = found.maximum - final if amplitude > 0 else final - found.minimum
    return 100.0 * max(beyond, 0.0) / abs(amplitude)


def _crossing(between, label: str, t: np.ndarray, i: int, level_of) -> float | None:
    """Instant in [t[i], t[i+1]] where level_of(y) changes sign, on the solution; None when
    the solution cannot be evaluated there or shows no sign change."""
    f = between.function(label, i)
    if f is None:
        return None
    h = float(t[i + 1] - t[i])
    a, b = level_of(f(0.0)), level_of(f(h))
    if a == 0:
        return float(t[i])
    if a * b > 0:
        return None
    from ..solvers.roots import brent_root  # the solvers package loads scipy.linalg; check needs neither

    return float(t[i]) + brent_root(lambda s: level_of(f(s)), 0.0, h, xtol=1e-15 * max(float(t[-1]), h),
                                    rtol=4 * np.finfo(float).eps)


def _crossing_figure(figure: str, waveforms: Any, label: str) -> float | None:
    between = getattr(waveforms, "between", None)
    if figure not in CROSSING_FIGURES or between is None or not between.knows(label):
        return None
    t = np.asarray(waveforms.t, dtype=float)
    y = np.asarray(waveforms.signals[label], dtype=float)
    y0, yf = float(y[0]), float(y[-1])
    amplitude = yf - y0
    if figure == "rise_time":
        rows = float(rise_time(t, y))
        if not math.isfinite(rows):
            return None
        instants = []
        for fraction in (0.1, 0.9):
            z = (y - y0) / amplitude
            k = int(np.argmax(z >= fraction))
            while k > 0 and not t[k] > t[k - 1]:  # step back over a repeated instant
                k -= 1
            if k == 0:
                instants.append(float(t[0]))
                continue
            found = _crossing(between, label, t, k - 1, lambda v, f=fraction: (v - y0) / amplitude - f)
            if found is None:
                return None
            instants.append(found)
        return instants[1] - instants[0]
    rows = float(settling_time(t, y))
    if not math.isfinite(rows) or rows == 0.0:
        return None
    half_width = 0.02 * abs(amplitude)
    outside = np.flatnonzero(np.abs(y - yf) > half_width)
    k = int(outside[-1])
    side = 1.0 if y[k] > yf else -1.0
    found = _crossing(between, label, t, k, lambda v: side * (v - yf) - half_width)
    return None if found is None else found - float(t[0])


def carried_figure(figure: str, waveforms: Any, label: str) -> float | None:
    """The whole-window ``figure`` of ``label`` from what the run carries, or None.

    Parameters
    ----------
    figure : a figure name; only mean, rms, i2t, energy, peak, time_of_peak, minimum,
        overshoot, rise_time and settling_time (default options) can be carried.
    waveforms : a run's ``Waveforms``.  label : the recorded quantity.

    Returns
    -------
    float in the figure's SI unit, or None (measure it on the rows).
    """
    value = integral_figure(figure, waveforms, label)
    if value is None:
        value = _extremum_figure(figure, waveforms, label)
    return value if value is not None else _crossing_figure(figure, waveforms, label)
