"""Waveform figures: pure, vectorised functions of sampled time and signal, one module per kind.

Every figure takes ``t`` in seconds, non-decreasing along its last axis (an
event instant may appear twice: the value just before and just after it), and
``y`` of shape ``(..., nt)`` batched along any leading axes.  ``t`` is either one
clock ``(nt,)`` shared by every signal, or one clock per signal, broadcastable to
``y`` (a tolerance batch whose switching instants differ from sample to sample).
Each figure returns a numpy value of shape ``y.shape[:-1]`` (0-d for 1-D input)
in SI units; :func:`figure_unit` says which.  Instants given as options
(``start``, ``end``) may likewise be scalars or one per signal.  No figure loops
in Python over samples.

Terms follow IEEE Std 181-2011 (transitions, pulses and related waveforms)
where it defines them: the *initial* and *final* state levels of a step, its
*amplitude* (final − initial), *overshoot* and *undershoot* as aberrations
expressed in percent of the amplitude, and the *transition duration* between
the 10 % and 90 % reference levels (here called rise time, whichever way the
step goes).  Damping ratio and damped frequency are measured on a ringing
waveform from its successive extrema (logarithmic decrement; Ogata, Modern
Control Engineering, ch. 5; Nise, Control Systems Engineering, ch. 4).

Integrals (rms, mean, i2t, energy) use the trapezoidal rule on the samples;
a repeated instant is an interval of zero length and contributes nothing.
A signal containing NaN (a failed sample of a batch) gets NaN for every figure.
"""
from __future__ import annotations

from ._common import MeasurementError
from .integrals import energy, i2t, max_slope, mean, rms
from .levels import final, minimum, peak, settled, time_of_peak
from .ringing import RINGING_MISFIT, RINGING_NOISE, damped_frequency, damping_ratio
from .step import overshoot, rise_time, settling_time, undershoot

__all__ = [
    "MeasurementError",
    "RINGING_NOISE",
    "RINGING_MISFIT",
    "peak",
    "time_of_peak",
    "minimum",
    "final",
    "settled",
    "overshoot",
    "undershoot",
    "rise_time",
    "settling_time",
    "rms",
    "mean",
    "i2t",
    "energy",
    "max_slope",
    "damping_ratio",
    "damped_frequency",
]
