"""A measured waveform against the model's: time alignment, residual and error figures.

Pure functions of sampled arrays (no simulation here; jobs/compare.py runs
the model).  Time alignment adds a shift to the capture's clock so that both
waveforms cross the same level at the same instant (the first crossing, in the
direction of the model's step), or uses a shift given by the user.  The
figures are computed on the overlap of the two windows, the model interpolated
linearly onto the measured samples:

* rms error √(mean (y_meas − y_model)²) and the largest |y_meas − y_model|;
* peak error max|y_meas| − max|y_model| and time-of-peak error;
* overshoot measured and predicted (IEEE Std 181-2011, as in analysis/figures),
  both against the model's initial and final levels so that they compare the
  same step.  A noisy capture's peak and overshoot include the noise at the peak.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..analysis.figures import overshoot, peak, time_of_peak
from ..errors import CircuitodeError
from ..quantities import format_si

__all__ = ["CompareError", "Comparison", "crossing_time", "compare_waveforms"]


class CompareError(CircuitodeError):
    """The measured and model waveforms cannot be aligned or do not overlap."""


@dataclass(frozen=True)
class Comparison:
    """Model and measurement on one clock (the model's), and the error figures.

    shift : s added to the capture's times.  alignment : how the shift was found.
    crossing : s on the model clock where the aligned measurement first crosses the
    level (nan when it never does); the ringing is measured after it.
    t, measured, model, residual : (k,) over the overlap (s, unit, unit, unit).
    Figures in SI: rms_error, largest_error, peak_measured, peak_model, peak_error,
    time_of_peak_measured, time_of_peak_model, time_of_peak_error (s),
    overshoot_measured, overshoot_model (%).
    """

    shift: float
    alignment: str
    crossing: float
    t: np.ndarray
    measured: np.ndarray
    model: np.ndarray
    residual: np.ndarray
    rms_error: float
    largest_error: float
    peak_measured: float
    peak_model: float
    peak_error: float
    time_of_peak_measured: float
    time_of_peak_model: float
    time_of_peak_error: float
    overshoot_measured: float
    overshoot_model: float


def crossing_time(t, y, level: float, rising: bool) -> float:
    """s, the first instant ``y`` passes ``level`` (rising or falling), interpolated; nan if never."""
    t, y = np.asarray(t, float), np.asarray(y, float)
    z = (y - level) if rising else (level - y)
    below = z < 0
    started = np.cumsum(below) > 0  # a crossing needs a sample on the near side first
    hit = np.nonzero(started[:-1] & (z[1:] >= 0) & below[:-1])[0]
    if not hit.size:
        return float("nan")
    k = hit[0]
    return float(t[k] + (t[k + 1] - t[k]) * (-z[k]) / (z[k + 1] - z[k]))


def compare_waveforms(t_model, y_model, t_meas, y_meas, *, shift: float | None = None,
                      level: float | None = None, unit: str = "") -> Comparison:
    """Align a capture with the model and measure their differences.

    Parameters
    ----------
    t_model, y_model : the model's waveform (s, unit); times non-decreasing.
    t_meas, y_meas : the capture's channel (s on the capture's clock, unit).
    shift : s added to the capture's clock; None finds it from a level crossing.
    level : the crossing level (unit); default halfway between the model's first
        and last values.

    Raises
    ------
    CompareError : no crossing of the level in one of the waveforms, or no overlap.
    """
    tm, ym = np.asarray(t_model, float), np.asarray(y_model, float)
    tc, yc = np.asarray(t_meas, float), np.asarray(y_meas, float)
    lvl = 0.5 * (ym[0] + ym[-1]) if level is None else float(level)
    rising = ym[-1] >= ym[0]
    if shift is None:
        t_model_cross = crossing_time(tm, ym, lvl, rising)
        t_meas_cross = crossing_time(tc, yc, lvl, rising)
        word = "rising" if rising else "falling"
        for name, value in (("model", t_model_cross), ("measurement", t_meas_cross)):
            if np.isnan(value):
                raise CompareError(f"the {name} never crosses {format_si(lvl, unit, 5)} ({word}); give the crossing "
                                   "level with --trigger-level or the time shift with --shift")
        shift = t_model_cross - t_meas_cross
        alignment = (f"first {word} crossing of {format_si(lvl, unit, 5)}: measured at "
                     f"{format_si(t_meas_cross, 's', 5)}, model at {format_si(t_model_cross, 's', 5)}")
    else:
        alignment = "shift given"
    ta = tc + shift
    keep = (ta >= tm[0]) & (ta <= tm[-1])
    if keep.sum() < 3:
        raise CompareError(f"after a shift of {shift:.6g} s the capture ({ta[0]:.6g} s to {ta[-1]:.6g} s) and the "
                           f"model ({tm[0]:.6g} s to {tm[-1]:.6g} s) overlap in fewer than 3 samples")
    t, meas = ta[keep], yc[keep]
    model = np.interp(t, tm, ym)
    residual = meas - model
    init, fin = float(ym[0]), float(ym[-1])
    pk_meas, pk_model = float(peak(t, meas)), float(peak(t, model))
    tp_meas, tp_model = float(time_of_peak(t, meas)), float(time_of_peak(t, model))
    return Comparison(
        shift=float(shift), alignment=alignment, crossing=crossing_time(t, meas, lvl, rising), t=t, measured=meas, model=model, residual=residual,
        rms_error=float(np.sqrt(np.mean(residual**2))), largest_error=float(np.max(np.abs(residual))),
        peak_measured=pk_meas, peak_model=pk_model, peak_error=pk_meas - pk_model,
        time_of_peak_measured=tp_meas, time_of_peak_model=tp_model, time_of_peak_error=tp_meas - tp_model,
        overshoot_measured=float(overshoot(t, meas, initial=init, final=fin)),
        overshoot_model=float(overshoot(t, model, initial=init, final=fin)),
    )
