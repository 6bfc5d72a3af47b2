"""Integral figures (mean, rms, I²t, energy) from the integrals the run itself carried.

A transient run keeps, for every recorded quantity, ∫ y dt and ∫ y² dt over its
window as computed by the integrator (``Waveforms.integrals``): exact to rounding
with the exact method, under the solver's error control with the adaptive and
implicit ones.  These figures then do not depend on the output step.  Where the
run has no such integrals (rk4, a hand-made waveform object, a power signal's
rms), the figures fall back to the trapezoid over the rows
(:mod:`circuitode.analysis.figures.integrals`).
"""
from __future__ import annotations

import math
from typing import Any

__all__ = ["INTEGRAL_FIGURES", "integral_figure"]

#: Figures that are integrals over the whole window.
INTEGRAL_FIGURES = ("mean", "rms", "i2t", "energy")


def integral_figure(figure: str, waveforms: Any, label: str) -> float | None:
    """The whole-window ``figure`` of ``label`` from the run's own integrals, or None.

    Parameters
    ----------
    figure : "mean", "rms", "i2t" or "energy" (any other name gives None).
    waveforms : a run's ``Waveforms`` (``t`` (nt,) s, ``units``, ``integrals``).
    label : the recorded quantity.

    Returns
    -------
    float in the figure's SI unit, or None when the run carries no integral for it
    (then measure it on the rows).
    """
    integrals = getattr(waveforms, "integrals", None) or {}
    if figure not in INTEGRAL_FIGURES or label not in integrals:
        return None
    unit = waveforms.units.get(label, "")
    if figure == "energy" and unit != "W":
        return None  # measure() explains why energy needs a power signal
    first, square = integrals[label]
    length = float(waveforms.t[-1] - waveforms.t[0])
    if figure == "energy":
        return float(first)
    if figure == "mean":
        return float(first) / length if length > 0 else None
    if math.isnan(square):
        return None
    if figure == "i2t":
        return float(square)
    return math.sqrt(max(float(square), 0.0) / length) if length > 0 else None
