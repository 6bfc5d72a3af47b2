"""Whole-window figures that a run carries beyond its rows: integrals and located extrema.

``Waveforms.integrals`` (∫ y dt, ∫ y² dt from the integrator) give mean, rms, I²t
and energy (:mod:`.window_integrals`); ``Waveforms.extrema`` (maximum and minimum
located between rows on the solution, :mod:`circuitode.extrema`) give the peak,
its instant, the minimum and the overshoot.  :func:`carried_figure` returns such a
figure, or None when the run carries nothing for it — then it is measured on the
rows as before.
"""
from __future__ import annotations

import math
from typing import Any

from .window_integrals import integral_figure

__all__ = ["EXTREMUM_FIGURES", "carried_figure"]

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
    beyond = found.maximum - final if amplitude > 0 else final - found.minimum
    return 100.0 * max(beyond, 0.0) / abs(amplitude)


def carried_figure(figure: str, waveforms: Any, label: str) -> float | None:
    """The whole-window ``figure`` of ``label`` from what the run carries, or None.

    Parameters
    ----------
    figure : a figure name; only mean, rms, i2t, energy, peak, time_of_peak, minimum
        and overshoot can be carried.
    waveforms : a run's ``Waveforms``.  label : the recorded quantity.

    Returns
    -------
    float in the figure's SI unit, or None (measure it on the rows).
    """
    value = integral_figure(figure, waveforms, label)
    return value if value is not None else _extremum_figure(figure, waveforms, label)
