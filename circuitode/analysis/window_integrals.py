"""Integral figures (mean, rms, I²t, energy) from the integrals the run itself carried.

A transient run keeps, for every recorded quantity, ∫ y dt and ∫ y² dt over its
window as computed by the integrator (``Waveforms.integrals``): exact to rounding
with the exact method, over the method's own dense output with the adaptive
and implicit ones.  These figures then do not depend on the output step.  Where the
run has no such integrals (rk4, a hand-made waveform object, a power signal's
rms), the figures fall back to the trapezoid over the rows
(:mod:`circuitode.analysis.figures.integrals`).
"""
from __future__ import annotations

from typing import Any

import numpy as np

__all__ = ["INTEGRAL_FIGURES", "figure_from_integrals", "integral_figure"]

#: Figures that are integrals over the whole window.
INTEGRAL_FIGURES = ("mean", "rms", "i2t", "energy")


def figure_from_integrals(figure: str, first, square, length, unit: str):
    """``figure`` from ∫ y dt and ∫ y² dt over a window of ``length`` s, or None.

    first, square : scalars or arrays (one per sample), in unit·s and unit²·s; a NaN
    ``square`` (a power signal, whose ∫ p² dt is not carried) gives None for rms and i2t.
    Returns a float or an array in the figure's SI unit; None when the figure is not an
    integral or cannot be formed from these (energy of a signal that is not a power).
    """
    if figure not in INTEGRAL_FIGURES or (figure == "energy" and unit != "W"):
        return None
    first = np.asarray(first, dtype=float)
    square = np.asarray(square, dtype=float)
    length = np.asarray(length, dtype=float)
    if np.any(length <= 0):
        return None
    if figure == "energy":
        value = first
    elif figure == "mean":
        value = first / length
    elif np.all(np.isnan(square)):
        return None
    elif figure == "i2t":
        value = square
    else:
        value = np.sqrt(np.maximum(square, 0.0) / length)
    return float(value) if value.ndim == 0 else value


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
    if label not in integrals:
        return None
    first, square = integrals[label]
    length = float(waveforms.t[-1] - waveforms.t[0])
    return figure_from_integrals(figure, first, square, length, waveforms.units.get(label, ""))
